package grid

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

func mustPolygon(t *testing.T, rings ...[][2]float64) *Polygon {
	t.Helper()
	p, err := NewPolygon(rings)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

type pipCase struct {
	lat, lon float64
	want     bool
}

func checkContains(t *testing.T, name string, p *Polygon, cases []pipCase) {
	t.Helper()
	for _, c := range cases {
		if got := p.Contains(c.lat, c.lon); got != c.want {
			t.Errorf("%s: Contains(%g, %g) = %v, want %v", name, c.lat, c.lon, got, c.want)
		}
	}
}

func TestPolygonAcrossAntimeridian(t *testing.T) {
	// Expected answers below are by construction (the rings are boxes).
	crossing := [][2]float64{{170, -10}, {-170, -10}, {-170, 10}, {170, 10}, {170, -10}}
	unwrapped := [][2]float64{{170, -10}, {190, -10}, {190, 10}, {170, 10}} // 0..360, not closed
	clockwise := [][2]float64{{170, -10}, {170, 10}, {-170, 10}, {-170, -10}, {170, -10}}
	cases := []pipCase{
		{0, 180, true}, {0, -180, true}, {0, 175, true}, {0, -175, true}, {0, 185, true}, {0, -185, true}, {0, 195, false}, // -185 = 175, 195 = -165
		{5, 539, true}, // 539 = 179
		{0, 0, false}, {0, 165, false}, {0, -165, false}, {11, 180, false}, {-11, 180, false},
	}
	checkContains(t, "crossing", mustPolygon(t, crossing), cases)
	checkContains(t, "0..360", mustPolygon(t, unwrapped), cases)
	checkContains(t, "clockwise", mustPolygon(t, clockwise), cases)

	// A hole that itself straddles the antimeridian.
	outer := [][2]float64{{160, -20}, {-160, -20}, {-160, 20}, {160, 20}, {160, -20}}
	hole := [][2]float64{{175, -5}, {-175, -5}, {-175, 5}, {175, 5}, {175, -5}}
	checkContains(t, "hole", mustPolygon(t, outer, hole), []pipCase{
		{0, 180, false}, {0, 178, false}, {0, -178, false}, {0, 170, true}, {0, -170, true},
		{10, 180, true}, {-10, -179, true}, {25, 180, false},
	})
}

func TestPolygonAroundPoles(t *testing.T) {
	arctic := [][2]float64{{-180, 60}, {-90, 60}, {0, 60}, {90, 60}, {180, 60}}
	arcticWest := [][2]float64{{180, 60}, {90, 60}, {0, 60}, {-90, 60}, {-180, 60}}
	// A cap whose boundary wobbles across the antimeridian between 50 and 70.
	wobbly := [][2]float64{{170, 50}, {-170, 70}, {-10, 60}, {90, 55}}
	antarctic := [][2]float64{{0, -60}, {120, -60}, {-120, -60}}
	for name, ring := range map[string][][2]float64{"eastward": arctic, "westward": arcticWest} {
		checkContains(t, name, mustPolygon(t, ring), []pipCase{
			{70, 0, true}, {89.9, 123, true}, {61, -180, true}, {61, 180, true}, {59, 45, false}, {0, 0, false}, {-70, 0, false},
		})
	}
	checkContains(t, "wobbly", mustPolygon(t, wobbly), []pipCase{
		{80, 0, true}, {45, 0, false}, {75, 180, true}, {55, 180, false}, // at 180 the boundary is at 60N (by construction: midway from 50 to 70)
	})
	checkContains(t, "antarctic", mustPolygon(t, antarctic), []pipCase{
		{-70, 0, true}, {-89, 45, true}, {-50, 0, false}, {70, 0, false},
	})
	// An Arctic region with a hole around the pole: the band 60N-80N.
	band := mustPolygon(t, arctic, [][2]float64{{0, 80}, {120, 80}, {-120, 80}})
	checkContains(t, "band", band, []pipCase{{70, 10, true}, {85, 10, false}, {50, 10, false}})
}

func TestPolygonErrors(t *testing.T) {
	for name, rings := range map[string][][][2]float64{
		"no rings":        nil,
		"two positions":   {{{0, 0}, {1, 1}, {0, 0}}},
		"180 apart":       {{{0, 0}, {180, 0}, {180, 10}}},
		"equatorial belt": {{{0, 10}, {120, -10}, {-120, 0}}},
		"bad latitude":    {{{0, 0}, {1, 95}, {2, 0}}},
		"bad hole":        {{{0, 0}, {10, 0}, {10, 10}}, {{1, 1}}},
	} {
		if _, err := NewPolygon(rings); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
}

// TestPolygonAgainstMatplotlib compares Contains on seeded random
// star-shaped polygons around the antimeridian with matplotlib's
// independent Path.contains_points, given the same rings written in 0..360
// (where they do not cross any seam).
func TestPolygonAgainstMatplotlib(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 14))
	type trial struct {
		ring [][2]float64 // -180..180
		pts  [][2]float64 // lat, lon in -180..180
	}
	var trials []trial
	var in strings.Builder
	for range 20 {
		nv := 5 + rng.IntN(20)
		clat := rng.Float64()*100 - 50
		var tr trial
		for v := range nv {
			a := 2 * math.Pi * float64(v) / float64(nv)
			r := 3 + rng.Float64()*15
			tr.ring = append(tr.ring, [2]float64{NormalizeLon180(180 + r*math.Cos(a)), clat + r*math.Sin(a)})
		}
		for range 200 {
			tr.pts = append(tr.pts, [2]float64{clat + rng.Float64()*40 - 20, NormalizeLon180(180 + rng.Float64()*40 - 20)})
		}
		trials = append(trials, tr)
		fmt.Fprintf(&in, "%d %d\n", len(tr.ring), len(tr.pts))
		for _, v := range tr.ring {
			fmt.Fprintf(&in, "%.17g %.17g\n", NormalizeLon360(v[0]), v[1])
		}
		for _, p := range tr.pts {
			fmt.Fprintf(&in, "%.17g %.17g\n", NormalizeLon360(p[1]), p[0])
		}
	}
	script := `
import sys, numpy as np
from matplotlib.path import Path
d = sys.stdin.read().split()
pos = 0
while pos < len(d):
    nv, npt = int(d[pos]), int(d[pos+1]); pos += 2
    ring = np.array(d[pos:pos+2*nv], dtype=float).reshape(nv, 2); pos += 2*nv
    pts = np.array(d[pos:pos+2*npt], dtype=float).reshape(npt, 2); pos += 2*npt
    inside = Path(np.vstack([ring, ring[:1]]), closed=True).contains_points(pts)
    print("".join("1" if x else "0" for x in inside))
`
	lines := strings.Fields(string(runPython(t, "numpy, matplotlib.path", script, []byte(in.String()))))
	if len(lines) != len(trials) {
		t.Fatalf("python returned %d lines, want %d", len(lines), len(trials))
	}
	for n, tr := range trials {
		p := mustPolygon(t, tr.ring)
		g := tr
		for k, pt := range g.pts {
			want := lines[n][k] == '1'
			if got := p.Contains(pt[0], pt[1]); got != want {
				t.Errorf("trial %d point %v: Contains = %v, matplotlib %v", n, pt, got, want)
			}
		}
	}
}

func TestPolygonMask(t *testing.T) {
	// 1-degree global grid in 0..360; a region crossing the antimeridian
	// written in -180..180, and a box holding the same cells.
	g := mustRegular(t, -89.5, 1, 180, 0.5, 1, 360)
	p := mustPolygon(t, [][2]float64{{170, -10}, {-170, -10}, {-170, 10}, {170, 10}})
	q := mustPolygon(t, [][2]float64{{10, 40}, {20, 40}, {20, 50}, {10, 50}})
	got := g.PolygonMask(p, q)
	box1 := g.BoxMask(Box{LatMin: -10, LatMax: 10, LonMin: 170, LonMax: -170})
	box2 := g.BoxMask(Box{LatMin: 40, LatMax: 50, LonMin: 10, LonMax: 20})
	n := 0
	for k := range got {
		if got[k] != (box1[k] || box2[k]) {
			i, j := g.RowCol(k)
			t.Fatalf("cell %g, %g: polygon mask %v, box mask %v", g.Lat[i], g.Lon[j], got[k], box1[k] || box2[k])
		}
		if got[k] {
			n++
		}
		i, j := g.RowCol(k)
		if got[k] != (p.Contains(g.Lat[i], g.Lon[j]) || q.Contains(g.Lat[i], g.Lon[j])) {
			t.Fatalf("cell %d: PolygonMask and Contains disagree", k)
		}
	}
	// 20 x 20 cells plus 10 x 10 cells (by construction).
	if n != 500 {
		t.Errorf("%d cells in the region, want 500", n)
	}
}

func TestRegionMask(t *testing.T) {
	g := mustRegular(t, -89.5, 1, 180, 0.5, 1, 360)
	box := &Box{LatMin: 40, LatMax: 50, LonMin: 10, LonMax: 20}
	polys := [][][][2]float64{{{{170, -10}, {-170, -10}, {-170, 10}, {170, 10}, {170, -10}}}}
	m, err := g.RegionMask(box, polys)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, v := range m {
		if v {
			n++
		}
	}
	if n != 500 { // 10 x 10 box cells + 20 x 20 polygon cells (by construction)
		t.Errorf("%d cells, want 500", n)
	}
	if _, err := g.RegionMask(nil, nil); err == nil {
		t.Error("empty region accepted")
	}
	if _, err := g.RegionMask(nil, [][][][2]float64{{{{0, 0}, {1, 1}}}}); err == nil || !strings.Contains(err.Error(), "polygon 0") {
		t.Errorf("bad polygon: %v", err)
	}
}
