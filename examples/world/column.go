package world

import "math"

// column gathers the 2-D quantities of one grid point at one time; the
// profile at any pressure follows from them.
type column struct {
	lat, lon   float64
	row        *rowTable
	slp, ps    float64
	eu, ev     float64 // eddy wind at the ground, m/s
	tn, qn     float64 // temperature (K) and relative moisture perturbations
	tcTe, tcTn float64 // sum of tangential cyclone wind (gradient level)
	tcRe, tcRn float64 // sum of inward radial components
	tcWarm     float64 // warm-core amplitude at 300 hPa, K
	tcMoist    float64 // fractional moistening
	arW        float64 // sum of plume weights, at most 1
	arQ, arT   float64 // plume moisture (kg/kg) and warmth (K) at the core
	arU, arV   float64 // plume jet, m/s
}

// FixedLevels are the pressures (Pa) at which the background is tabulated
// per latitude: the written pressure levels and the layers IWV is
// integrated over (every 25-50 hPa from 1000 to 100 hPa).
var FixedLevels = []float64{100000, 97500, 95000, 92500, 90000, 85000, 80000, 75000, 70000, 65000, 60000, 55000, 50000, 45000, 40000, 35000, 30000, 25000, 20000, 15000, 10000}

// levelShape holds the dimensionless vertical structures at one pressure.
type levelShape struct {
	p, lnp float64
	warm   float64 // cyclone warm core
	rwarm  float64 // plume warmth
	cmoist float64 // cyclone moistening
	rmoist float64 // plume moisture
	eddy   float64 // eddy winds
	cwind  float64 // cyclone winds
	ca, sa float64 // cos, sin of the cyclone inflow angle
	rwind  float64 // plume jet
}

func newLevelShape(p float64) levelShape {
	lnp := math.Log(p)
	a := cycloneInflow.at(lnp) * deg
	return levelShape{p: p, lnp: lnp,
		warm: cycloneWarmShape(lnp), rwarm: riverWarmShape.at(lnp),
		cmoist: cycloneMoistShape.at(lnp), rmoist: riverMoistureShape.at(lnp),
		eddy: eddyShape.at(lnp), cwind: cycloneWindShape.at(lnp),
		ca: math.Cos(a), sa: math.Sin(a), rwind: riverWindShape.at(lnp)}
}

// background is the zonal-mean state at one latitude and pressure.
type background struct {
	t  float64 // temperature, K
	qs float64 // saturation specific humidity at t
	q  float64 // specific humidity
	u  float64 // zonal wind
}

func newBackground(lat, p, warming float64) background {
	t := backgroundTemperature(lat, p, warming)
	qs := saturationHumidity(t, p)
	return background{t: t, qs: qs, q: relativeHumidity(lat, p) * qs, u: backgroundWind(lat, p)}
}

// rowTable is the background of one latitude at FixedLevels.
type rowTable struct {
	bg []background
}

var fixedShapes = func() []levelShape {
	var s []levelShape
	for _, p := range FixedLevels {
		s = append(s, newLevelShape(p))
	}
	return s
}()

// fixedIndex returns the index of p in FixedLevels, or -1.
func fixedIndex(p float64) int {
	for i, q := range FixedLevels {
		if q == p {
			return i
		}
	}
	return -1
}

func newRowTable(lat, warming float64) *rowTable {
	r := &rowTable{}
	for _, p := range FixedLevels {
		r.bg = append(r.bg, newBackground(lat, p, warming))
	}
	return r
}

// at evaluates the profile at any pressure p (Pa).
func (c *column) at(p, warming float64) (t, q, u, v float64) {
	return c.eval(newBackground(c.lat, p, warming), newLevelShape(p))
}

// atFixed evaluates the profile at FixedLevels[l].
func (c *column) atFixed(l int) (t, q, u, v float64) {
	return c.eval(c.row.bg[l], fixedShapes[l])
}

func (c *column) eval(b background, s levelShape) (t, q, u, v float64) {
	t = b.t + c.tn + c.tcWarm*s.warm + c.arT*s.rwarm
	// Inside a plume its own air replaces the random moisture and winds.
	qn := 1 + c.qn*(1-c.arW)
	if qn < 0.3 {
		qn = 0.3
	}
	q = b.q*qn*(1+c.tcMoist*s.cmoist) + c.arQ*s.rmoist
	// Cap at 97 % of saturation. qsat(t) >= qsat(tb) (1 - k (tb - t)) for
	// t < tb, with k an upper bound of d ln qsat/dT on [t, tb] (Bolton's
	// formula, 10 % margin for the pressure term), so the exact value is
	// needed only when q comes near the cap.
	lower := b.qs
	if t < b.t {
		k := 1.1 * 17.67 * 243.5 / ((t - 29.65) * (t - 29.65))
		lower *= 1 - k*(b.t-t)
	}
	if q > 0.97*lower {
		if qs := 0.97 * saturationHumidity(t, s.p); q > qs {
			q = qs
		}
	}
	keep := 1 - 0.8*c.arW*s.rwind
	u = keep*(b.u+s.eddy*c.eu) + s.cwind*(s.ca*c.tcTe+s.sa*c.tcRe) + s.rwind*c.arU
	v = keep*s.eddy*c.ev + s.cwind*(s.ca*c.tcTn+s.sa*c.tcRn) + s.rwind*c.arV
	return t, q, u, v
}
