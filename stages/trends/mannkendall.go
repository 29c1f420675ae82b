package trends

import (
	"errors"
	"math"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"
)

// Serial-correlation corrections for the Mann-Kendall test (setting
// serial_correction).
const (
	CorrectionNone = "none"
	// CorrectionHamedRao is the variance correction of Hamed & Rao (1998),
	// J. Hydrology 204, 182-196: Var*(S) = Var(S) * n/n*, with
	// n/n* = 1 + 2/(n(n-1)(n-2)) sum_{k=1}^{n-1} (n-k)(n-k-1)(n-k-2) rho_k,
	// where rho_k is the lag-k autocorrelation of the ranks of the series
	// after removing its Sen slope, and only lags whose rho_k is significant
	// at the test level (|rho_k| > z_{1-alpha/2}/sqrt(n)) are summed.
	CorrectionHamedRao = "hamed-rao-1998"
)

// MannKendall is the result of the Mann-Kendall trend test on one series.
type MannKendall struct {
	N int
	// S = sum_{i<j} sgn(x_j - x_i).
	S float64
	// VarS = [n(n-1)(2n+5) - sum_t t(t-1)(2t+5)]/18, the variance of S under
	// no trend with the tie correction (Gilbert 1987, eq. 16.4).
	VarS float64
	// VarSUsed is VarS times the serial-correlation factor (equal to VarS
	// without a correction).
	VarSUsed float64
	// Factor is n/n*, the variance inflation of the correction (1 without).
	Factor float64
	// Tau is Kendall's tau-a = S / (n(n-1)/2) (Gilbert's convention, which
	// the USEPA Unified Guidance reports).
	Tau float64
	// TauB is Kendall's tau-b = S / sqrt(n0 (n0 - sum t(t-1)/2)), n0 =
	// n(n-1)/2, what scipy.stats.kendalltau reports for distinct times.
	TauB float64
	// Z is the continuity-corrected statistic: (S-1)/sd if S>0, 0 if S=0,
	// (S+1)/sd if S<0.
	Z float64
	// P is the two-sided p-value: erfc(|Z|/sqrt 2) when PMethod is
	// PMethodNormal, P(|S| >= |s|) under the exact permutation
	// distribution of S when it is PMethodExact.
	P float64
	// PMethod says which of the two produced P.
	PMethod    string
	Correction string
}

// Methods of the Mann-Kendall p-value (MannKendall.PMethod, column
// p_method of trends.csv).
const (
	PMethodExact  = "exact"
	PMethodNormal = "normal"
)

// MaxExactN is the largest series length for which the exact distribution
// of S can be used: the permutation counts (Mahonian numbers) and their
// partial sums are at most n!, and 18! = 6402373705728000 is below
// 2^53 = 9007199254740992 (19! is not), so each count is an exact integer
// in uint64 and in float64 and the p-value count/n! is a correctly rounded
// quotient of two exact integers.
const MaxExactN = 18

// DefaultExactMaxN is the default cut-off of the exact p-value (setting
// mk_exact_max_n): the exact distribution is used for n <= 10 untied
// values. Gilbert (1987, ch. 16 and table A18; from memory) tabulates the
// exact probabilities up to n = 10 and uses the normal approximation with
// continuity correction beyond; the approximation is rough below that
// (for n = 6 the smallest attainable two-sided p is 2/720 = 0.0028, the
// approximation gives about 0.0085 for S = 15, derived).
const DefaultExactMaxN = 10

// ErrTooShort is returned when a series is too short for a statistic.
var ErrTooShort = errors.New("series too short")

// MannKendallTest runs the Mann-Kendall test on x (in time order, equally
// spaced or not: only the order matters) with the normal approximation of
// S for every n, as the USEPA Unified Guidance and Gilbert (1987) do for
// n >= 10. correction is CorrectionNone or CorrectionHamedRao; alpha is the
// level at which the Hamed-Rao lags are judged significant (0.05 in the
// paper). Cost O(n^2) for S, O(n^2) for the correction.
func MannKendallTest(x []float64, correction string, alpha float64) (MannKendall, error) {
	return MannKendallExactUpTo(x, correction, alpha, 0)
}

// MannKendallExactUpTo is MannKendallTest with the exact p-value for short
// series: when n <= exactMaxN (at most MaxExactN), no two values are tied
// and no serial correction is asked for, P is the two-sided
// P(|S| >= |s|) under the exact null distribution of S (every ordering of
// the values equally likely; see ExactKendallP), and PMethod is
// PMethodExact. Otherwise (ties, longer series, exactMaxN <= 0, or the
// Hamed-Rao correction, whose inflated variance has no permutation
// counterpart) P comes from the normal approximation with the tie-corrected
// variance and continuity correction, as in MannKendallTest. S, VarS, Tau
// and Z are the same either way; Z stays the normal statistic.
func MannKendallExactUpTo(x []float64, correction string, alpha float64, exactMaxN int) (MannKendall, error) {
	n := len(x)
	r := MannKendall{N: n, Correction: correction, Factor: 1, PMethod: PMethodNormal}
	if n < 3 {
		return r, ErrTooShort
	}
	for i := 0; i < n; i++ {
		if math.IsNaN(x[i]) {
			return r, errors.New("series holds NaN")
		}
	}
	r.S = kendallS(x)
	nf := float64(n)
	ties := tieGroups(x)
	var tieTerm, tiePairs float64
	for _, t := range ties {
		tf := float64(t)
		tieTerm += tf * (tf - 1) * (2*tf + 5)
		tiePairs += tf * (tf - 1) / 2
	}
	r.VarS = (nf*(nf-1)*(2*nf+5) - tieTerm) / 18
	n0 := nf * (nf - 1) / 2
	r.Tau = r.S / n0
	if d := n0 * (n0 - tiePairs); d > 0 {
		r.TauB = r.S / math.Sqrt(d)
	}
	switch correction {
	case CorrectionNone, "":
		r.Correction = CorrectionNone
	case CorrectionHamedRao:
		f, err := hamedRaoFactor(x, alpha)
		if err != nil {
			return r, err
		}
		r.Factor = f
	default:
		return r, errors.New("unknown serial correction " + correction)
	}
	r.VarSUsed = r.VarS * r.Factor
	switch {
	case r.VarSUsed <= 0:
		// Every value tied: no evidence either way.
		r.Z, r.P = 0, 1
	case r.S > 0:
		r.Z = (r.S - 1) / math.Sqrt(r.VarSUsed)
	case r.S < 0:
		r.Z = (r.S + 1) / math.Sqrt(r.VarSUsed)
	}
	if r.VarSUsed > 0 {
		r.P = math.Erfc(math.Abs(r.Z) / math.Sqrt2)
	}
	if n <= exactMaxN && n <= MaxExactN && len(ties) == 0 && r.Correction == CorrectionNone {
		r.P = ExactKendallP(n, int(r.S))
		r.PMethod = PMethodExact
	}
	return r, nil
}

// mahonian returns M(n, k), k = 0..n(n-1)/2: the number of permutations of
// n items with k inversions, by the recurrence M(m, k) = sum_{j=0}^{min(k,
// m-1)} M(m-1, k-j) (the m-th item put in one of m places adds j
// inversions). Exact in uint64 for n <= 20 (sum = n!).
func mahonian(n int) []uint64 {
	row := []uint64{1} // M(1, 0) = 1 (and M(0, 0))
	for m := 2; m <= n; m++ {
		next := make([]uint64, len(row)+m-1)
		for k := range next {
			for j := 0; j < m && j <= k; j++ {
				if k-j < len(row) {
					next[k] += row[k-j]
				}
			}
		}
		row = next
	}
	return row
}

// ExactKendallP is the two-sided p-value P(|S| >= |s|) of the
// Mann-Kendall S for n untied values under no trend (every ordering
// equally likely). With N = n(n-1)/2 pairs and Q discordant pairs
// (inversions of the ranks in time order), S = N - 2Q, and Q has the
// Mahonian distribution M(n, Q)/n!. This is also the exact null
// distribution of Kendall's tau between the values and the (distinct)
// times, which scipy.stats.kendalltau(method="exact") uses. n must be in
// 1..MaxExactN; s must have the parity of N (else NaN).
func ExactKendallP(n, s int) float64 {
	if n < 1 || n > MaxExactN {
		return math.NaN()
	}
	pairs := n * (n - 1) / 2
	if s < 0 {
		s = -s
	}
	if s > pairs || (pairs-s)%2 != 0 {
		return math.NaN()
	}
	var count, total uint64
	for q, m := range mahonian(n) {
		total += m
		if d := pairs - 2*q; d >= s || -d >= s {
			count += m
		}
	}
	return float64(count) / float64(total)
}

// kendallS counts concordant minus discordant pairs in time order.
func kendallS(x []float64) float64 {
	var s int
	for i := 0; i < len(x); i++ {
		xi := x[i]
		for j := i + 1; j < len(x); j++ {
			switch {
			case x[j] > xi:
				s++
			case x[j] < xi:
				s--
			}
		}
	}
	return float64(s)
}

// tieGroups returns the sizes (>1) of groups of equal values.
func tieGroups(x []float64) []int {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	var out []int
	for i := 0; i < len(s); {
		j := i + 1
		for j < len(s) && s[j] == s[i] {
			j++
		}
		if j-i > 1 {
			out = append(out, j-i)
		}
		i = j
	}
	return out
}

// hamedRaoFactor computes n/n* of Hamed & Rao (1998). The series is
// detrended with its Sen slope against the index 1..n, ranked (average
// ranks for ties), and the autocorrelation of the ranks at every lag
// 1..n-1 is kept when it lies outside +-z_{1-alpha/2}/sqrt(n).
func hamedRaoFactor(x []float64, alpha float64) (float64, error) {
	n := len(x)
	if n < 4 {
		return 1, ErrTooShort
	}
	t := make([]float64, n)
	for i := range t {
		t[i] = float64(i + 1)
	}
	slope := medianPairwiseSlope(t, x)
	d := make([]float64, n)
	for i := range x {
		d[i] = x[i] - slope*t[i]
	}
	rk := Ranks(d)
	acf := autocorrelation(rk, n-1)
	limit := distuv.UnitNormal.Quantile(1-alpha/2) / math.Sqrt(float64(n))
	nf := float64(n)
	var sum float64
	for k := 1; k < n; k++ {
		if math.Abs(acf[k]) <= limit {
			continue
		}
		kf := float64(k)
		sum += (nf - kf) * (nf - kf - 1) * (nf - kf - 2) * acf[k]
	}
	f := 1 + 2/(nf*(nf-1)*(nf-2))*sum
	if !(f > 0) {
		// The formula can go non-positive for strongly alternating series;
		// then the corrected variance is undefined and no p-value is honest.
		return f, errors.New("Hamed-Rao variance factor is not positive")
	}
	return f, nil
}

// autocorrelation returns r_0..r_maxLag with r_k = sum_{t<n-k}(x_t-m)
// (x_{t+k}-m) / sum_t (x_t-m)^2 (the biased estimator, as in Hamed & Rao).
func autocorrelation(x []float64, maxLag int) []float64 {
	n := len(x)
	var m float64
	for _, v := range x {
		m += v
	}
	m /= float64(n)
	var den float64
	for _, v := range x {
		den += (v - m) * (v - m)
	}
	out := make([]float64, maxLag+1)
	if den == 0 {
		return out
	}
	for k := 0; k <= maxLag; k++ {
		var num float64
		for t := 0; t+k < n; t++ {
			num += (x[t] - m) * (x[t+k] - m)
		}
		out[k] = num / den
	}
	return out
}

// Ranks returns 1-based ranks of x with ties given their average rank.
func Ranks(x []float64) []float64 {
	n := len(x)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return x[idx[a]] < x[idx[b]] })
	r := make([]float64, n)
	for i := 0; i < n; {
		j := i + 1
		for j < n && x[idx[j]] == x[idx[i]] {
			j++
		}
		avg := float64(i+j+1) / 2 // mean of ranks i+1..j
		for k := i; k < j; k++ {
			r[idx[k]] = avg
		}
		i = j
	}
	return r
}
