package ncio

import (
	"math"
	"strings"
	"testing"
)

func TestConvertUnits(t *testing.T) {
	const tol = 1e-12 // relative; every factor here is exact or one rounding
	cases := []struct {
		from, to string
		in, want float64
		source   string
	}{
		{"hPa", "Pa", 850, 85000, "SI prefix hecto = 100"},
		{"Pa", "hPa", 101325, 1013.25, "SI prefix hecto = 100"},
		{"mbar", "Pa", 500, 50000, "1 mbar = 1 hPa (SI brochure, bar = 1e5 Pa)"},
		{"mb", "hPa", 300, 300, "mb is the meteorological spelling of mbar"},
		{"millibar", "Pa", 1, 100, "1 mbar = 100 Pa"},
		{"K", "degC", 273.15, 0, "SI: 0 degC = 273.15 K"},
		{"degC", "K", 25, 298.15, "SI: t/degC = T/K - 273.15"},
		{"deg_C", "K", -40, 233.15, "UDUNITS alias of degC"},
		{"celsius", "degC", 12.5, 12.5, "same unit"},
		{"kg m-2", "mm", 20, 20, "reference-values.md: 1 kg m-2 = 1 mm of water"},
		{"mm", "kg m-2", 71.38013, 71.38013, "reference-values.md: 1 kg m-2 = 1 mm"},
		{"kg/m2", "cm", 20, 2, "reference-values.md: 2 cm = 20 kg m-2"},
		{"kg m-2 s-1", "mm/day", 1, 86400, "water flux: 1 kg m-2 s-1 = 86400 mm per day"},
		{"m s-1", "m/s", 12, 12, "same unit, two spellings"},
		{"m s**-1", "km h-1", 10, 36, "1 m/s = 3.6 km/h (definition)"},
		{"m.s-1", "m s^-1", 3, 3, "UDUNITS product and power syntax"},
		{"kg kg-1", "1", 0.01, 0.01, "mass ratio is dimensionless"},
		{"g kg-1", "kg kg-1", 10, 0.01, "1 g = 1e-3 kg"},
		{"1", "%", 0.5, 50, "percent = 0.01"},
		{"s-1", "1/s", 3.5e-5, 3.5e-5, "same unit"},
		{"s**-1", "h-1", 1, 3600, "1 per second = 3600 per hour"},
		{"kg m-1 s-1", "kg/m/s", 250, 250, "IVT units, two spellings"},
		{"", "1", 7, 7, "empty units are dimensionless (CF 3.1)"},
		{"Pa", "kg m-1 s-2", 1, 1, "Pa = N m-2 = kg m-1 s-2"},
	}
	for _, c := range cases {
		xs := []float64{c.in, math.NaN()}
		if err := ConvertUnits(xs, c.from, c.to, "x"); err != nil {
			t.Errorf("%q -> %q: %v", c.from, c.to, err)
			continue
		}
		if math.Abs(xs[0]-c.want) > tol*math.Max(1, math.Abs(c.want)) || !math.IsNaN(xs[1]) {
			t.Errorf("%v %q -> %v %q, want %v (%s)", c.in, c.from, xs[0], c.to, c.want, c.source)
		}
	}
	for _, c := range [][2]string{
		{"K", "m s-1"},       // different dimensions
		{"degC", "K m-1"},    // offset unit in a product
		{"Pa", "kg m-2"},     // pressure is not water mass
		{"furlongs", "m"},    // unknown
		{"kg m-2", "kg m-3"}, // not the water equivalence
	} {
		err := ConvertUnits([]float64{1}, c[0], c[1], "tas")
		if err == nil {
			t.Errorf("%q -> %q accepted", c[0], c[1])
			continue
		}
		if !strings.Contains(err.Error(), `"tas"`) || !strings.Contains(err.Error(), c[0]) {
			t.Errorf("error %q should name the variable and the units", err)
		}
	}
	c, _ := NewConverter("degC", "K")
	x := []float32{-273.15}
	c.Apply32(x)
	if math.Abs(float64(x[0])) > 1e-4 { // float32 rounding of 273.15
		t.Errorf("Apply32: %v", x[0])
	}
}
