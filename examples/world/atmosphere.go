package world

import "math"

// Physical constants.
const (
	earthRadius = 6371008.7714 // m, GRS80 mean radius R1 (reference-values.md, confirmed)
	gravity     = 9.80665      // m s-2, standard gravity (3rd CGPM 1901, confirmed)
	omega       = 7.2921159e-5 // s-1, Earth's rotation rate (from memory)
	rDry        = 287.04       // J kg-1 K-1, gas constant of dry air (from memory)
	airDensity  = 1.15         // kg m-3, near-surface air in a cyclone (as in the Holland check case)
	p0          = 100000.0     // Pa, reference pressure
	deg         = math.Pi / 180
)

// PressureLevels are the levels of the "pressure" vertical mode, Pa, from
// the ground up.
var PressureLevels = []float64{100000, 92500, 85000, 70000, 50000, 30000, 20000}

// IVTLevels are the levels the truth integrates IVT over (1000-300 hPa, the
// AMS Glossary's surface-to-300 hPa layer taken from the 1000 hPa level).
var IVTLevels = []float64{100000, 92500, 85000, 70000, 50000, 30000}

// hybridRef are the pressures (Pa) of the hybrid model levels over a
// surface at p0; hybridTop is where the levels become pure pressure.
var hybridRef = []float64{99500, 98000, 96000, 93500, 90500, 87000, 83000, 78000, 72000, 65000, 57000, 48000, 39000, 30000, 22000, 15000}

const hybridTop = 0.18

// HybridCoefficients returns the a and b of the hybrid sigma-pressure
// levels (CF appendix D: p = a p0 + b ps, p0 = 1e5 Pa), from the ground up.
// b falls from ~1 near the ground to 0 at 180 hPa, so the lowest levels
// follow the terrain and the upper ones are pure pressure; the level
// pressures stay ordered and above the ground for any ps above 370 hPa.
func HybridCoefficients() (a, b []float64) {
	for _, pr := range hybridRef {
		eta := pr / p0
		bk := 0.0
		if eta > hybridTop {
			bk = math.Pow((eta-hybridTop)/(1-hybridTop), 1.3)
		}
		a = append(a, eta-bk)
		b = append(b, bk)
	}
	return a, b
}

// saturationHumidity is the saturation specific humidity (kg/kg) at
// temperature t (K) and pressure p (Pa), with the vapour pressure of
// Bolton (1980), Mon. Wea. Rev. 108 (formula from memory).
func saturationHumidity(t, p float64) float64 {
	e := 611.2 * math.Exp(17.67*(t-273.15)/(t-29.65))
	if e > 0.5*p {
		e = 0.5 * p
	}
	return 0.622 * e / (p - 0.378*e)
}

// surfaceTemperature of the background, K.
func surfaceTemperature(lat float64) float64 {
	s := math.Sin(lat * deg)
	return 302 - 28*s*s
}

// backgroundTemperature is the zonal-mean temperature: a 6.5 K/km-like
// lapse rate ((p/p0)^0.19) down to a tropopause floor, plus the scenario's
// warming, which grows aloft.
func backgroundTemperature(lat, p, warming float64) float64 {
	t := surfaceTemperature(lat) * math.Pow(p/p0, 0.19)
	s := math.Sin(lat * deg)
	if floor := 206 + 12*s*s; t < floor {
		t = floor
	}
	return t + warming*(1+0.8*clamp01(1-p/p0))
}

// relativeHumidity of the background: moist tropics and mid-latitudes, a
// drier subtropical belt, drying with height.
func relativeHumidity(lat, p float64) float64 {
	d := (lat - 27) / 8
	rh := 0.72 - 0.16*math.Exp(-d*d)
	return rh * math.Pow(p/p0, 1.7)
}

// backgroundWind is the zonal-mean zonal wind (m/s): a subtropical jet
// near 38N peaking at 220 hPa, surface westerlies under it and trade
// easterlies in the tropics.
func backgroundWind(lat, p float64) float64 {
	dj := (lat - 38) / 9
	lj := math.Log(p/22000) / 0.55
	jet := 32 * math.Exp(-dj*dj) * (0.15 + 0.85*math.Exp(-lj*lj))
	dt := (lat - 13) / 8
	trade := -4.5 * math.Exp(-dt*dt) * clamp01((p-40000)/60000)
	return jet + trade
}

// backgroundSLP is the time-mean sea-level pressure (Pa): a subtropical
// high near 32N strongest in the east of the basin, a subpolar low to the
// north and a weak equatorial trough.
func backgroundSLP(lat, lon float64) float64 {
	dh := (lat - 32) / 9
	dl := (lat - 60) / 10
	de := (lat - 7) / 6
	high := 900 * math.Exp(-dh*dh) * (0.7 + 0.3*math.Cos(2*math.Pi*(lon-110)/70))
	return 101000 + high - 1500*math.Exp(-dl*dl) - 300*math.Exp(-de*de)
}

// profile is a piecewise-linear function of ln p through anchor points
// ordered by decreasing pressure; constant beyond the ends.
type profile struct{ lnp, v []float64 }

func newProfile(pv ...float64) profile {
	var pr profile
	for i := 0; i < len(pv); i += 2 {
		pr.lnp = append(pr.lnp, math.Log(pv[i]))
		pr.v = append(pr.v, pv[i+1])
	}
	return pr
}

func (pr profile) at(lnp float64) float64 {
	n := len(pr.lnp)
	if lnp >= pr.lnp[0] {
		return pr.v[0]
	}
	if lnp <= pr.lnp[n-1] {
		return pr.v[n-1]
	}
	for k := 1; k < n; k++ {
		if lnp >= pr.lnp[k] {
			w := (lnp - pr.lnp[k]) / (pr.lnp[k-1] - pr.lnp[k])
			return pr.v[k] + w*(pr.v[k-1]-pr.v[k])
		}
	}
	return pr.v[n-1]
}

// Vertical structures of the planted and random parts (dimensionless).
var (
	// Cyclone tangential wind relative to the gradient level: strongest
	// near 850 hPa, decaying with height over the warm core (thermal wind).
	cycloneWindShape = newProfile(100000, 0.88, 92500, 0.97, 85000, 1, 70000, 0.88, 50000, 0.62, 30000, 0.28, 20000, 0.05, 10000, 0)
	// Cyclone inflow angle (deg): inflow near the ground, outflow aloft.
	cycloneInflow = newProfile(100000, 22, 92500, 18, 85000, 12, 70000, 5, 50000, 0, 30000, -10, 20000, -25)
	// Plume moisture anomaly: the lowest 200 hPa, fading by 450 hPa.
	riverMoistureShape = newProfile(100000, 1, 90000, 1, 70000, 0.55, 45000, 0, 10000, 0)
	// Plume wind: a low-level jet near 850 hPa.
	riverWindShape = newProfile(100000, 0.6, 92500, 0.9, 85000, 1, 70000, 0.8, 50000, 0.4, 30000, 0.15, 20000, 0)
	// Plume warmth: warm moist air in the lower troposphere.
	riverWarmShape = newProfile(100000, 1, 70000, 0.6, 50000, 0, 10000, 0)
	// Cyclone moistening of the core.
	cycloneMoistShape = newProfile(100000, 1, 70000, 1, 40000, 0.3, 20000, 0)
	// Eddy (noise) winds grow with height, equivalent-barotropic.
	eddyShape = newProfile(100000, 1, 50000, 1.6, 25000, 2.2, 10000, 1.6)
)

// cycloneWarmShape is the warm-core profile: a Gaussian in ln p centred at
// 300 hPa (1 there; 0.14 at 700, 0.49 at 500, 0.05 at 850 hPa).
func cycloneWarmShape(lnp float64) float64 {
	x := (lnp - math.Log(30000)) / 0.6
	return math.Exp(-x * x)
}

func clamp01(x float64) float64 { return math.Max(0, math.Min(1, x)) }
