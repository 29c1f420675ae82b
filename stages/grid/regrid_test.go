package grid

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"
)

func TestRegridNearestConventions(t *testing.T) {
	// The same 1-degree points written north-to-south in 0..360 and
	// south-to-north in -180..180: regridding copies values exactly
	// (by construction).
	src := mustRegular(t, 89.5, -1, 180, 0.5, 1, 360)
	dst := mustRegular(t, -89.5, 1, 180, -179.5, 1, 360)
	f := field(src, func(lat, lon float64) float64 { return lat*1000 + NormalizeLon180(lon) })
	got, err := RegridNearest(src, f, dst, math.NaN())
	if err != nil {
		t.Fatal(err)
	}
	want := field(dst, func(lat, lon float64) float64 { return lat*1000 + lon })
	if !slices.Equal(got, want) {
		t.Errorf("regridded field differs from the field on the target grid")
	}
	if err := src.SameAs(dst); err == nil {
		t.Error("SameAs should report the different order")
	}
}

func TestRegridNearestMask(t *testing.T) {
	// A 2-degree byte mask onto a 1-degree grid: every fine cell lies in
	// exactly one coarse cell (by construction: 1-degree centres at odd
	// half degrees fall strictly inside 2-degree cells).
	src := mustRegular(t, -89, 2, 90, 1, 2, 180)
	dst := mustRegular(t, -89.5, 1, 180, 0.5, 1, 360)
	mask := make([]byte, src.Len())
	for k := range mask {
		mask[k] = byte(k % 3)
	}
	got, err := RegridNearest(src, mask, dst, 255)
	if err != nil {
		t.Fatal(err)
	}
	for i := range dst.NLat() {
		for j := range dst.NLon() {
			if w := mask[src.Index(i/2, j/2)]; got[dst.Index(i, j)] != w {
				t.Fatalf("cell %d,%d: %d, want %d", i, j, got[dst.Index(i, j)], w)
			}
		}
	}
	// A regional source: points outside it get the fill value.
	reg := mustRegular(t, 0, 1, 10, 170, 1, 20) // 0..9N, 170E..171W
	vals := make([]float32, reg.Len())
	for k := range vals {
		vals[k] = 1
	}
	out, _ := RegridNearest(reg, vals, dst, -1)
	for k, v := range out {
		i, j := dst.RowCol(k)
		lat, lon := dst.Lat[i], dst.Lon[j]
		in := lat >= -0.5 && lat <= 9.5 && // cell bounds are inclusive (Locate)
			InBox(0, lon, Box{LonMin: 169.5, LonMax: -170.5})
		if (v == 1) != in {
			t.Fatalf("point %g, %g: %g, inside %v", lat, lon, v, in)
		}
	}
	if _, err := RegridNearest(src, mask[1:], dst, 0); err == nil {
		t.Error("short field accepted")
	}
}

// TestRegridNearestAgainstScipy compares RegridNearest on a regional grid
// with scipy.interpolate.RegularGridInterpolator(method="nearest") at
// target points offset so that no target lies on a source cell boundary.
func TestRegridNearestAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 6))
	src := mustRegular(t, 60, -0.7, 50, 200, 0.9, 70)
	dst := mustRegular(t, 62.13, -0.41, 100, 195.17, 0.53, 140)
	f := make([]float64, src.Len())
	for k := range f {
		f[k] = rng.Float64()
	}
	got, err := RegridNearest(src, f, dst, math.NaN())
	if err != nil {
		t.Fatal(err)
	}
	var in strings.Builder
	for _, arr := range [][]float64{src.Lat, src.Lon, f, dst.Lat, dst.Lon} {
		fmt.Fprintf(&in, "%d ", len(arr))
		for _, x := range arr {
			fmt.Fprintf(&in, "%.17g ", x)
		}
		in.WriteString("\n")
	}
	script := `
import sys, numpy as np
from scipy.interpolate import RegularGridInterpolator
d = sys.stdin.read().split()
pos = 0
arrs = []
for _ in range(5):
    n = int(d[pos]); pos += 1
    arrs.append(np.array(d[pos:pos+n], dtype=float)); pos += n
lat, lon, f, dlat, dlon = arrs
f = f.reshape(len(lat), len(lon))
o = np.argsort(lat)
interp = RegularGridInterpolator((lat[o], lon), f[o], method="nearest", bounds_error=False, fill_value=np.nan)
half = 0.5 * abs(lat[1] - lat[0]), 0.5 * (lon[1] - lon[0])
P, L = np.meshgrid(dlat, dlon, indexing="ij")
v = interp(np.column_stack([P.ravel(), L.ravel()]))
# RegularGridInterpolator extrapolates nothing; cells extend half a step
# beyond the outer centres, so points there take the edge value.
Pc = np.clip(P.ravel(), lat.min(), lat.max()); Lc = np.clip(L.ravel(), lon.min(), lon.max())
inside = (np.abs(P.ravel() - Pc) <= half[0]) & (np.abs(L.ravel() - Lc) <= half[1])
v = np.where(inside, interp(np.column_stack([Pc, Lc])), np.nan)
print(" ".join(repr(float(x)) for x in v))
`
	out := strings.Fields(string(runPython(t, "numpy, scipy.interpolate", script, []byte(in.String()))))
	if len(out) != len(got) {
		t.Fatalf("python returned %d values, want %d", len(out), len(got))
	}
	nan := 0
	for k, s := range out {
		w, _ := strconv.ParseFloat(s, 64)
		if math.IsNaN(w) != math.IsNaN(got[k]) || (!math.IsNaN(w) && w != got[k]) {
			i, j := dst.RowCol(k)
			t.Fatalf("point %g, %g: %g, scipy %g", dst.Lat[i], dst.Lon[j], got[k], w)
		}
		if math.IsNaN(w) {
			nan++
		}
	}
	if nan == 0 || nan == len(out) {
		t.Errorf("%d of %d points outside: the check does not cover both cases", nan, len(out))
	}
}
