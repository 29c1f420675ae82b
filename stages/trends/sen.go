package trends

import (
	"errors"
	"math"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"
)

// Sen is Sen's (1968) slope estimate with Gilbert's (1987, sec. 16.5)
// confidence interval.
type Sen struct {
	// Slope is the median over i<j with t_j != t_i of (x_j-x_i)/(t_j-t_i).
	Slope float64
	// Intercept = median(x) - Slope*median(t): the line's value at t = 0
	// (the convention of the USEPA Unified Guidance, Example 17-7).
	Intercept float64
	// Low and High bound the slope at confidence 1-alpha.
	Low, High float64
	// LowRank and HighRank are the 1-based (possibly fractional) ranks of
	// the bounds among the ordered pairwise slopes.
	LowRank, HighRank float64
	// Pairs is N', the number of pairwise slopes.
	Pairs int
}

// SenSlope estimates the slope of x against t. varS is the variance of the
// Mann-Kendall S used for the interval (tie-corrected, and inflated by a
// serial-correlation correction when one is in use); alpha is two-sided.
//
// Gilbert's interval: C = z_{1-alpha/2} sqrt(Var S), M1 = (N'-C)/2,
// M2 = (N'+C)/2; the lower limit is the M1-th and the upper the (M2+1)-th of
// the N' ordered slopes. Where M1 or M2+1 is not a whole number we
// interpolate linearly between the neighbouring ordered slopes, which is how
// the Guidance's published interval [0.3992083, 2.3333333] for Example 17-7
// comes about (recomputed; scipy.stats.theilslopes rounds the ranks instead).
// Cost: O(n^2 log n) time and O(n^2) memory.
func SenSlope(t, x []float64, varS, alpha float64) (Sen, error) {
	if len(t) != len(x) {
		return Sen{}, errors.New("times and values differ in length")
	}
	sl := pairwiseSlopes(t, x)
	if len(sl) == 0 {
		return Sen{}, ErrTooShort
	}
	sort.Float64s(sl)
	r := Sen{Pairs: len(sl), Slope: median(sl)}
	r.Intercept = median(append([]float64(nil), x...)) - r.Slope*median(append([]float64(nil), t...))
	c := distuv.UnitNormal.Quantile(1-alpha/2) * math.Sqrt(varS)
	np := float64(len(sl))
	r.LowRank = (np - c) / 2
	r.HighRank = (np+c)/2 + 1
	r.Low = orderStat(sl, r.LowRank)
	r.High = orderStat(sl, r.HighRank)
	return r, nil
}

// orderStat returns the rank-th (1-based, fractional allowed) element of
// sorted s by linear interpolation, clamped to the ends.
func orderStat(s []float64, rank float64) float64 {
	if math.IsNaN(rank) {
		return math.NaN()
	}
	if rank <= 1 {
		return s[0]
	}
	if rank >= float64(len(s)) {
		return s[len(s)-1]
	}
	lo := math.Floor(rank)
	i := int(lo) - 1
	f := rank - lo
	if f == 0 {
		return s[i]
	}
	return s[i] + f*(s[i+1]-s[i])
}

func pairwiseSlopes(t, x []float64) []float64 {
	n := len(x)
	out := make([]float64, 0, n*(n-1)/2)
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			dt := t[j] - t[i]
			if dt == 0 {
				continue
			}
			out = append(out, (x[j]-x[i])/dt)
		}
	}
	return out
}

func medianPairwiseSlope(t, x []float64) float64 {
	sl := pairwiseSlopes(t, x)
	if len(sl) == 0 {
		return 0
	}
	sort.Float64s(sl)
	return median(sl)
}

// median of s; sorts s in place.
func median(s []float64) float64 {
	if len(s) == 0 {
		return math.NaN()
	}
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}
