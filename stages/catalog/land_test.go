package catalog

import (
	"math"
	"os"
	"testing"

	"github.com/squall-climate/squall/stages/grid"
)

// landsea is a real 1-degree land-sea mask from Debian's libncarg-data:
// LSMASK(lat, lon), 0 ocean, 1 land, 2 lake, 3 small island, 4 ice shelf.
const landsea = "/usr/share/ncarg/data/cdf/landsea.nc"

// landseaRule counts land, lakes, small islands and ice shelves as land
// (a storm over any of them is no longer over open sea).
var landseaRule = LandRule{Values: []float64{1, 2, 3, 4}}

func needLandsea(t *testing.T) {
	t.Helper()
	if _, err := os.Stat(landsea); err != nil {
		t.Skipf("skipped: %s not found (install Debian libncarg-data)", landsea)
	}
}

// Points whose land or sea status is common knowledge of geography: the
// middle of a continent or of an ocean, far from any coast.
var knownPoints = []struct {
	name     string
	lat, lon float64
	land     bool
}{
	{"central Africa (Chad/Central African Republic)", 7.5, 20.5, true},
	{"central Australia", -25.5, 134.5, true},
	{"central Siberia", 60.5, 100.5, true},
	{"Amazon basin", -5.5, -60.5, true},
	{"central equatorial Pacific", 0.5, -160.5, false},
	{"central North Atlantic", 30.5, -40.5, false},
	{"southern Indian Ocean", -30.5, 80.5, false},
	{"South Pacific", -45.5, -130.5, false},
}

func TestLandseaKnownPoints(t *testing.T) {
	needLandsea(t)
	for _, spacing := range []float64{1, 2.5} {
		// On the file's own 1-degree grid, and regridded by nearest
		// neighbour onto a coarser global grid (2.5 degrees).
		g, err := grid.Global(spacing, spacing)
		if err != nil {
			t.Fatal(err)
		}
		land, err := ReadLandMask(landsea, "LSMASK", landseaRule, g, RegridNearest)
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range knownPoints {
			i, j, ok := g.Locate(p.lat, p.lon)
			if !ok {
				t.Fatalf("%s not on the grid", p.name)
			}
			if got := land[g.Index(i, j)]; got != p.land {
				t.Errorf("%g-degree grid: %s (%g, %g): land = %v, want %v", spacing, p.name, p.lat, p.lon, got, p.land)
			}
		}
		n := 0
		for _, l := range land {
			if l {
				n++
			}
		}
		// Land is about 29% of the Earth's surface (memory); on a lat-lon
		// grid, polar rows (Antarctica, ice shelves) weigh more by count.
		if f := float64(n) / float64(len(land)); f < 0.25 || f > 0.5 {
			t.Errorf("%g-degree grid: land fraction by cell count %g, implausible", spacing, f)
		}
	}
	// Refusing instead of regridding is an error that says what to do.
	g, _ := grid.Global(2, 2)
	if _, err := ReadLandMask(landsea, "LSMASK", landseaRule, g, RegridRefuse); err == nil {
		t.Error("a land mask on another grid with land_mask_regrid = refuse must be an error")
	}
	// A regional grid beyond a regional land mask is refused, tested with
	// a source too small to cover: a regional target is fine.
	reg, _ := grid.Regular(-40, 1, 20, 100, 1, 30)
	if _, err := ReadLandMask(landsea, "", landseaRule, reg, RegridNearest); err != nil {
		t.Errorf("regional target inside a global mask: %v", err)
	}
}

// TestLandfallWesternAustralia moves a 2x3-cell storm eastwards along 25S
// from the open Indian Ocean: the west coast of Australia at 25S lies near
// 113.5-114E (common knowledge of geography; the file agrees), so landfall
// is the first step whose eastern column reaches 113.5E.
func TestLandfallWesternAustralia(t *testing.T) {
	needLandsea(t)
	g, err := grid.Global(1, 1)
	if err != nil {
		t.Fatal(err)
	}
	land, err := ReadLandMask(landsea, "LSMASK", landseaRule, g, RegridNearest)
	if err != nil {
		t.Fatal(err)
	}
	b, err := NewBuilder(g, land, nil)
	if err != nil {
		t.Fatal(err)
	}
	for s := 0; s < 12; s++ {
		lon0 := 104.5 + float64(s)
		m := fill(g, TropicalCyclone, func(lat, lon float64) bool {
			return (lat == -24.5 || lat == -25.5) && math.Abs(lon-lon0) <= 1.01
		})
		if err := b.Step(s, Time{Hours: float64(6 * s), ISO: string(rune('a' + s))}, m, Fields{}); err != nil {
			t.Fatal(err)
		}
	}
	ev := b.Events(Filter{})
	if len(ev) != 1 {
		t.Fatalf("%d events, want 1", len(ev))
	}
	e := ev[0]
	if e.Landfall == nil {
		t.Fatal("no landfall")
	}
	// Eastern column 113.5E at step 8 (lon0 = 112.5E).
	if e.Landfall.Step != 8 {
		t.Errorf("landfall at step %d, want 8", e.Landfall.Step)
	}
	if e.Landfall.Lon < 113 || e.Landfall.Lon > 115 || e.Landfall.Lat > -24 || e.Landfall.Lat < -26 {
		t.Errorf("landfall at (%g, %g), want the coast near 25S 113.5-114E", e.Landfall.Lat, e.Landfall.Lon)
	}
	for i, p := range e.Points {
		if p.OnLand != (i >= 8) {
			t.Errorf("step %d on land = %v", i, p.OnLand)
		}
	}
}
