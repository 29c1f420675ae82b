package world

import "math"

// Holland is the axisymmetric tropical-cyclone profile of Holland (1980),
// Mon. Wea. Rev. 108, 1212-1218. Pressures in Pa, lengths in m, wind in
// m/s, density in kg m-3, Coriolis parameter in s-1.
type Holland struct {
	CentralPressure float64 // pc
	AmbientPressure float64 // pn, the environment far from the centre
	Rmax            float64 // radius of maximum (cyclostrophic) wind
	B               float64 // shape parameter, typically 1 to 2.5
	AirDensity      float64 // rho
	Coriolis        float64 // f = 2 Omega sin(latitude); use |f|
}

// Deficit is dp = pn - pc.
func (h Holland) Deficit() float64 { return h.AmbientPressure - h.CentralPressure }

// Pressure is p(r) = pc + dp exp(-(Rmax/r)^B).
func (h Holland) Pressure(r float64) float64 {
	if r <= 0 {
		return h.CentralPressure
	}
	return h.CentralPressure + h.Deficit()*math.Exp(-math.Pow(h.Rmax/r, h.B))
}

// cyclostrophicSquare is B dp/rho (Rmax/r)^B exp(-(Rmax/r)^B).
func (h Holland) cyclostrophicSquare(r float64) float64 {
	if r <= 0 {
		return 0
	}
	x := math.Pow(h.Rmax/r, h.B)
	return h.B * h.Deficit() / h.AirDensity * x * math.Exp(-x)
}

// CyclostrophicWind is Vc(r) = sqrt(B dp/rho (Rmax/r)^B exp(-(Rmax/r)^B)),
// the gradient wind without the Coriolis term. It peaks exactly at
// r = Rmax, where (Rmax/r)^B = 1 and Vc = sqrt(B dp/(rho e)).
func (h Holland) CyclostrophicWind(r float64) float64 {
	return math.Sqrt(h.cyclostrophicSquare(r))
}

// GradientWind is Vg(r) = sqrt(B dp/rho (Rmax/r)^B exp(-(Rmax/r)^B) +
// (r f/2)^2) - r f/2. The Coriolis term moves its maximum slightly inside
// Rmax.
func (h Holland) GradientWind(r float64) float64 {
	if r <= 0 {
		return 0
	}
	rf := r * math.Abs(h.Coriolis) / 2
	return math.Sqrt(h.cyclostrophicSquare(r)+rf*rf) - rf
}

// MaxGradientWind finds the radius and speed of the gradient-wind maximum
// by golden-section search on (0.3 Rmax, 1.5 Rmax); the profile has a
// single maximum there for the B and f of real storms.
func (h Holland) MaxGradientWind() (r, v float64) {
	a, b := 0.3*h.Rmax, 1.5*h.Rmax
	g := (math.Sqrt(5) - 1) / 2
	c, d := b-g*(b-a), a+g*(b-a)
	fc, fd := h.GradientWind(c), h.GradientWind(d)
	for i := 0; i < 200 && b-a > 1e-9*h.Rmax; i++ {
		if fc > fd {
			b, d, fd = d, c, fc
			c = b - g*(b-a)
			fc = h.GradientWind(c)
		} else {
			a, c, fc = c, d, fd
			d = a + g*(b-a)
			fd = h.GradientWind(d)
		}
	}
	r = (a + b) / 2
	return r, h.GradientWind(r)
}

// RadiusOfGradientWind returns the outer radius (beyond the maximum) where
// the gradient wind falls to v, by bisection, searching out to limit. It
// returns 0 when the maximum is below v and limit when the wind is still
// above v there.
func (h Holland) RadiusOfGradientWind(v, limit float64) float64 {
	rm, vm := h.MaxGradientWind()
	if vm < v {
		return 0
	}
	if rm >= limit {
		return limit
	}
	if h.GradientWind(limit) >= v {
		return limit
	}
	lo, hi := rm, limit
	for i := 0; i < 100 && hi-lo > 1; i++ {
		mid := (lo + hi) / 2
		if h.GradientWind(mid) >= v {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}
