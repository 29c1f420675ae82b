package grid

import (
	"math"
	"testing"
)

// areaRelTol bounds rounding in sums of a million cell areas.
const areaRelTol = 1e-12

func TestCellAreaReference(t *testing.T) {
	cases := []struct {
		name                   string
		lat1, lat2, lon1, lon2 float64
		want                   float64
		tol                    float64
	}{
		// reference-values.md "Earth and units": derived from the CF-1.13
		// section 7.2 formula with R1 (status "derived", not published).
		{"1x1 degree 0-1N", 0, 1, 0, 1, 12363718034.18, 0.01},
		{"1x1 degree 89-90N", 89, 90, 0, 1, 107896532.69, 0.01},
		// Whole sphere = 4 pi R^2 (derived, geometry).
		{"globe", -90, 90, 0, 360, 4 * math.Pi * EarthRadius * EarthRadius, 1},
		// 30S-30N = half the sphere since sin 30 = 1/2 (derived).
		{"30S-30N band", -30, 30, -180, 180, 2 * math.Pi * EarthRadius * EarthRadius, 1},
	}
	for _, c := range cases {
		if got := CellArea(c.lat1, c.lat2, c.lon1, c.lon2); math.Abs(got-c.want) > c.tol {
			t.Errorf("%s: CellArea = %.2f, want %.2f", c.name, got, c.want)
		}
	}
}

func TestCellAreasSumToSphere(t *testing.T) {
	sphere := 4 * math.Pi * EarthRadius * EarthRadius // derived
	grids := []*Grid{
		mustRegular(t, -89.5, 1, 180, 0.5, 1, 360),           // cell centres
		mustRegular(t, 90, -1, 181, 0, 1, 360),               // points at the poles: half cells there
		mustRegular(t, 89.875, -0.25, 720, -180, 0.25, 1440), // 0.25 degree, north-to-south
		mustRegular(t, -90, 180.0/63, 64, 0, 360.0/128, 128),
	}
	for _, g := range grids {
		var sum float64
		for _, a := range g.CellAreas() {
			sum += a
		}
		if math.Abs(sum-sphere) > areaRelTol*sphere*10 {
			t.Errorf("%s: areas sum to %.6e, want 4 pi R^2 = %.6e", g, sum, sphere)
		}
	}
	// Cells of the 1-degree grid between 30S and 30N are half the sphere
	// (derived: sin 30 deg = 1/2).
	g := grids[0]
	var band float64
	areas := g.CellAreas()
	for i, lat := range g.Lat {
		if math.Abs(lat) < 30 {
			for j := range g.NLon() {
				band += areas[g.Index(i, j)]
			}
		}
	}
	if math.Abs(band-sphere/2) > areaRelTol*sphere {
		t.Errorf("30S-30N band = %.6e, want half the sphere %.6e", band, sphere/2)
	}
	// Row 90 of the 1-degree grid is the cell 0-1N (reference-values.md,
	// derived).
	if got := areas[g.Index(90, 0)]; math.Abs(got-12363718034.18) > 0.01 {
		t.Errorf("cell 0-1N = %.2f, want 12363718034.18", got)
	}
	if got := areas[g.Index(179, 7)]; math.Abs(got-107896532.69) > 0.01 {
		t.Errorf("cell 89-90N = %.2f, want 107896532.69", got)
	}
}

func TestBounds(t *testing.T) {
	g := mustRegular(t, 90, -1, 181, 0, 1, 360)
	b := g.LatBounds()
	// Derived: midpoints, clamped at the pole.
	if b[0] != [2]float64{89.5, 90} || b[180] != [2]float64{-90, -89.5} || b[1] != [2]float64{88.5, 89.5} {
		t.Errorf("LatBounds: first %v, second %v, last %v", b[0], b[1], b[180])
	}
	lb := g.LonBounds()
	if lb[0] != [2]float64{-0.5, 0.5} || lb[359] != [2]float64{358.5, 359.5} {
		t.Errorf("LonBounds: first %v, last %v", lb[0], lb[359])
	}
}

func TestAreaMean(t *testing.T) {
	g := mustRegular(t, 89.5, -1, 180, -179.5, 1, 360)
	// sin(lat) is odd about the equator: its area mean over the globe is 0
	// (derived). A constant's mean is itself.
	f := field(g, func(lat, _ float64) float64 { return math.Sin(lat * deg2rad) })
	if m, _, _ := g.AreaMean(f, nil); math.Abs(m) > 1e-15 {
		t.Errorf("global mean of sin(lat) = %g, want 0", m)
	}
	// The indicator of 30S-30N averages to 1/2 (derived: half the sphere),
	// and the masked area of that band is 2 pi R^2.
	band := make([]bool, g.Len())
	ind := field(g, func(lat, _ float64) float64 {
		if math.Abs(lat) < 30 {
			return 1
		}
		return 0
	})
	for k, v := range ind {
		band[k] = v == 1
	}
	if m, a, _ := g.AreaMean(ind, nil); math.Abs(m-0.5) > 1e-12 || math.Abs(a-4*math.Pi*EarthRadius*EarthRadius) > 1e-12*a {
		t.Errorf("mean of the band indicator %g (want 0.5), area %g", m, a)
	}
	if a, _ := g.MaskArea(band); math.Abs(a-2*math.Pi*EarthRadius*EarthRadius) > 1e-12*a {
		t.Errorf("band area %g, want 2 pi R^2", a)
	}
	// NaN cells are skipped: the mean over the band of a field that is 3
	// there and NaN elsewhere is 3.
	h := make([]float64, g.Len())
	for k := range h {
		h[k] = math.NaN()
		if band[k] {
			h[k] = 3
		}
	}
	if m, a, _ := g.AreaMean(h, nil); math.Abs(m-3) > 1e-12 || math.Abs(a-2*math.Pi*EarthRadius*EarthRadius) > 1e-12*a {
		t.Errorf("NaN-skipping mean %g, area %g", m, a)
	}
	if m, a, _ := g.AreaMean(h, make([]bool, g.Len())); !math.IsNaN(m) || a != 0 {
		t.Errorf("empty mask: %g, %g", m, a)
	}
	if _, _, err := g.AreaMean(h[1:], nil); err == nil {
		t.Error("short field accepted")
	}
}
