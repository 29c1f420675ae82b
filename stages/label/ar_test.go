package label

import (
	"math"
	"strings"
	"testing"

	"github.com/squall-climate/squall/stages/grid"
)

// Relative tolerance between two evaluations of the great-circle formula
// (haversine here, grid's own form there): rounding only.
const tolGeom = 1e-9

// haversine is the great-circle distance in metres on the sphere of the
// GRS80 mean radius R1 = 6371008.7714 m (reference-values.md), written out
// independently of the grid package:
// d = 2R asin(sqrt(sin^2(dphi/2) + cos phi1 cos phi2 sin^2(dlambda/2))).
func haversine(lat1, lon1, lat2, lon2 float64) float64 {
	const r1 = 6371008.7714
	rad := math.Pi / 180
	s1 := math.Sin((lat2 - lat1) * rad / 2)
	s2 := math.Sin((lon2 - lon1) * rad / 2)
	h := s1*s1 + math.Cos(lat1*rad)*math.Cos(lat2*rad)*s2*s2
	return 2 * r1 * math.Asin(math.Sqrt(h))
}

// rect marks the pixels whose centres lie in [lat0, lat1] x [lon0, lon1]
// (lon1 < lon0 crosses the date line).
func rect(g *grid.Grid, lat0, lat1, lon0, lon1 float64) []bool {
	m := make([]bool, g.Len())
	for k := range m {
		i, j := g.RowCol(k)
		lat, lon := g.Lat[i], grid.NormalizeLon180(g.Lon[j])
		inLon := lon >= lon0 && lon <= lon1
		if lon1 < lon0 {
			inLon = lon >= lon0 || lon <= lon1
		}
		m[k] = lat >= lat0 && lat <= lat1 && inLon
	}
	return m
}

// bruteLength is the largest haversine distance between marked pixel
// centres (all pairs).
func bruteLength(g *grid.Grid, m []bool) float64 {
	var pts [][2]float64
	for k, in := range m {
		if in {
			i, j := g.RowCol(k)
			pts = append(pts, [2]float64{g.Lat[i], g.Lon[j]})
		}
	}
	best := 0.0
	for a := range pts {
		for b := a + 1; b < len(pts); b++ {
			best = math.Max(best, haversine(pts[a][0], pts[a][1], pts[b][0], pts[b][1]))
		}
	}
	return best
}

// cfArea is the CF-1.13 section 7.2 cell area summed over marked pixels:
// R^2 dlambda (sin phi2 - sin phi1), with R1.
func cfArea(g *grid.Grid, m []bool) float64 {
	const r1 = 6371008.7714
	rad := math.Pi / 180
	var a float64
	for k, in := range m {
		if in {
			i, _ := g.RowCol(k)
			lat := g.Lat[i]
			s := math.Max(lat-g.DLat()/2, -90)
			n := math.Min(lat+g.DLat()/2, 90)
			a += r1 * r1 * g.DLon() * rad * (math.Sin(n*rad) - math.Sin(s*rad))
		}
	}
	return a
}

func detectOne(t *testing.T, g *grid.Grid, m []bool, c *ARConfig) []ARObject {
	t.Helper()
	val := make([]float64, g.Len())
	thr := make([]float64, g.Len())
	for k := range val {
		thr[k] = 250
		if m[k] {
			val[k] = 500
		}
	}
	out := make([]bool, g.Len())
	objs, err := DetectAR(g, val, thr, c, 0, out)
	if err != nil {
		t.Fatal(err)
	}
	return objs
}

func TestARGeometryRectangles(t *testing.T) {
	g, err := grid.Global(1, 1) // centres at 0.5 + k degrees
	if err != nil {
		t.Fatal(err)
	}
	open := &ARConfig{MaxWidth: math.Inf(1)} // every rule off: only geometry is checked here
	cases := []struct {
		name                   string
		lat0, lat1, lon0, lon1 float64
		// closed-form length (derived from the great-circle formula) when
		// the farthest pair is known analytically; 0: use brute force.
		length float64
	}{
		// One row at latitude phi spanning dlambda between the end centres:
		// d = 2R asin(cos phi sin(dlambda/2)) (derived).
		{"row at 0.5N", 0, 1, 100, 140, rowLength(0.5, 39)},
		{"row at 30.5N", 30, 31, 100, 140, rowLength(30.5, 39)},
		{"row at 60.5S", -61, -60, 100, 140, rowLength(-60.5, 39)},
		// One column: the meridian arc R * dphi (derived).
		{"column 20.5-49.5N", 20, 50, 10, 11, 6371008.7714 * 29 * math.Pi / 180},
		{"rectangle at 40N", 35, 45, -30, 0, 0},
		{"rectangle across the date line", 30, 40, 170, -170, 0},
		{"southern rectangle across the date line", -50, -35, 160, -150, 0},
		{"rectangle across the equator", -5, 5, 60, 110, 0},
	}
	for _, c := range cases {
		m := rect(g, c.lat0, c.lat1, c.lon0, c.lon1)
		objs := detectOne(t, g, m, open)
		if len(objs) != 1 {
			t.Errorf("%s: %d objects, want 1", c.name, len(objs))
			continue
		}
		o := objs[0]
		want := c.length
		if want == 0 {
			want = bruteLength(g, m)
		}
		if math.Abs(o.Length-want) > tolGeom*want {
			t.Errorf("%s: length %.3f km, want %.3f km", c.name, o.Length/1e3, want/1e3)
		}
		area := cfArea(g, m)
		if math.Abs(o.Area-area) > tolGeom*area {
			t.Errorf("%s: area %.6g m2, CF formula %.6g", c.name, o.Area, area)
		}
		if w := area / want; math.Abs(o.Width-w) > 1e-6*w {
			t.Errorf("%s: width %.3f km, want area/length %.3f km", c.name, o.Width/1e3, w/1e3)
		}
		if r := want * want / area; math.Abs(o.Aspect-r) > 1e-6*r {
			t.Errorf("%s: length/width %.4f, want %.4f", c.name, o.Aspect, r)
		}
		if !o.Kept {
			t.Errorf("%s: dropped with every rule off: %s", c.name, o.Reason)
		}
	}
}

func rowLength(lat, dlon float64) float64 {
	rad := math.Pi / 180
	return 2 * 6371008.7714 * math.Asin(math.Cos(lat*rad)*math.Sin(dlon*rad/2))
}

func TestARDateLineIsOneObject(t *testing.T) {
	g, err := grid.Global(2, 2.5)
	if err != nil {
		t.Fatal(err)
	}
	// 20 degrees wide across 180 at 40N: columns on both sides of the
	// wrap join into one object, whose length equals the same band placed
	// away from the date line (rotation invariance, derived).
	across := detectOne(t, g, rect(g, 35, 45, 170, -170), &ARConfig{MaxWidth: math.Inf(1)})
	away := detectOne(t, g, rect(g, 35, 45, 10, 30), &ARConfig{MaxWidth: math.Inf(1)})
	if len(across) != 1 || len(away) != 1 {
		t.Fatalf("objects: %d across the date line, %d away, want 1 and 1", len(across), len(away))
	}
	if across[0].Pixels != away[0].Pixels || math.Abs(across[0].Length-away[0].Length) > tolGeom*away[0].Length {
		t.Errorf("across: %d px %.1f km; away: %d px %.1f km", across[0].Pixels, across[0].Length/1e3, away[0].Pixels, away[0].Length/1e3)
	}
	if lon := across[0].CentroidLon; math.Abs(math.Abs(lon)-180) > 1.5 {
		t.Errorf("centroid longitude %g, want near 180", lon)
	}
	// On a regional grid ending at the date line the halves stay apart.
	r := mustGrid(t, 30, 1, 16, 150, 1, 31) // 150..180E only
	if objs := detectOne(t, r, rect(r, 35, 40, 170, 180), &ARConfig{}); len(objs) != 1 {
		t.Errorf("regional: %d objects", len(objs))
	}
}

func TestARRules(t *testing.T) {
	g, err := grid.Global(1, 1)
	if err != nil {
		t.Fatal(err)
	}
	c, err := ParseConfig(DefaultValues())
	if err != nil {
		t.Fatal(err)
	}
	ar := &c.ARConf
	cases := []struct {
		name                   string
		lat0, lat1, lon0, lon1 float64
		kept                   bool
		reason                 string
	}{
		// About 3000 km x 450 km at 40N: a river by every default rule.
		{"long and narrow at 40N", 38, 42, -150, -115, true, ""},
		// The same shape within 20 degrees of the equator (from memory rule).
		{"long and narrow at 10N", 8, 12, -150, -120, false, "equator"},
		// About 1240 km long: shorter than 2000 km (from memory rule).
		{"short", 38, 42, -150, -135, false, "length"},
		// About 3060 km x 1180 km: wider than 1000 km (from memory rule).
		{"wide", 35, 46, -150, -115, false, "width"},
		// Long, but a disc-like blob: caught by the width rule first.
		{"blob", 30, 50, -160, -135, false, "width"},
		// Across the date line: still one river.
		{"across the date line", 38, 42, 165, -160, true, ""},
	}
	for _, tc := range cases {
		objs := detectOne(t, g, rect(g, tc.lat0, tc.lat1, tc.lon0, tc.lon1), ar)
		if len(objs) != 1 {
			t.Errorf("%s: %d objects", tc.name, len(objs))
			continue
		}
		o := objs[0]
		t.Logf("%s: kept %v (%s), length %.0f km width %.0f km", tc.name, o.Kept, o.Reason, o.Length/1e3, o.Width/1e3)
		if o.Kept != tc.kept || !strings.Contains(o.Reason, tc.reason) {
			t.Errorf("%s: kept %v (%s), length %.0f km width %.0f km ratio %.2f; want kept %v with %q",
				tc.name, o.Kept, o.Reason, o.Length/1e3, o.Width/1e3, o.Aspect, tc.kept, tc.reason)
		}
	}
	// Aspect alone: a 2100 x 1000 km object with the width rule relaxed
	// fails length/width > 2 when the ratio is below 2.
	loose := *ar
	loose.MaxWidth = 5000e3
	loose.MinAspect = 3
	objs := detectOne(t, g, rect(g, 38, 45, -150, -125), &loose)
	if len(objs) != 1 || objs[0].Kept || !strings.Contains(objs[0].Reason, "length/width") {
		t.Errorf("aspect rule: %+v", objs)
	}
}

func TestCombinePrecedence(t *testing.T) {
	tc := []bool{false, true, false, true}
	ar := []bool{false, false, true, true}
	cls := make([]byte, 4)
	Combine(cls, tc, ar, ClassTC)
	if want := []byte{0, 1, 2, 1}; string(cls) != string(want) {
		t.Errorf("TC precedence: %v, want %v", cls, want)
	}
	Combine(cls, tc, ar, ClassAR)
	if want := []byte{0, 1, 2, 2}; string(cls) != string(want) {
		t.Errorf("AR precedence: %v, want %v", cls, want)
	}
}
