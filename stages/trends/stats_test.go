package trends

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// Tolerances, named so that a reader sees what each check demands.
const (
	tolPublished7 = 5e-8  // values published to 7 decimals
	tolPublished4 = 5e-5  // values published to 4 decimals
	tolNIST       = 1e-12 // relative: NIST certified values, 12+ digits
	tolScipy      = 1e-10 // relative: same formula, different float order
)

func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// USEPA (2009) Unified Guidance, EPA 530/R-09-007, Example 17-7, as listed
// in /work/shared/reference-values.md (confirmed through a published
// reproduction of the Guidance examples).
var (
	epaTimes  = []float64{89.6, 90.1, 90.8, 91.1, 92.1, 93.1, 94.1, 95.6, 96.1, 96.3}
	epaValues = []float64{56, 53, 51, 55, 52, 60, 62, 59, 61, 63}
)

func TestMannKendallEPAExample17_7(t *testing.T) {
	mk, err := MannKendallTest(epaValues, CorrectionNone, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	checks := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"S", mk.S, 25, 0},                                   // recomputed (reference-values.md)
		{"Var(S)", mk.VarS, 125, 0},                          // recomputed (reference-values.md)
		{"tau", mk.Tau, 0.5555556, tolPublished7},            // published, USEPA 2009 Ex. 17-7
		{"z", mk.Z, 2.146625, 5e-7},                          // published to 7 significant digits
		{"two-sided p", mk.P, 0.03182313, 5e-9},              // published to 7 significant digits
		{"factor without correction", mk.Factor, 1, 0},       // definition
		{"Var used without correction", mk.VarSUsed, 125, 0}, // definition
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > c.tol {
			t.Errorf("%s = %.9g, want %.9g (tol %g)", c.name, c.got, c.want, c.tol)
		}
	}
}

func TestSenSlopeEPAExample17_7(t *testing.T) {
	sen, err := SenSlope(epaTimes, epaValues, 125, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	checks := []struct {
		name      string
		got, want float64
	}{
		{"slope", sen.Slope, 1.3333333},           // published, USEPA 2009 Ex. 17-7 (real times)
		{"intercept", sen.Intercept, -65.9666667}, // published, USEPA 2009 Ex. 17-7
		{"CI low", sen.Low, 0.3992083},            // published 95% CI, USEPA 2009 Ex. 17-7
		{"CI high", sen.High, 2.3333333},          // published 95% CI, USEPA 2009 Ex. 17-7
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > tolPublished7 {
			t.Errorf("%s = %.9g, want %.9g", c.name, c.got, c.want)
		}
	}
	if sen.Pairs != 45 { // 10*9/2 pairs, all times distinct (derived)
		t.Errorf("pairs = %d, want 45", sen.Pairs)
	}
	// With index times 1..10 the slope would be 8/7 (reference-values.md).
	idx := []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10}
	s2, _ := SenSlope(idx, epaValues, 125, 0.05)
	if math.Abs(s2.Slope-8.0/7) > 1e-12 {
		t.Errorf("index-time slope = %.12g, want 8/7", s2.Slope)
	}
}

// The published Example 17-7 (n = 10, no ties) reports the normal
// approximation with continuity correction; the stage's default cut-off
// (n <= 10) would give the exact p instead, so the published p is checked
// through MannKendallTest above and, here, with the cut-off below 10.
func TestMannKendallEPAExampleMethods(t *testing.T) {
	mk, err := MannKendallExactUpTo(epaValues, CorrectionNone, 0.05, 9)
	if err != nil {
		t.Fatal(err)
	}
	if mk.PMethod != PMethodNormal || math.Abs(mk.P-0.03182313) > 5e-9 { // published, USEPA 2009 Ex. 17-7
		t.Errorf("cut-off 9: p %.9g by %s, want 0.03182313 by normal", mk.P, mk.PMethod)
	}
	ex, err := MannKendallExactUpTo(epaValues, CorrectionNone, 0.05, DefaultExactMaxN)
	if err != nil {
		t.Fatal(err)
	}
	// S = 25, Z and Var(S) unchanged by the method (definition); the exact
	// p differs from the normal one.
	if ex.PMethod != PMethodExact || ex.S != 25 || ex.Z != mk.Z || ex.P == mk.P {
		t.Errorf("cut-off 10: method %s S %g Z %g p %.9g", ex.PMethod, ex.S, ex.Z, ex.P)
	}
	// Exact p = (number of permutations of 10 with at most 10 inversions,
	// times 2) / 10!: S = 45 - 2Q >= 25 <=> Q <= 10; cross-checked against
	// scipy in TestExactMannKendallAgainstScipy (derived).
	row := mahonian(10)
	var c uint64
	for q := 0; q <= 10; q++ {
		c += row[q]
	}
	if want := float64(2*c) / 3628800; ex.P != want {
		t.Errorf("exact p %.17g, want 2*%d/10! = %.17g", ex.P, c, want)
	}
}

// Hand check for n = 4 (derived): N = 6 pairs, S = 6 - 2Q with Q the
// number of inversions. The Mahonian row for n = 4 is 1 3 5 6 5 3 1 (sum
// 4! = 24; OEIS A008302, and by the recurrence: rows 1 | 1 1 | 1 2 2 1).
// S = 6 needs Q = 0 (the sorted series only) and S = -6 needs Q = 6 (the
// reversed one), so P(|S| >= 6) = 2/24 = 1/12. S = 4 (Q = 1) has
// P(|S| >= 4) = (1+3+3+1)/24 = 1/3; S = 2 has (1+3+5+5+3+1)/24 = 3/4;
// S = 0 (Q = 3) has p = 1. S always has the parity of N, so an odd S is
// impossible for n = 4; for n = 5 (N = 10) S = 0 (Q = 5) also has p = 1.
func TestExactKendallHandN4(t *testing.T) {
	row := mahonian(4)
	want := []uint64{1, 3, 5, 6, 5, 3, 1}
	if len(row) != len(want) {
		t.Fatalf("Mahonian row 4 = %v, want %v", row, want)
	}
	for i := range want {
		if row[i] != want[i] {
			t.Fatalf("Mahonian row 4 = %v, want %v", row, want)
		}
	}
	for _, c := range []struct {
		n, s int
		p    float64
	}{{4, 6, 2.0 / 24}, {4, -6, 2.0 / 24}, {4, 4, 1.0 / 3}, {4, 2, 18.0 / 24}, {4, 0, 1}, {5, 0, 1}} {
		if got := ExactKendallP(c.n, c.s); got != c.p {
			t.Errorf("ExactKendallP(%d, %d) = %.17g, want %.17g", c.n, c.s, got, c.p)
		}
	}
	if !math.IsNaN(ExactKendallP(4, 3)) { // S = 3 impossible for n = 4 (parity, derived)
		t.Errorf("ExactKendallP(4, 3) should be NaN")
	}
	// Through the test: the sorted series of 4 has S = 6.
	mk, err := MannKendallExactUpTo([]float64{1, 2, 3, 4}, CorrectionNone, 0.05, DefaultExactMaxN)
	if err != nil {
		t.Fatal(err)
	}
	if mk.S != 6 || mk.P != 2.0/24 || mk.PMethod != PMethodExact {
		t.Errorf("sorted n=4: S %g p %.17g method %s, want 6, 1/12, exact", mk.S, mk.P, mk.PMethod)
	}
	// n! for n = 18 is the largest factorial below 2^53 (derived: 18! =
	// 6402373705728000 < 9007199254740992 < 19!); the row sums to it.
	var sum uint64
	for _, m := range mahonian(MaxExactN) {
		sum += m
	}
	if sum != 6402373705728000 || sum >= 1<<53 {
		t.Errorf("sum of Mahonian row 18 = %d, want 18! = 6402373705728000 < 2^53", sum)
	}
}

// Ties, long series, the serial correction and a zero cut-off keep the
// normal approximation (the rule in MannKendallExactUpTo).
func TestExactFallsBackToNormal(t *testing.T) {
	tied := []float64{1, 3, 2, 3, 5, 6}
	long := []float64{1, 3, 2, 4, 5, 7, 6, 8, 9, 11, 10}
	alt := []float64{1, 5, 2, 6, 3, 7, 4, 8}
	for _, c := range []struct {
		name string
		x    []float64
		corr string
		max  int
	}{{"ties", tied, CorrectionNone, 10}, {"n=11", long, CorrectionNone, 10},
		{"hamed-rao", alt, CorrectionHamedRao, 10}, {"cut-off 0", alt, CorrectionNone, 0}} {
		mk, err := MannKendallExactUpTo(c.x, c.corr, 0.05, c.max)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		normal, _ := MannKendallTest(c.x, c.corr, 0.05)
		if mk.PMethod != PMethodNormal || mk.P != normal.P {
			t.Errorf("%s: method %s p %g, want normal p %g", c.name, mk.PMethod, mk.P, normal.P)
		}
	}
}

// College of the Holy Cross handout "Mann-Kendall by hand" (confirmed;
// reference-values.md): one tied pair (12.9 twice).
func TestMannKendallHolyCrossTie(t *testing.T) {
	x := []float64{12.9, 14.8, 13.2, 15.7, 13.8, 15.6, 12.9, 11.0, 17.3, 15.9, 19.0, 18.3, 20.1, 21.7}
	mk, err := MannKendallTest(x, CorrectionNone, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if mk.S != 54 { // published S = 54
		t.Errorf("S = %g, want 54", mk.S)
	}
	if math.Abs(mk.VarS-998.0/3) > 1e-9 { // published Var = 998/3 (tie-corrected)
		t.Errorf("Var(S) = %.10g, want 998/3", mk.VarS)
	}
	if math.Abs(mk.Z-2.9058) > tolPublished4 { // published Z = 2.9058
		t.Errorf("Z = %.6g, want 2.9058", mk.Z)
	}
	oneSided := mk.P / 2
	if math.Abs(oneSided-0.0018) > tolPublished4 { // published one-sided p = 0.0018
		t.Errorf("one-sided p = %.6g, want 0.0018", oneSided)
	}
}

// NIST StRD "Norris" linear regression, certified values (confirmed and
// recomputed, reference-values.md); data copied to testdata/ from
// /work/shared/reference-data/nist-strd-norris.txt.
func TestLeastSquaresNISTNorris(t *testing.T) {
	x, y := readNorris(t)
	if len(x) != 36 { // NIST: 36 observations
		t.Fatalf("read %d pairs, want 36", len(x))
	}
	r, err := LeastSquares(x, y)
	if err != nil {
		t.Fatal(err)
	}
	checks := []struct {
		name      string
		got, want float64
	}{
		{"intercept", r.Intercept, -0.262323073774029},     // NIST certified
		{"intercept sd", r.InterceptSE, 0.232818234301152}, // NIST certified
		{"slope", r.Slope, 1.00211681802045},               // NIST certified
		{"slope sd", r.SlopeSE, 4.29796848199937e-4},       // NIST certified
		{"residual sd", r.ResidualSD, 0.884796396144373},   // NIST certified
		{"R squared", r.R2, 0.999993745883712},             // NIST certified
	}
	for _, c := range checks {
		if e := relErr(c.got, c.want); e > tolNIST {
			t.Errorf("%s = %.15g, want %.15g (rel err %.2g, LRE %.1f)", c.name, c.got, c.want, e, -math.Log10(e))
		}
	}
}

func readNorris(t *testing.T) (x, y []float64) {
	t.Helper()
	f, err := os.Open("testdata/nist-strd-norris.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		fs := strings.Fields(line)
		yv, err1 := strconv.ParseFloat(fs[0], 64)
		xv, err2 := strconv.ParseFloat(fs[1], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("bad line %q", line)
		}
		x, y = append(x, xv), append(y, yv)
	}
	return x, y
}

func TestRanksAverageTies(t *testing.T) {
	// Derived by hand: 3 and 3 share ranks 2 and 3.
	got := Ranks([]float64{5, 3, 1, 3})
	want := []float64{4, 2.5, 1, 2.5}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("ranks = %v, want %v", got, want)
		}
	}
}

func TestHamedRaoWhiteAndPersistent(t *testing.T) {
	// A strictly increasing series: after removing its Sen slope the
	// residual is constant, every rank ties, all autocorrelations are 0 and
	// the factor must be exactly 1 (derived from the formula).
	x := []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12}
	mk, err := MannKendallTest(x, CorrectionHamedRao, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if mk.Factor != 1 {
		t.Errorf("factor on a straight line = %g, want 1", mk.Factor)
	}
	// A trendless series in long runs is positively autocorrelated: the
	// correction must inflate the variance (factor > 1) and so raise p
	// (derived: Hamed & Rao 1998 eq. 18 with rho_1 > 0 significant).
	y := []float64{0, 0.1, 0.2, 0.15, 0.3, 5, 5.1, 5.2, 5.05, 5.3, 0.05, 0.12, 0.22, 0.18, 0.31, 5.02, 5.12, 5.22, 5.07, 5.32}
	plain, _ := MannKendallTest(y, CorrectionNone, 0.05)
	hr, err := MannKendallTest(y, CorrectionHamedRao, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if !(hr.Factor > 1) || !(hr.P > plain.P) {
		t.Errorf("Hamed-Rao on a persistent series: factor %g, p %g (uncorrected %g); want factor > 1 and larger p", hr.Factor, hr.P, plain.P)
	}
}

func TestMannWhitneyExactSmall(t *testing.T) {
	// Derived by enumeration: samples {1,2,3} vs {4,5,6}: U1 = 0, the most
	// extreme of C(6,3) = 20 arrangements on each side, p = 2/20.
	r, err := MannWhitney([]float64{1, 2, 3}, []float64{4, 5, 6})
	if err != nil {
		t.Fatal(err)
	}
	if !r.Exact || r.U != 0 || math.Abs(r.P-0.1) > 1e-15 {
		t.Errorf("got %+v, want exact U=0 p=0.1", r)
	}
}

func TestBootstrapDeterministicAndCovers(t *testing.T) {
	a := []float64{3, 4, 5, 4, 3, 5, 4, 4, 6, 2}
	b := []float64{6, 7, 5, 8, 6, 7, 7, 6, 5, 8}
	c1, err := BootstrapMeans(a, b, 2000, 42, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	c2, _ := BootstrapMeans(a, b, 2000, 42, 0.05)
	if c1 != c2 {
		t.Fatal("same seed gave different intervals")
	}
	c3, _ := BootstrapMeans(a, b, 2000, 43, 0.05)
	if c1 == c3 {
		t.Error("a different seed gave identical intervals: the seed is not used")
	}
	// Derived: means 4.0 and 6.5.
	if c1.Diff != 2.5 || c1.Ratio != 6.5/4 {
		t.Errorf("diff %g ratio %g, want 2.5 and 1.625", c1.Diff, c1.Ratio)
	}
	if !(c1.DiffLow < c1.Diff && c1.Diff < c1.DiffHigh) || !(c1.RatioLow < c1.Ratio && c1.Ratio < c1.RatioHigh) {
		t.Errorf("intervals do not contain the estimate: %+v", c1)
	}
	// Derived: the normal-theory half-width is about 1.96*sqrt(s_a^2/10 +
	// s_b^2/10) ~ 1.0 here; a percentile interval must be of that order.
	if w := c1.DiffHigh - c1.DiffLow; w < 1.2 || w > 2.8 {
		t.Errorf("difference interval width %g, want about 2", w)
	}
}
