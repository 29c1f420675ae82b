package world

import (
	"math"
	"testing"
)

// checkStorm is the derived check case of reference-values.md: pn 1010 hPa,
// pc 950 hPa, Rmax 40 km, B 1.5, rho 1.15 kg m-3, f 5e-5 s-1.
var checkStorm = Holland{
	CentralPressure: 95000,
	AmbientPressure: 101000,
	Rmax:            40000,
	B:               1.5,
	AirDensity:      1.15,
	Coriolis:        5e-5,
}

const (
	windTol     = 1e-6 // m/s; the check values carry 6 decimals
	pressureTol = 1e-3 // Pa; the check values carry 3-4 decimals
	radiusTol   = 1.0  // m; the check radius is given to the metre (~39.372 km)
)

func TestHollandCheckValues(t *testing.T) {
	h := checkStorm
	cases := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		// All values: derived from Holland (1980), reference-values.md.
		{"Vc(Rmax)", h.CyclostrophicWind(h.Rmax), 53.656840, windTol},
		{"p(Rmax)", h.Pressure(h.Rmax), 97207.2766, pressureTol},
		{"Vg(Rmax)", h.GradientWind(h.Rmax), 52.666158, windTol},
		{"p(100 km)", h.Pressure(100e3), 99658.890, pressureTol},
		{"Vg(100 km)", h.GradientWind(100e3), 36.788365, windTol},
	}
	for _, c := range cases {
		if math.Abs(c.got-c.want) > c.tol {
			t.Errorf("%s = %.7f, want %.7f (derived from Holland 1980)", c.name, c.got, c.want)
		}
	}
	r, v := h.MaxGradientWind()
	// Derived from Holland (1980), reference-values.md: Vg max 52.673951 m/s at r ~ 39.372 km.
	if math.Abs(v-52.673951) > windTol {
		t.Errorf("Vg max = %.7f, want 52.673951", v)
	}
	if math.Abs(r-39372) > radiusTol {
		t.Errorf("Vg max at r = %.3f m, want ~39372 (derived from Holland 1980)", r)
	}
}

// The cyclostrophic wind peaks exactly at Rmax (derived: d/dr of
// x e^-x with x = (Rmax/r)^B vanishes at x = 1), and p(Rmax) = pc + dp/e.
func TestHollandCyclostrophicPeakAtRmax(t *testing.T) {
	for _, b := range []float64{1, 1.5, 2, 2.5} { // B range 1-2.5: from memory
		h := checkStorm
		h.B = b
		vm := h.CyclostrophicWind(h.Rmax)
		for _, f := range []float64{0.9, 0.99, 0.999, 1.001, 1.01, 1.1} {
			if v := h.CyclostrophicWind(f * h.Rmax); v >= vm {
				t.Errorf("B=%g: Vc(%g Rmax) = %g >= Vc(Rmax) = %g", b, f, v, vm)
			}
		}
		want := math.Sqrt(b * h.Deficit() / (h.AirDensity * math.E))
		if math.Abs(vm-want) > 1e-9 {
			t.Errorf("B=%g: Vc(Rmax) = %g, want sqrt(B dp/(rho e)) = %g", b, vm, want)
		}
		if p, want := h.Pressure(h.Rmax), h.CentralPressure+h.Deficit()/math.E; math.Abs(p-want) > 1e-6 {
			t.Errorf("B=%g: p(Rmax) = %g, want pc + dp/e = %g", b, p, want)
		}
	}
}

func TestHollandRadiusOfWind(t *testing.T) {
	h := checkStorm
	r := h.RadiusOfGradientWind(36.788365, 1000e3) // Vg(100 km), derived from Holland (1980)
	if math.Abs(r-100e3) > 5 {
		t.Errorf("radius of 36.788365 m/s = %.1f m, want 100 km", r)
	}
	if r := h.RadiusOfGradientWind(60, 1000e3); r != 0 {
		t.Errorf("radius of a wind above the maximum = %g, want 0", r)
	}
}
