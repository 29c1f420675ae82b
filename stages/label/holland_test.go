package label

import (
	"math"
	"testing"

	"github.com/squall-climate/squall/stages/grid"
)

// holland is a Holland (1980, Mon. Wea. Rev. 108) vortex, the planted
// storm of these tests.
type holland struct {
	lat, lon float64 // centre, degrees
	pc, dp   float64 // central pressure and pressure deficit, Pa
	rmax     float64 // radius of maximum wind, m
	b        float64 // shape parameter
	rho      float64 // air density, kg m-3
}

// pressure is p(r) = pc + dp exp(-(Rmax/r)^B).
func (h holland) pressure(r float64) float64 {
	if r == 0 {
		return h.pc
	}
	return h.pc + h.dp*math.Exp(-math.Pow(h.rmax/r, h.b))
}

// coriolis is f = 2 Omega sin(lat) at the centre, absolute value.
func (h holland) coriolis() float64 {
	return math.Abs(2 * 7.292115e-5 * math.Sin(h.lat*math.Pi/180))
}

// wind is the gradient wind
// Vg(r) = sqrt(B dp/rho (Rmax/r)^B exp(-(Rmax/r)^B) + (r f/2)^2) - r f/2.
func (h holland) wind(r float64) float64 {
	if r == 0 {
		return 0
	}
	f := h.coriolis()
	x := math.Pow(h.rmax/r, h.b)
	return math.Sqrt(h.b*h.dp/h.rho*x*math.Exp(-x)+(r*f/2)*(r*f/2)) - r*f/2
}

// vorticity is zeta = (1/r) d(r V)/dr by a centred difference, signed
// cyclonic for the hemisphere (positive north, negative south).
func (h holland) vorticity(r float64) float64 {
	const dr = 100.0
	if r < dr {
		r = dr
	}
	z := ((r+dr)*h.wind(r+dr) - (r-dr)*h.wind(r-dr)) / (2 * dr) / r
	if h.lat < 0 {
		return -z
	}
	return z
}

// radiusOfWind is the outer radius where Vg falls to v (bisection outside
// Rmax), or 0 if the peak is below v.
func (h holland) radiusOfWind(v float64) float64 {
	lo, hi := h.rmax, 3000e3
	if h.wind(lo) < v {
		return 0
	}
	for range 200 {
		mid := (lo + hi) / 2
		if h.wind(mid) >= v {
			lo = mid
		} else {
			hi = mid
		}
	}
	return lo
}

// TestHollandFormula checks the test's own vortex against the derived
// values in reference-values.md, so that the planted storms are the
// published profile.
func TestHollandFormula(t *testing.T) {
	// Derived check: pn 1010 hPa, pc 950 hPa, Rmax 40 km, B 1.5, rho 1.15,
	// f 5e-5 s-1 (reference-values.md, "Tropical cyclones").
	lat := math.Asin(5e-5/(2*7.292115e-5)) * 180 / math.Pi
	h := holland{lat: lat, pc: 95000, dp: 6000, rmax: 40e3, b: 1.5, rho: 1.15}
	const tolP, tolV = 1e-3, 1e-5
	if got := h.pressure(40e3); math.Abs(got-97207.2766) > tolP {
		t.Errorf("p(Rmax) = %.4f, want 97207.2766 (derived)", got)
	}
	if got := h.wind(40e3); math.Abs(got-52.666158) > tolV {
		t.Errorf("Vg(Rmax) = %.6f, want 52.666158 (derived)", got)
	}
	if got := h.pressure(100e3); math.Abs(got-99658.890) > tolP {
		t.Errorf("p(100 km) = %.3f, want 99658.890 (derived)", got)
	}
	if got := h.wind(100e3); math.Abs(got-36.788365) > tolV {
		t.Errorf("Vg(100 km) = %.6f, want 36.788365 (derived)", got)
	}
}

// world is a small synthetic set of fields on g holding planted storms on
// a quiet background.
type world struct {
	g     *grid.Grid
	storm []holland
}

// step builds a TCStep for the planted storms: SLP, 10 m wind = Vg,
// 850 hPa vorticity, a warm core (Gaussian anomalies of e-folding radius
// warmR, amplitude 0.5, 1.5, 3, 6 K at 850, 700, 500, 300 hPa), and winds
// at 850 (0.9 Vg) and 300 hPa (0.3 Vg + 5 m s-1). The background is
// 101000 Pa, calm, 290/280/265/235 K. A negative warm factor makes the core
// cold.
func (w world) step(warm float64) *TCStep {
	n := w.g.Len()
	f := &TCStep{}
	mk := func(v float64) []float64 {
		s := make([]float64, n)
		for i := range s {
			s[i] = v
		}
		return s
	}
	f.SLP, f.Wind10, f.Vort850 = mk(101000), mk(0), mk(0)
	f.T850, f.T700, f.T500, f.T300 = mk(290), mk(280), mk(265), mk(235)
	f.Wind850, f.Wind300 = mk(0), mk(5)
	const warmR = 150e3
	for _, h := range w.storm {
		for k := range n {
			i, j := w.g.RowCol(k)
			r := grid.Distance(h.lat, h.lon, w.g.Lat[i], w.g.Lon[j])
			f.SLP[k] += h.pressure(r) - (h.pc + h.dp)
			v := h.wind(r)
			f.Wind10[k] = math.Max(f.Wind10[k], v)
			f.Vort850[k] += h.vorticity(r)
			a := warm * math.Exp(-(r/warmR)*(r/warmR))
			f.T850[k] += 0.5 * a
			f.T700[k] += 1.5 * a
			f.T500[k] += 3 * a
			f.T300[k] += 6 * a
			f.Wind850[k] = math.Max(f.Wind850[k], 0.9*v)
			f.Wind300[k] = math.Max(f.Wind300[k], 0.3*v+5)
		}
	}
	return f
}
