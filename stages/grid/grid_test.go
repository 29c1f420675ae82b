package grid

import (
	"strings"
	"testing"
)

func mustGrid(t testing.TB, lat, lon []float64) *Grid {
	t.Helper()
	g, err := New(lat, lon)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

func mustRegular(t testing.TB, lat0, dlat float64, nlat int, lon0, dlon float64, nlon int) *Grid {
	t.Helper()
	g, err := Regular(lat0, dlat, nlat, lon0, dlon, nlon)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

func TestNewValidates(t *testing.T) {
	cases := []struct {
		name     string
		lat, lon []float64
		want     string // substring of the error; "" = valid
	}{
		{"south-to-north 0..360", []float64{-1, 0, 1}, []float64{0, 90, 180, 270}, ""},
		{"north-to-south -180..180", []float64{1, 0, -1}, []float64{-180, -90, 0, 90}, ""},
		{"regional across antimeridian", []float64{0, 1}, []float64{170, 175, 180, -175, -170}, ""},
		{"regional across prime meridian", []float64{0, 1}, []float64{350, 355, 0, 5}, ""},
		{"float32 coordinates", []float64{float64(float32(0.1)), float64(float32(0.2)), float64(float32(0.3))}, []float64{0, 1}, ""},
		{"too small", []float64{0}, []float64{0, 1}, "at least 2"},
		{"latitude out of range", []float64{89, 91}, []float64{0, 1}, "outside [-90, 90]"},
		{"not monotonic", []float64{0, 1, 0.5, 1.5}, []float64{0, 1}, "not strictly monotonic"},
		{"irregular latitudes", []float64{0, 1, 2.5, 3}, []float64{0, 1}, "not regularly spaced"},
		// The five Gaussian latitudes nearest the north pole of the 48-point
		// Gaussian grid, degrees(arcsin(x)) for x from
		// numpy.polynomial.legendre.leggauss(48) (derived): steps differ from
		// their mean by 0.5%, and a full Gaussian grid by 0.8%.
		{"gaussian", []float64{72.36158103, 76.07024446, 79.77704565, 83.47893667, 87.15909456}, []float64{0, 1}, "not regularly spaced"},
		{"irregular longitudes", []float64{0, 1}, []float64{0, 1, 3}, "not regularly spaced"},
		{"westward longitudes", []float64{0, 1}, []float64{10, 5, 0}, "must increase eastwards"},
		{"repeated cyclic point", []float64{0, 1}, []float64{0, 90, 180, 270, 360}, "repeats"},
	}
	for _, c := range cases {
		_, err := New(c.lat, c.lon)
		switch {
		case c.want == "" && err != nil:
			t.Errorf("%s: unexpected error %v", c.name, err)
		case c.want != "" && err == nil:
			t.Errorf("%s: accepted, want error containing %q", c.name, c.want)
		case c.want != "" && !strings.Contains(err.Error(), c.want):
			t.Errorf("%s: error %q, want it to contain %q", c.name, err, c.want)
		}
	}
}

func TestPeriodic(t *testing.T) {
	cases := []struct {
		g    *Grid
		want bool
	}{
		{mustRegular(t, -89.5, 1, 180, 0.5, 1, 360), true},
		{mustRegular(t, 90, -2.5, 73, -180, 2.5, 144), true},
		{mustRegular(t, 0, 1, 2, 0, 1, 359), false},
		{mustGrid(t, []float64{0, 1}, []float64{170, 175, 180, -175, -170}), false},
	}
	for _, c := range cases {
		if got := c.g.Periodic(); got != c.want {
			t.Errorf("%s: Periodic() = %v, want %v", c.g, got, c.want)
		}
	}
}

func TestLocate(t *testing.T) {
	// 1-degree global grid, north-to-south, -180..180.
	g := mustRegular(t, 89.5, -1, 180, -179.5, 1, 360)
	cases := []struct {
		lat, lon float64
		i, j     int
		ok       bool
	}{
		{89.5, -179.5, 0, 0, true},
		{89.99, 180.2, 0, 0, true}, // 180.2 = -179.8 wraps to column 0
		{-89.99, 179.9, 179, 359, true},
		{0.2, 0.2, 89, 180, true},    // row 89 is lat 0.5, column 180 is lon 0.5
		{10.2, 359.6, 79, 179, true}, // 359.6 = -0.4, nearest -0.5 = column 179 (-179.5 + 179)
		{-0.6, 540.4, 90, 0, true},   // 540.4 = 180.4 = -179.6
	}
	for _, c := range cases {
		i, j, ok := g.Locate(c.lat, c.lon)
		if i != c.i || j != c.j || ok != c.ok {
			t.Errorf("Locate(%g, %g) = %d, %d, %v; want %d, %d, %v", c.lat, c.lon, i, j, ok, c.i, c.j, c.ok)
		}
	}
	// A regional grid across the antimeridian: 170 .. -170 in 5 degree steps.
	r := mustGrid(t, []float64{0, 5}, []float64{170, 175, 180, -175, -170})
	for _, c := range []struct {
		lat, lon float64
		j        int
		ok       bool
	}{
		{0, 167.6, 0, true}, {0, 190, 4, true}, {0, -167.6, 4, true}, {0, -167.4, 0, false}, {0, 167.4, 0, false},
		{7.4, 180, 2, true}, {7.6, 180, 0, false}, {-2.6, 180, 0, false},
	} {
		_, j, ok := r.Locate(c.lat, c.lon)
		if ok != c.ok || (ok && j != c.j) {
			t.Errorf("regional Locate(%g, %g) = %d, %v; want %d, %v", c.lat, c.lon, j, ok, c.j, c.ok)
		}
	}
}

func TestSameAs(t *testing.T) {
	a := mustRegular(t, -89.5, 1, 180, 0.5, 1, 360)
	cases := []struct {
		b    *Grid
		want string
	}{
		{mustRegular(t, -89.5, 1, 180, 0.5, 1, 360), ""},
		{mustRegular(t, -89.5, 1, 180, 0.5+1e-5, 1, 360), ""}, // within SpacingTolerance
		{mustRegular(t, -89.5, 1, 179, 0.5, 1, 360), "size 180x360 (lat x lon) vs 179x360"},
		{mustRegular(t, 89.5, -1, 180, 0.5, 1, 360), "latitude order south-to-north vs north-to-south"},
		{mustRegular(t, -89.5, 1, 180, -179.5, 1, 360), "longitude convention 0..360 vs -180..180"},
		{mustRegular(t, -89.5, 1, 180, 0.25, 1, 360), "longitude[0] 0.5 vs 0.25"},
		{mustRegular(t, -89.4, 1, 180, 0.5, 1, 360), "latitude[0] -89.5 vs -89.4"},
	}
	for _, c := range cases {
		err := a.SameAs(c.b)
		switch {
		case c.want == "" && err != nil:
			t.Errorf("SameAs(%s): %v", c.b, err)
		case c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)):
			t.Errorf("SameAs(%s) = %v, want %q", c.b, err, c.want)
		}
	}
}
