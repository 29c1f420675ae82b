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

func TestLocalMinimaPlanted(t *testing.T) {
	// Two pressure dips on a smooth bowl on a 2-degree global grid: one
	// centred on column 0 beside the date line (its western half lies in
	// the last columns), one at 29N 61W; the bowl rises with distance from
	// its bottom at the grid point 59S 101E. By construction those three
	// points are the only minima with radius 3.
	g := mustRegular(t, -89, 2, 90, -179, 2, 180)
	c1 := g.Index(45, 0)   // 1N, 179W
	c2 := g.Index(59, 59)  // 29N, 61W
	c3 := g.Index(15, 140) // 59S, 101E
	near := func(lat, lon float64, k int) float64 {
		i, j := g.RowCol(k)
		return Distance(lat, lon, g.Lat[i], g.Lon[j])
	}
	dip := func(lat, lon float64, k int) float64 {
		d := near(lat, lon, k) / 500e3
		return -3000 * math.Exp(-d*d)
	}
	p := field(g, func(lat, lon float64) float64 {
		return 100000 + 2000*near(lat, lon, c3)/(math.Pi*EarthRadius) + dip(lat, lon, c1) + dip(lat, lon, c2)
	})
	got, err := g.LocalMinima(p, 3)
	if err != nil {
		t.Fatal(err)
	}
	if want := []int{c3, c1, c2}; !slices.Equal(got, want) {
		t.Errorf("minima %v, want %v", got, want)
	}
	// Neighbours of the date-line dip on the other side of the seam are
	// not minima.
	for _, k := range []int{g.Index(45, 179), g.Index(44, 179), g.Index(45, 1)} {
		if slices.Contains(got, k) {
			t.Errorf("point %d beside the date-line minimum reported", k)
		}
	}
	// On the same field cut to a regional grid (no wrap), the date-line
	// dip's column 0 is still a minimum; without the wrap its half across
	// the seam is a second, edge minimum in the last column.
	reg := *g
	reg.periodic = false
	got2, _ := reg.LocalMinima(p, 3)
	if !slices.Contains(got2, c1) || !slices.Contains(got2, g.Index(45, 179)) {
		t.Errorf("regional copy: minima %v, want %d and %d among them", got2, c1, g.Index(45, 179))
	}
}

func TestLocalExtremaTiesAndNaN(t *testing.T) {
	g := mustRegular(t, 0, 1, 5, 0, 1, 6) // regional 5x6
	f := make([]float64, g.Len())
	for k := range f {
		i, j := g.RowCol(k)
		f[k] = 10 + float64((i-2)*(i-2)) + math.Abs(float64(j)-2.5) // a bowl around row 2, columns 2-3
	}
	f[g.Index(2, 2)], f[g.Index(2, 3)] = 1, 1 // a flat two-point bottom
	got, _ := g.LocalMinima(f, 1)
	if !slices.Equal(got, []int{g.Index(2, 2)}) {
		t.Errorf("flat bottom: minima %v, want only %d", got, g.Index(2, 2))
	}
	// A NaN beside the minimum does not hide it, and is never a minimum.
	f[g.Index(2, 3)] = math.NaN()
	f[g.Index(1, 2)] = math.NaN()
	got, _ = g.LocalMinima(f, 1)
	if !slices.Contains(got, g.Index(2, 2)) || slices.Contains(got, g.Index(2, 3)) || slices.Contains(got, g.Index(1, 2)) {
		t.Errorf("with NaN: minima %v", got)
	}
	// Maxima mirror minima.
	neg := make([]float64, len(f))
	for k := range f {
		neg[k] = -f[k]
	}
	gotMax, _ := g.LocalMaxima(neg, 1)
	if !slices.Equal(got, gotMax) {
		t.Errorf("maxima of -f %v, minima of f %v", gotMax, got)
	}
	if _, err := g.LocalMinima(f, 0); err == nil {
		t.Error("radius 0 accepted")
	}
	if _, err := g.LocalMinima(f[1:], 1); err == nil {
		t.Error("short field accepted")
	}
}

// TestLocalMinimaAgainstScipy compares LocalMinima on seeded random fields
// (no ties, no NaN) with scipy.ndimage.minimum_filter: a point is a
// minimum where it equals the filtered value. Latitude edges use mode
// "nearest" (repeating the edge row adds no new value to a window that
// already holds it, so it matches a cut window); longitude uses "wrap" on
// the global grid and "nearest" on the regional one.
func TestLocalMinimaAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 2))
	grids := []*Grid{mustRegular(t, -87.5, 5, 36, 2.5, 5, 72), mustRegular(t, 0, 1, 23, 10, 1, 31)}
	radii := []int{1, 2, 3}
	var in strings.Builder
	var want [][]int
	for _, g := range grids {
		for _, r := range radii {
			f := make([]float64, g.Len())
			for k := range f {
				f[k] = rng.NormFloat64()
			}
			got, err := g.LocalMinima(f, r)
			if err != nil {
				t.Fatal(err)
			}
			want = append(want, got)
			mode := "nearest"
			if g.Periodic() {
				mode = "wrap"
			}
			fmt.Fprintf(&in, "%d %d %d %s\n", g.NLat(), g.NLon(), r, mode)
			for _, x := range f {
				fmt.Fprintf(&in, "%.17g ", x)
			}
			in.WriteString("\n")
		}
	}
	script := `
import sys, numpy as np
from scipy import ndimage
d = sys.stdin.read().split()
pos = 0
while pos < len(d):
    ny, nx, r, mode = int(d[pos]), int(d[pos+1]), int(d[pos+2]), d[pos+3]; pos += 4
    f = np.array(d[pos:pos+ny*nx], dtype=float).reshape(ny, nx); pos += ny*nx
    m = ndimage.minimum_filter(f, size=2*r+1, mode=("nearest", mode))
    print(" ".join(str(int(k)) for k in np.flatnonzero(f == m)))
`
	lines := strings.Split(strings.TrimRight(string(runPython(t, "numpy, scipy.ndimage", script, []byte(in.String()))), "\n"), "\n")
	if len(lines) != len(want) {
		t.Fatalf("python returned %d lines, want %d", len(lines), len(want))
	}
	for n, line := range lines {
		var ref []int
		for _, s := range strings.Fields(line) {
			k, _ := strconv.Atoi(s)
			ref = append(ref, k)
		}
		if !slices.Equal(ref, want[n]) {
			t.Errorf("case %d: minima %v, scipy %v", n, want[n], ref)
		}
		if len(ref) == 0 {
			t.Errorf("case %d: no minima at all; the check is empty", n)
		}
	}
}

// BenchmarkLocalMinima finds 7x7-window minima of a smooth random field on
// a 0.25-degree global grid.
func BenchmarkLocalMinima(b *testing.B) {
	g := mustRegular(b, -89.875, 0.25, 720, 0.125, 0.25, 1440)
	f := field(g, func(lat, lon float64) float64 {
		return 101300 + 500*math.Sin(3*lat*deg2rad)*math.Cos(5*lon*deg2rad) + 300*math.Sin(11*lon*deg2rad+lat*deg2rad)
	})
	for b.Loop() {
		if _, err := g.LocalMinima(f, 3); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(g.Len())*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mpoint/s")
}
