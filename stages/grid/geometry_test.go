package grid

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// lengthTol is the tolerance in metres between two exact farthest-pair
// searches that may pick different pairs of equal length.
const lengthTol = 1e-6

// rectangle returns the pixels of rows i0..i1 and columns j0..j1 (columns
// wrapping on a periodic grid).
func rectangle(g *Grid, i0, i1, j0, j1 int) []int32 {
	var p []int32
	for i := i0; i <= i1; i++ {
		for j := j0; ; j = (j + 1) % g.NLon() {
			p = append(p, int32(g.Index(i, j)))
			if j == j1 {
				break
			}
		}
	}
	return p
}

// bruteLength is the largest Distance over all pixel pairs: the
// definition of Shape.Length, evaluated the slow way.
func bruteLength(g *Grid, pix []int32) float64 {
	var best float64
	for a := range pix {
		ia, ja := g.RowCol(int(pix[a]))
		for b := a + 1; b < len(pix); b++ {
			ib, jb := g.RowCol(int(pix[b]))
			best = math.Max(best, Distance(g.Lat[ia], g.Lon[ja], g.Lat[ib], g.Lon[jb]))
		}
	}
	return best
}

func TestShapeRectangles(t *testing.T) {
	// 1-degree global grid, south-to-north, -180..180: row i is latitude
	// -89.5 + i, column j is longitude -179.5 + j.
	g := mustRegular(t, -89.5, 1, 180, -179.5, 1, 360)
	cases := []struct {
		name           string
		i0, i1, j0, j1 int
	}{
		{"equator 10x40", 85, 94, 160, 199},
		{"45N 10x40", 130, 139, 160, 199},
		{"70N 10x40", 155, 164, 160, 199},
		{"45S 20x8 tall", 35, 54, 10, 17},
		{"across the date line 10x40", 85, 94, 340, 19},
		{"near the pole 5x170", 170, 174, 0, 169}, // 170 degrees wide: the run-end rule still applies
		{"wider than 180 degrees 5x200", 120, 124, 0, 199},
	}
	for _, c := range cases {
		pix := rectangle(g, c.i0, c.i1, c.j0, c.j1)
		s, err := g.Shape(pix)
		if err != nil {
			t.Fatal(err)
		}
		// Length: derived from the great-circle formula by brute force.
		if want := bruteLength(g, pix); math.Abs(s.Length-want) > lengthTol {
			t.Errorf("%s: Length %.6f, want %.6f", c.name, s.Length, want)
		}
		// Area: CF-1.13 section 7.2 for the rectangle's bounds (derived).
		nc := c.j1 - c.j0 + 1
		if nc <= 0 {
			nc += 360
		}
		wantArea := CellArea(g.Lat[c.i0]-0.5, g.Lat[c.i1]+0.5, 0, float64(nc))
		if math.Abs(s.Area-wantArea) > 1e-9*wantArea {
			t.Errorf("%s: Area %g, want %g", c.name, s.Area, wantArea)
		}
		if math.Abs(s.Width-s.Area/s.Length) > 1e-9*s.Width || math.Abs(s.Ratio-s.Length*s.Length/s.Area) > 1e-9*s.Ratio {
			t.Errorf("%s: Width %g Ratio %g inconsistent with Area %g Length %g", c.name, s.Width, s.Ratio, s.Area, s.Length)
		}
		i1, j1 := g.RowCol(s.Ends[0])
		i2, j2 := g.RowCol(s.Ends[1])
		if d := Distance(g.Lat[i1], g.Lon[j1], g.Lat[i2], g.Lon[j2]); math.Abs(d-s.Length) > lengthTol {
			t.Errorf("%s: Ends %v are %g apart, Length %g", c.name, s.Ends, d, s.Length)
		}
	}
	// A one-row object along the equator-nearest row: length is the arc of
	// the parallel's great circle between the end centres (derived), axis
	// east-west.
	s, _ := g.Shape(rectangle(g, 90, 90, 100, 129))
	if want := Distance(0.5, -79.5, 0.5, -50.5); math.Abs(s.Length-want) > lengthTol {
		t.Errorf("row: Length %g, want %g", s.Length, want)
	}
	if math.Abs(s.Axis-90) > 0.01 {
		t.Errorf("row: Axis %g, want about 90", s.Axis)
	}
	s, _ = g.Shape(rectangle(g, 60, 99, 7, 7))
	if want := Distance(-29.5, -172.5, 9.5, -172.5); math.Abs(s.Length-want) > lengthTol || s.Axis > 1e-9 {
		t.Errorf("column: Length %g (want %g), Axis %g (want 0)", s.Length, want, s.Axis)
	}
	// The same rectangle centred on the date line and on the prime
	// meridian has the same shape (derived: rotation about the polar axis).
	a, _ := g.Shape(rectangle(g, 120, 135, 340, 19))
	b, _ := g.Shape(rectangle(g, 120, 135, 160, 199))
	if math.Abs(a.Length-b.Length) > lengthTol || math.Abs(a.Area-b.Area) > 1e-6*a.Area {
		t.Errorf("date-line rectangle %v vs prime-meridian rectangle %v", a, b)
	}
	// A single pixel has no length.
	s, _ = g.Shape([]int32{5})
	if s.Length != 0 || s.Width != 0 || s.Ratio != 0 || s.Area <= 0 {
		t.Errorf("single pixel: %+v", s)
	}
	if _, err := g.Shape(nil); err == nil {
		t.Error("empty object accepted")
	}
	if _, err := g.Shape([]int32{3, 3}); err == nil {
		t.Error("duplicate pixel accepted")
	}
}

// TestShapeAgainstScipy compares Shape.Length on the components of seeded
// random masks with scipy.spatial.distance.pdist over all pixel pairs of
// each component (chord lengths of unit vectors, converted to arcs:
// 2 R asin(c/2)).
func TestShapeAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(99, 1))
	grids := []*Grid{
		mustRegular(t, 60, -1.5, 60, 150, 1.5, 70),     // regional, crossing the date line in 0..360
		mustRegular(t, -85, 10, 18, -175, 10, 36),      // coarse global: objects wrap and span > 180 degrees
		mustRegular(t, 89.5, -1, 180, 0.5, 1, 360),     // 1 degree global, north-to-south
		mustRegular(t, -30, 0.25, 120, 100, 0.25, 200), // fine regional
	}
	type obj struct {
		g   *Grid
		pix []int32
	}
	var objs []obj
	var in strings.Builder
	for gi, g := range grids {
		d := []float64{0.45, 0.55, 0.4, 0.42}[gi] // near the 8-neighbour percolation threshold: big ragged objects
		lab, err := g.Components(randomMask(rng, g.Len(), d))
		if err != nil {
			t.Fatal(err)
		}
		// The largest few components of each grid.
		count := 0
		for _, c := range lab.Components {
			if c.Pixels < 20 || count == 4 {
				continue
			}
			count++
			pix := lab.Pixels(c.Label)
			objs = append(objs, obj{g, pix})
			fmt.Fprintf(&in, "%d\n", len(pix))
			for _, p := range pix {
				i, j := g.RowCol(int(p))
				fmt.Fprintf(&in, "%.17g %.17g\n", g.Lat[i], g.Lon[j])
			}
		}
	}
	script := `
import sys, numpy as np
from scipy.spatial.distance import pdist
d = sys.stdin.read().split()
pos = 0
R = 6371008.7714
while pos < len(d):
    n = int(d[pos]); pos += 1
    ll = np.radians(np.array(d[pos:pos+2*n], dtype=float).reshape(n, 2)); pos += 2*n
    xyz = np.column_stack([np.cos(ll[:,0])*np.cos(ll[:,1]), np.cos(ll[:,0])*np.sin(ll[:,1]), np.sin(ll[:,0])])
    c = pdist(xyz).max() if n > 1 else 0.0
    print(repr(float(2 * R * np.arcsin(min(c / 2, 1.0)))))
`
	out := strings.Fields(string(runPython(t, "numpy, scipy.spatial", script, []byte(in.String()))))
	if len(out) != len(objs) || len(objs) < 10 {
		t.Fatalf("python returned %d lengths for %d objects", len(out), len(objs))
	}
	for k, o := range objs {
		want, _ := strconv.ParseFloat(out[k], 64)
		s, err := o.g.Shape(o.pix)
		if err != nil {
			t.Fatal(err)
		}
		// asin of a chord loses precision near antipodes (chord near 2);
		// 1 m is far below a pixel.
		if math.Abs(s.Length-want) > 1 {
			t.Errorf("%s, object of %d pixels: Length %.3f, scipy pdist %.3f", o.g, len(o.pix), s.Length, want)
		}
	}
}

func TestMeanFlow(t *testing.T) {
	g := mustRegular(t, -1, 2, 2, 0, 2, 4) // rows at -1 and 1: equal areas
	u := []float64{10, 0, 10, 0, 10, 0, 10, math.NaN()}
	v := []float64{0, 10, 0, 10, 0, 10, 0, 10}
	pix := []int32{0, 1, 2, 3, 4, 5, 6, 7}
	f, err := g.MeanFlow(u, v, pix, 60)
	if err != nil {
		t.Fatal(err)
	}
	// 4 eastward and 3 northward vectors of 10 m/s with equal weights
	// (derived): mean (40/7, 30/7), coherence |mean| / 10.
	if f.Valid != 7 || math.Abs(f.U-40.0/7) > 1e-12 || math.Abs(f.V-30.0/7) > 1e-12 {
		t.Errorf("mean flow %+v", f)
	}
	if want := math.Atan2(4, 3) * 180 / math.Pi; math.Abs(f.Direction-want) > 1e-9 {
		t.Errorf("Direction %g, want %g", f.Direction, want)
	}
	if want := math.Hypot(40, 30) / 70; math.Abs(f.Coherence-want) > 1e-12 {
		t.Errorf("Coherence %g, want %g", f.Coherence, want)
	}
	if f.Aligned != 1 {
		t.Errorf("Aligned within 60 deg = %g, want 1", f.Aligned)
	}
	// The mean points 53.13 degrees east of north: eastward vectors are
	// 36.87 degrees off it and northward ones 53.13 (derived).
	for _, c := range []struct{ within, want float64 }{{40, 4.0 / 7}, {30, 0}} {
		f, _ = g.MeanFlow(u, v, pix, c.within)
		if math.Abs(f.Aligned-c.want) > 1e-12 {
			t.Errorf("Aligned within %g deg = %g, want %g", c.within, f.Aligned, c.want)
		}
	}
	f, _ = g.MeanFlow(u, v, []int32{7}, 45)
	if f.Valid != 0 || !math.IsNaN(f.Direction) {
		t.Errorf("all-NaN object: %+v", f)
	}
	if _, err := g.MeanFlow(u[:3], v, pix, 45); err == nil {
		t.Error("short field accepted")
	}
}

func TestDirectionAndAxisDiff(t *testing.T) {
	for _, c := range []struct{ a, b, dir, axis float64 }{
		{10, 350, 20, 20}, {0, 180, 180, 0}, {90, 270, 180, 0}, {30, 100, 70, 70}, {0, 135, 135, 45},
	} {
		if got := DirectionDiff(c.a, c.b); got != c.dir {
			t.Errorf("DirectionDiff(%g, %g) = %g, want %g", c.a, c.b, got, c.dir)
		}
		if got := AxisDiff(c.a, c.b); got != c.axis {
			t.Errorf("AxisDiff(%g, %g) = %g, want %g", c.a, c.b, got, c.axis)
		}
	}
}

// BenchmarkShape measures Shape on a long, ragged object: a band 2000 pixels
// long on a 0.25-degree grid with random edges.
func BenchmarkShape(b *testing.B) {
	g := mustRegular(b, -89.875, 0.25, 720, 0.125, 0.25, 1440)
	rng := rand.New(rand.NewPCG(5, 6))
	var pix []int32
	for k := range 200 { // a diagonal band 200 rows tall, ~12 pixels wide
		i := 300 + k
		j0 := 400 + 2*k + rng.IntN(3)
		for j := j0; j < j0+10+rng.IntN(5); j++ {
			pix = append(pix, int32(g.Index(i, j)))
		}
	}
	for b.Loop() {
		if _, err := g.Shape(pix); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(pix))*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mpixel/s")
}
