package trends

import (
	"errors"
	"math"
	"math/rand/v2"
	"sort"
)

// RankSum is the Mann-Whitney U (Wilcoxon rank-sum) test of two samples.
type RankSum struct {
	// U is U1 = R1 - n1(n1+1)/2 for the first sample.
	U float64
	// P is the two-sided p-value.
	P float64
	// Exact reports whether P comes from the exact null distribution
	// (small samples without ties) rather than the normal approximation.
	Exact bool
}

// MannWhitney tests whether a and b come from the same distribution. The
// method follows the usual rule (and scipy.stats.mannwhitneyu's default):
// the exact distribution of U when either sample has at most 8 values and
// there are no ties; otherwise the normal approximation with the tie
// correction sigma^2 = n1 n2/12 [(n+1) - sum(t^3-t)/(n(n-1))] and a
// continuity correction of 1/2. Two-sided: p = 2 P(U' >= max(U1, U2)),
// capped at 1.
func MannWhitney(a, b []float64) (RankSum, error) {
	return mannWhitney(a, b, false)
}

// mannWhitney is MannWhitney with the option to force the normal
// approximation (for checks against the reference library).
func mannWhitney(a, b []float64, forceNormal bool) (RankSum, error) {
	n1, n2 := len(a), len(b)
	if n1 == 0 || n2 == 0 {
		return RankSum{}, ErrTooShort
	}
	all := append(append([]float64(nil), a...), b...)
	rk := Ranks(all)
	var r1 float64
	for i := 0; i < n1; i++ {
		r1 += rk[i]
	}
	f1, f2 := float64(n1), float64(n2)
	u1 := r1 - f1*(f1+1)/2
	u := math.Max(u1, f1*f2-u1)
	ties := tieGroups(all)
	res := RankSum{U: u1}
	if !forceNormal && (n1 <= 8 || n2 <= 8) && len(ties) == 0 {
		res.Exact = true
		res.P = math.Min(1, 2*exactUSurvival(int(math.Round(u)), n1, n2))
		return res, nil
	}
	n := f1 + f2
	var tt float64
	for _, t := range ties {
		tf := float64(t)
		tt += tf*tf*tf - tf
	}
	sd := math.Sqrt(f1 * f2 / 12 * ((n + 1) - tt/(n*(n-1))))
	if sd == 0 {
		res.P = 1
		return res, nil
	}
	z := (u - f1*f2/2 - 0.5) / sd
	res.P = math.Min(1, math.Erfc(z/math.Sqrt2))
	return res, nil
}

// exactUSurvival returns P(U >= u) under the null for sample sizes m, n.
// The counts of U are the coefficients of the Gaussian binomial
// coefficient [m+n choose m]_q = prod_{i=1}^{m} (1-q^{n+i})/(1-q^i); float64
// holds them exactly while C(m+n, m) < 2^53, which the m <= 8 rule keeps
// for n up to several hundred.
func exactUSurvival(u, m, n int) float64 {
	if m > n {
		m, n = n, m
	}
	maxU := m * n
	c := make([]float64, maxU+1)
	c[0] = 1
	for i := 1; i <= m; i++ {
		// multiply by (1 - q^{n+i})
		k := n + i
		for j := maxU; j >= k; j-- {
			c[j] -= c[j-k]
		}
		// divide by (1 - q^i): running sums with stride i
		for j := i; j <= maxU; j++ {
			c[j] += c[j-i]
		}
	}
	var total, tail float64
	for j, v := range c {
		total += v
		if j >= u {
			tail += v
		}
	}
	return tail / total
}

// Contrast compares the means of two samples (years of a scenario against
// years of the baseline scenario).
type Contrast struct {
	MeanA, MeanB float64 // A = baseline, B = the scenario compared
	// Diff = MeanB - MeanA with a percentile bootstrap interval.
	Diff, DiffLow, DiffHigh float64
	// Ratio = MeanB / MeanA (NaN when MeanA is 0) with its interval from
	// the resamples whose baseline mean is not 0.
	Ratio, RatioLow, RatioHigh float64
	Resamples                  int
}

// BootstrapMeans resamples a and b independently with replacement
// (resamples times, from a PCG generator seeded with seed) and returns
// percentile intervals at confidence 1-alpha (quantiles interpolated
// linearly, the "type 7" rule). Same inputs and seed give the same numbers.
func BootstrapMeans(a, b []float64, resamples int, seed uint64, alpha float64) (Contrast, error) {
	if len(a) == 0 || len(b) == 0 {
		return Contrast{}, ErrTooShort
	}
	if resamples < 1 {
		return Contrast{}, errors.New("bootstrap needs at least one resample")
	}
	c := Contrast{MeanA: mean(a), MeanB: mean(b), Resamples: resamples}
	c.Diff = c.MeanB - c.MeanA
	c.Ratio = math.NaN()
	if c.MeanA != 0 {
		c.Ratio = c.MeanB / c.MeanA
	}
	rng := rand.New(rand.NewPCG(seed, 0x5eed0f5e9a11))
	diffs := make([]float64, 0, resamples)
	ratios := make([]float64, 0, resamples)
	for k := 0; k < resamples; k++ {
		ma := resampleMean(rng, a)
		mb := resampleMean(rng, b)
		diffs = append(diffs, mb-ma)
		if ma != 0 {
			ratios = append(ratios, mb/ma)
		}
	}
	sort.Float64s(diffs)
	c.DiffLow, c.DiffHigh = quantile7(diffs, alpha/2), quantile7(diffs, 1-alpha/2)
	c.RatioLow, c.RatioHigh = math.NaN(), math.NaN()
	if len(ratios) > 0 && !math.IsNaN(c.Ratio) {
		sort.Float64s(ratios)
		c.RatioLow, c.RatioHigh = quantile7(ratios, alpha/2), quantile7(ratios, 1-alpha/2)
	}
	return c, nil
}

func resampleMean(rng *rand.Rand, x []float64) float64 {
	var s float64
	for range x {
		s += x[rng.IntN(len(x))]
	}
	return s / float64(len(x))
}

// quantile7 is the sample quantile with linear interpolation between order
// statistics at h = (n-1)p (Hyndman & Fan 1996 type 7; numpy's default).
func quantile7(sorted []float64, p float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	h := float64(n-1) * p
	lo := math.Floor(h)
	i := int(lo)
	if i >= n-1 {
		return sorted[n-1]
	}
	return sorted[i] + (h-lo)*(sorted[i+1]-sorted[i])
}
