package catalog

import (
	"math"
	"path/filepath"
	"testing"

	"github.com/squall-climate/squall/stages/grid"
)

// areaRelTol allows for the summation of many cell areas in float64.
const areaRelTol = 1e-11

func fill(g *grid.Grid, class byte, in func(lat, lon float64) bool) []byte {
	m := make([]byte, g.Len())
	for i, lat := range g.Lat {
		for j, lon := range g.Lon {
			if in(lat, lon) {
				m[g.Index(i, j)] = class
			}
		}
	}
	return m
}

// TestCapAndBandAreas checks event areas against the area of a spherical
// zone, 2 pi R^2 (sin lat2 - sin lat1) (derived from CF-1.13 section 7.2
// cell area; reference-values.md: the 30S-30N band is half the sphere).
func TestCapAndBandAreas(t *testing.T) {
	g, err := grid.Global(1, 1)
	if err != nil {
		t.Fatal(err)
	}
	R := grid.EarthRadius / 1000 // km
	zone := func(lat1, lat2 float64) float64 {
		return 2 * math.Pi * R * R * (math.Sin(lat2*math.Pi/180) - math.Sin(lat1*math.Pi/180))
	}
	cases := []struct {
		name       string
		lo, hi     float64
		want       float64
		class      byte
		wantEvents int
	}{
		{"cap north of 60N", 60, 90, zone(60, 90), TropicalCyclone, 1},
		{"band 30S-30N (half the sphere)", -30, 30, 2 * math.Pi * R * R, AtmosphericRiver, 1},
		{"band 10N-20N", 10, 20, zone(10, 20), AtmosphericRiver, 1},
	}
	for _, c := range cases {
		b, err := NewBuilder(g, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		m := fill(g, c.class, func(lat, lon float64) bool { return lat > c.lo && lat < c.hi })
		if err := b.Step(0, Time{}, m, Fields{}); err != nil {
			t.Fatal(err)
		}
		ev := b.Events(Filter{})
		if len(ev) != c.wantEvents {
			t.Fatalf("%s: %d events, want %d (a band round a periodic grid is one object)", c.name, len(ev), c.wantEvents)
		}
		if got := ev[0].MaxAreaKm2; math.Abs(got-c.want) > areaRelTol*c.want {
			t.Errorf("%s: area %.6f km2, want %.6f (relative error %.2g)", c.name, got, c.want, math.Abs(got-c.want)/c.want)
		}
	}
}

// TestDateLineEvent moves a block of cells eastwards across the date line
// on a global 0..360 grid: it must be one event whose centroid longitude is
// the middle of the block at every step (derived: the block is symmetric
// about its middle meridian, so the area-weighted 3-D centroid lies on it)
// and whose latitude lies inside the block's rows.
func TestDateLineEvent(t *testing.T) {
	g, err := grid.Global(2, 2) // centres at 1, 3, ..., 359 deg east
	if err != nil {
		t.Fatal(err)
	}
	b, err := NewBuilder(g, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	centres := []float64{174, 178, 182, 186, 190} // block middle, degrees east
	for s, mid := range centres {
		m := fill(g, TropicalCyclone, func(lat, lon float64) bool {
			return lat > 10 && lat < 16 && math.Abs(grid.LonDiff(mid, lon)) < 5
		})
		tm := Time{Hours: float64(6 * s), ISO: "x"}
		if err := b.Step(s, tm, m, Fields{}); err != nil {
			t.Fatal(err)
		}
	}
	ev := b.Events(Filter{})
	if len(ev) != 1 {
		t.Fatalf("%d events, want 1 (an event crossing the date line is one event)", len(ev))
	}
	e := ev[0]
	if len(e.Points) != len(centres) || e.DurationHours() != 24 {
		t.Fatalf("event has %d points over %g h, want %d over 24 h", len(e.Points), e.DurationHours(), len(centres))
	}
	for i, p := range e.Points {
		want := grid.NormalizeLon180(centres[i])
		if math.Abs(grid.LonDiff(want, p.Lon)) > 1e-9 {
			t.Errorf("step %d: centroid lon %.12g, want %g", i, p.Lon, want)
		}
		if p.Lat < 11 || p.Lat > 15 {
			t.Errorf("step %d: centroid lat %g outside the block's rows 11..15", i, p.Lat)
		}
		if p.Lon < -180 || p.Lon > 180 {
			t.Errorf("step %d: lon %g outside [-180, 180]", i, p.Lon)
		}
	}
	// Its GeoJSON geometry is split at the antimeridian (RFC 7946 3.1.9).
	c := &Catalog{Groups: []Group{{Labels{Scenario: "s"}, ev}}}
	f := c.Features()
	if geom := geometry(f[0].Lons, f[0].Lats); geom["type"] != "MultiLineString" {
		t.Errorf("geometry %v, want a MultiLineString", geom["type"])
	}
	dir := t.TempDir()
	if err := WriteGeoJSON(filepath.Join(dir, "e.geojson"), f); err != nil {
		t.Fatal(err)
	}
}

func TestIntensityAndLandfall(t *testing.T) {
	g, err := grid.Regular(-10, 1, 21, 100, 1, 21) // regional, 100E-120E
	if err != nil {
		t.Fatal(err)
	}
	land := make([]bool, g.Len())
	for i := range g.Lat {
		for j, lon := range g.Lon {
			land[g.Index(i, j)] = lon >= 115 // a coast along 115E
		}
	}
	regions := []RegionMask{{Name: "east", In: land}, {Name: "all", In: g.BoxMask(grid.Box{LatMin: -90, LatMax: 90, LonMin: 0, LonMax: 360})}}
	b, err := NewBuilder(g, land, regions)
	if err != nil {
		t.Fatal(err)
	}
	slp := make([]float32, g.Len())
	wind := make([]float32, g.Len())
	for s, lon0 := range []float64{108, 110, 112, 114} {
		m := fill(g, TropicalCyclone, func(lat, lon float64) bool { return math.Abs(lat) <= 1 && math.Abs(lon-lon0) <= 1 })
		for k := range slp {
			slp[k] = 101000
			wind[k] = 5
		}
		i, j, _ := g.Locate(0, lon0)
		slp[g.Index(i, j)] = float32(96000 - 1000*s)
		wind[g.Index(i, j)] = float32(30 + 10*s) // 30, 40, 50, 60 m/s
		wind[g.Index(i+1, j)] = float32(math.NaN())
		if err := b.Step(s, Time{Hours: float64(6 * s), ISO: "t" + string(rune('0'+s))}, m, Fields{SLP: slp, Wind: wind}); err != nil {
			t.Fatal(err)
		}
	}
	ev := b.Events(Filter{})
	if len(ev) != 1 {
		t.Fatalf("%d events, want 1", len(ev))
	}
	e := ev[0]
	if e.MinSLP != 93000 || e.MaxWind != 60 {
		t.Errorf("min SLP %g max wind %g, want 93000 and 60 (planted)", e.MinSLP, e.MaxWind)
	}
	// 60 m/s = 116.6 kt: category 4, 113-136 kt (NHC 2012).
	if e.Category() != 4 {
		t.Errorf("category %d, want 4", e.Category())
	}
	// Step 3 spans 113-115E: its cells at 115E are land (planted coast), the
	// nearest land cell to the centroid (0N, 114E) is (0N, 115E).
	if e.Landfall == nil || e.Landfall.Time.ISO != "t3" || e.Landfall.Lon != 115 || e.Landfall.Lat != 0 {
		t.Errorf("landfall %+v, want t3 at 0N 115E", e.Landfall)
	}
	if len(e.Regions) != 2 || e.Regions[0] != "east" || e.Regions[1] != "all" {
		t.Errorf("regions %v, want [east all] in campaign order", e.Regions)
	}
	if e.Landfall != nil && (len(e.Landfall.Regions) != 2) {
		t.Errorf("landfall regions %v", e.Landfall.Regions)
	}
}

func TestBadMaskValue(t *testing.T) {
	g, _ := grid.Regular(0, 1, 2, 0, 1, 2)
	b, _ := NewBuilder(g, nil, nil)
	if err := b.Step(0, Time{}, []byte{0, 1, 3, 0}, Fields{}); err == nil {
		t.Error("mask value 3 (not in flag_values) must be an error")
	}
}
