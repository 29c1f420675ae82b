package catalog

import "math"

// KnotInMS is one international knot in m/s: 1 kt = 1852 m per hour,
// exactly (NHC 2012 statement uses knots; the conversion is by definition).
const KnotInMS = 1852.0 / 3600.0

// Lower bounds in knots of the Saffir-Simpson Hurricane Wind Scale
// categories 1 to 5, 1-minute sustained wind, from the NWS/NHC public
// information statement of 1 March 2012 (effective 15 May 2012). Intervals
// are half-open: category 1 is [64, 83) kt, and so on, category 5 >= 137 kt.
var saffirSimpsonKnots = [5]float64{64, 83, 96, 113, 137}

// Tropical storm lower bound in knots (NWS): a tropical storm has
// 34-63 kt, a tropical depression <= 33 kt.
const tropicalStormKnots = 34.0

// SaffirSimpson returns the category (1-5) of a maximum sustained wind in
// m/s, or 0 below hurricane strength. NaN gives 0.
//
// Caution: the scale is defined on 1-minute sustained winds observed at
// 10 m. Winds from a coarse-grid climate model are grid-box and time-step
// means that understate the peak wind of a real storm; a category from
// model output is a label for comparing model runs, not a statement about
// the damage a real storm would do.
func SaffirSimpson(windMS float64) int {
	cat := 0
	for i, kt := range saffirSimpsonKnots {
		// kt*1852 is exact and the division rounds once, so the bound is
		// the correctly rounded m/s value of the knot threshold: a wind
		// given as exactly 83 kt converted the same way is category 2.
		if windMS >= kt*1852/3600 {
			cat = i + 1
		}
	}
	return cat
}

// StormStage names the strength of a maximum sustained wind in m/s on the
// NWS scale: "tropical_depression" (< 34 kt), "tropical_storm" (34-63 kt)
// or "hurricane" (>= 64 kt); "" for NaN.
func StormStage(windMS float64) string {
	switch {
	case math.IsNaN(windMS):
		return ""
	case windMS >= saffirSimpsonKnots[0]*1852/3600:
		return "hurricane"
	case windMS >= tropicalStormKnots*1852/3600:
		return "tropical_storm"
	}
	return "tropical_depression"
}
