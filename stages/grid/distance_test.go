package grid

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// distTol is the absolute tolerance in metres for distances computed two
// ways in float64 (a few ulps of the Earth's circumference).
const distTol = 1e-6

func TestDistanceExactCases(t *testing.T) {
	R := EarthRadius
	cases := []struct {
		name                   string
		lat1, lon1, lat2, lon2 float64
		want                   float64
	}{
		{"quarter meridian", 0, 0, 90, 0, math.Pi * R / 2},                // derived: pi R / 2
		{"pole to pole", -90, 10, 90, -70, math.Pi * R},                   // derived
		{"antipodes on the equator", 0, -30, 0, 150, math.Pi * R},         // derived
		{"antipodes off the equator", 40, 10, -40, -170, math.Pi * R},     // derived
		{"one degree of equator", 0, 179.5, 0, -179.5, math.Pi * R / 180}, // derived, across the date line
		{"one degree of meridian", 45, 20, 46, 20, math.Pi * R / 180},     // derived
		{"same point", 12.3, 45.6, 12.3, 45.6 + 360, 0},                   // derived
		// Along the parallel at 60N, 90 degrees apart: the central angle is
		// acos(sin^2 60 + cos^2 60 cos 90) = acos(3/4) (derived).
		{"60N quarter parallel", 60, 0, 60, 90, R * math.Acos(0.75)},
	}
	for _, c := range cases {
		if got := Distance(c.lat1, c.lon1, c.lat2, c.lon2); math.Abs(got-c.want) > distTol {
			t.Errorf("%s: Distance = %.9f, want %.9f", c.name, got, c.want)
		}
	}
	// Tiny separations keep their relative precision: 1e-9 degree along the
	// equator is R * 1e-9 * pi/180 metres (derived).
	want := R * 1e-9 * math.Pi / 180
	if got := Distance(0, 0, 0, 1e-9); math.Abs(got-want) > 1e-9*want {
		t.Errorf("tiny distance %.12g, want %.12g", got, want)
	}
	// Nearly antipodal: 1e-6 degree short of antipodal along the equator.
	want = R * (180 - 1e-6) * math.Pi / 180
	if got := Distance(0, 0, 0, 180-1e-6); math.Abs(got-want) > distTol {
		t.Errorf("nearly antipodal %.9f, want %.9f", got, want)
	}
}

func TestBearingDestinationMidpoint(t *testing.T) {
	// Exact cases (derived from the formulas).
	for _, c := range []struct {
		lat1, lon1, lat2, lon2, want float64
	}{
		{0, 0, 0, 90, 90}, {0, 0, 50, 0, 0}, {10, 0, -10, 0, 180}, {0, 10, 0, -10, 270},
		{0, 179, 0, -179, 90}, // eastward across the date line
	} {
		if got := InitialBearing(c.lat1, c.lon1, c.lat2, c.lon2); math.Abs(got-c.want) > 1e-9 {
			t.Errorf("InitialBearing(%g,%g -> %g,%g) = %g, want %g", c.lat1, c.lon1, c.lat2, c.lon2, got, c.want)
		}
	}
	lat, lon := Destination(0, 170, 90, math.Pi*EarthRadius/9) // 20 degrees east along the equator
	if math.Abs(lat) > 1e-9 || math.Abs(lon-(-170)) > 1e-9 {
		t.Errorf("Destination 20 deg east of 170E = %g, %g; want 0, -170", lat, lon)
	}
	lat, lon = Midpoint(0, 170, 0, -170)
	if math.Abs(lat) > 1e-9 || math.Abs(math.Abs(lon)-180) > 1e-9 {
		t.Errorf("Midpoint(0,170; 0,-170) = %g, %g; want 0, 180", lat, lon)
	}
	lat, _ = Midpoint(0, 0, 90, 0)
	if math.Abs(lat-45) > 1e-9 {
		t.Errorf("Midpoint of the quarter meridian at %g, want 45", lat)
	}
	// Round trips on seeded random pairs: travelling the distance along the
	// initial bearing reaches the second point; the midpoint is half way.
	rng := rand.New(rand.NewPCG(1, 2))
	for range 1000 {
		lat1, lon1 := rng.Float64()*178-89, rng.Float64()*360-180
		lat2, lon2 := rng.Float64()*178-89, rng.Float64()*360-180
		d := Distance(lat1, lon1, lat2, lon2)
		if d > 0.999*math.Pi*EarthRadius {
			continue // bearing ill-defined near antipodes
		}
		b := InitialBearing(lat1, lon1, lat2, lon2)
		la, lo := Destination(lat1, lon1, b, d)
		if e := Distance(la, lo, lat2, lon2); e > 1e-3 {
			t.Fatalf("Destination(%g,%g, %g, %g) = %g,%g is %g m from %g,%g", lat1, lon1, b, d, la, lo, e, lat2, lon2)
		}
		ml, mo := Midpoint(lat1, lon1, lat2, lon2)
		if e := math.Abs(Distance(lat1, lon1, ml, mo) - d/2); e > 1e-3 {
			t.Fatalf("Midpoint off by %g m", e)
		}
	}
}

// TestDistanceAgainstNumpy compares Distance and InitialBearing on seeded
// random pairs with an independent numpy implementation of the haversine
// formula in its atan2 form and the standard bearing formula.
func TestDistanceAgainstNumpy(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	const n = 500
	var in strings.Builder
	pts := make([][4]float64, n)
	for k := range pts {
		p := [4]float64{rng.Float64()*180 - 90, rng.Float64()*720 - 360, rng.Float64()*180 - 90, rng.Float64()*720 - 360}
		if k < 10 { // short distances
			p[2], p[3] = p[0]+rng.Float64()*1e-3, p[1]+rng.Float64()*1e-3
		}
		pts[k] = p
		fmt.Fprintf(&in, "%.17g %.17g %.17g %.17g\n", p[0], p[1], p[2], p[3])
	}
	script := `
import sys, numpy as np
a = np.loadtxt(sys.stdin).reshape(-1, 4)
R = 6371008.7714
p1, l1, p2, l2 = np.radians(a.T)
h = np.sin((p2 - p1) / 2)**2 + np.cos(p1) * np.cos(p2) * np.sin((l2 - l1) / 2)**2
d = 2 * R * np.arctan2(np.sqrt(h), np.sqrt(1 - h))
b = np.degrees(np.arctan2(np.sin(l2 - l1) * np.cos(p2), np.cos(p1) * np.sin(p2) - np.sin(p1) * np.cos(p2) * np.cos(l2 - l1))) % 360
for x, y in zip(d, b):
    print(repr(float(x)), repr(float(y)))
`
	out := strings.Fields(string(runPython(t, "numpy", script, []byte(in.String()))))
	if len(out) != 2*n {
		t.Fatalf("python returned %d numbers, want %d", len(out), 2*n)
	}
	for k, p := range pts {
		wd, _ := strconv.ParseFloat(out[2*k], 64)
		wb, _ := strconv.ParseFloat(out[2*k+1], 64)
		// Haversine loses precision near antipodes (about 1e-8 relative of
		// the angle there); 1 mm covers it.
		if got := Distance(p[0], p[1], p[2], p[3]); math.Abs(got-wd) > 1e-3 {
			t.Errorf("Distance%v = %.6f, numpy haversine %.6f", p, got, wd)
		}
		if got := InitialBearing(p[0], p[1], p[2], p[3]); math.Abs(LonDiff(got, wb)) > 1e-7 {
			t.Errorf("InitialBearing%v = %.9f, numpy %.9f", p, got, wb)
		}
	}
}

func TestLongitudeHelpers(t *testing.T) {
	for _, c := range []struct{ in, w180, w360 float64 }{
		{0, 0, 0}, {180, -180, 180}, {-180, -180, 180}, {359.5, -0.5, 359.5}, {-0.5, -0.5, 359.5},
		{720.25, 0.25, 0.25}, {-540, -180, 180},
		{-1e-17, 0, 0}, // 180 - 1e-17 rounds to 180: tiny negatives become 0, never 360
	} {
		if got := NormalizeLon180(c.in); got != c.w180 {
			t.Errorf("NormalizeLon180(%g) = %g, want %g", c.in, got, c.w180)
		}
		if got := NormalizeLon360(c.in); got != c.w360 {
			t.Errorf("NormalizeLon360(%g) = %g, want %g", c.in, got, c.w360)
		}
	}
	if d := LonDiff(170, -170); d != 20 {
		t.Errorf("LonDiff(170, -170) = %g, want 20", d)
	}
	if d := LonDiff(-170, 170); d != -20 {
		t.Errorf("LonDiff(-170, 170) = %g, want -20", d)
	}
}

func TestInBox(t *testing.T) {
	across := Box{LatMin: -10, LatMax: 10, LonMin: 170, LonMax: -170}
	east := Box{LatMin: 0, LatMax: 60, LonMin: 100, LonMax: 260} // 0..360 convention
	globe := Box{LatMin: -90, LatMax: 90, LonMin: -180, LonMax: 180}
	meridian := Box{LatMin: -90, LatMax: 90, LonMin: 30, LonMax: 30}
	for _, c := range []struct {
		b        Box
		lat, lon float64
		want     bool
	}{
		{across, 0, 175, true}, {across, 0, -175, true}, {across, 0, 185, true}, {across, 0, 180, true},
		{across, 0, 170, true}, {across, 0, -170, true}, {across, 0, 0, false}, {across, 0, 169, false},
		{across, 11, 180, false},
		{east, 30, -120, true}, {east, 30, 240, true}, {east, 30, -99, false}, {east, 30, 99, false},
		{globe, 45, 123, true}, {globe, -90, -180, true},
		{meridian, 0, 30, true}, {meridian, 0, 30.1, false}, {meridian, 0, 390, true},
	} {
		if got := InBox(c.lat, c.lon, c.b); got != c.want {
			t.Errorf("InBox(%g, %g, %+v) = %v, want %v", c.lat, c.lon, c.b, got, c.want)
		}
	}
}
