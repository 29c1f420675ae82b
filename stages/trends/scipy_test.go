package trends

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"sort"
	"testing"
)

// referencePython is Debian's interpreter with python3-scipy; the python3
// first on PATH is a different one without it.
const referencePython = "/usr/bin/python3"

// runScipy feeds in (as JSON) to a Python script and decodes its JSON
// answer into out, or skips the test when Debian's scipy is missing.
func runScipy(t *testing.T, script string, in, out any) {
	t.Helper()
	if _, err := os.Stat(referencePython); err != nil {
		t.Skipf("reference check skipped: %s not found (CI installs python3-scipy)", referencePython)
	}
	if err := exec.Command(referencePython, "-c", "import scipy.stats").Run(); err != nil {
		t.Skipf("reference check skipped: %s has no scipy (apt-get install python3-scipy)", referencePython)
	}
	b, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(referencePython, "-c", script)
	cmd.Stdin = bytes.NewReader(b)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	res, err := cmd.Output()
	if err != nil {
		t.Fatalf("python: %v\n%s", err, stderr.String())
	}
	if err := json.Unmarshal(res, out); err != nil {
		t.Fatalf("decode python answer: %v\n%s", err, res)
	}
}

type randomCase struct {
	T []float64 `json:"t"`
	X []float64 `json:"x"`
	Y []float64 `json:"y"` // second sample for the rank-sum test
}

// randomCases makes seeded series of several shapes: continuous with a
// trend, integer counts with many ties, and short ones.
func randomCases() []randomCase {
	rng := rand.New(rand.NewPCG(20240607, 1))
	var cases []randomCase
	for k, n := range []int{12, 30, 57, 100, 7} {
		c := randomCase{}
		for i := 0; i < n; i++ {
			c.T = append(c.T, float64(1980+i))
			v := 0.03*float64(i) + rng.NormFloat64()
			if k%2 == 1 {
				v = math.Round(3 + 0.05*float64(i) + 2*rng.NormFloat64()) // counts: ties
			}
			c.X = append(c.X, v)
		}
		m := n + 3 - k
		for i := 0; i < m; i++ {
			v := 0.4 + rng.NormFloat64()
			if k%2 == 1 {
				v = math.Round(4 + 2*rng.NormFloat64())
			}
			c.Y = append(c.Y, v)
		}
		cases = append(cases, c)
	}
	return cases
}

const scipyScript = `
import json, sys
import numpy as np
from scipy import stats
out = []
for c in json.load(sys.stdin):
    t, x, y = np.array(c["t"]), np.array(c["x"]), np.array(c["y"])
    kt = stats.kendalltau(t, x, method="asymptotic")
    ts = stats.theilslopes(x, t, alpha=0.95)
    lr = stats.linregress(t, x)
    mw_a = stats.mannwhitneyu(x, y, alternative="two-sided", method="asymptotic", use_continuity=True)
    mw = stats.mannwhitneyu(x, y, alternative="two-sided")
    pairs = sorted((x[j]-x[i])/(t[j]-t[i]) for i in range(len(t)) for j in range(i+1, len(t)))
    out.append(dict(tau=kt.statistic, tau_p=kt.pvalue,
        sen=ts[0], sen_icpt=ts[1], sen_lo=ts[2], sen_hi=ts[3], pairs=pairs,
        slope=lr.slope, icpt=lr.intercept, r=lr.rvalue, p=lr.pvalue, se=lr.stderr, icpt_se=lr.intercept_stderr,
        u=mw_a.statistic, u_p_asym=mw_a.pvalue, u_p=mw.pvalue))
print(json.dumps(out))
`

type scipyAnswer struct {
	Tau     float64   `json:"tau"`
	TauP    float64   `json:"tau_p"`
	Sen     float64   `json:"sen"`
	SenIcpt float64   `json:"sen_icpt"`
	SenLo   float64   `json:"sen_lo"`
	SenHi   float64   `json:"sen_hi"`
	Pairs   []float64 `json:"pairs"`
	Slope   float64   `json:"slope"`
	Icpt    float64   `json:"icpt"`
	R       float64   `json:"r"`
	P       float64   `json:"p"`
	SE      float64   `json:"se"`
	IcptSE  float64   `json:"icpt_se"`
	U       float64   `json:"u"`
	UPAsym  float64   `json:"u_p_asym"`
	UP      float64   `json:"u_p"`
}

// TestAgainstScipy compares every statistic with Debian's scipy.stats on
// seeded random series (general-purpose reference library, independent
// code). Differences of convention are spelled out beside each check.
func TestAgainstScipy(t *testing.T) {
	cases := randomCases()
	var ans []scipyAnswer
	runScipy(t, scipyScript, cases, &ans)
	if len(ans) != len(cases) {
		t.Fatalf("python answered %d cases, want %d", len(ans), len(cases))
	}
	for k, c := range cases {
		a := ans[k]
		mk, err := MannKendallTest(c.X, CorrectionNone, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		// kendalltau(variant b) equals our tau-b for distinct times; its
		// asymptotic p has no continuity correction, so compare with
		// erfc(|S|/sqrt(Var S)/sqrt 2), which checks the tie-corrected Var(S).
		if relErr(mk.TauB, a.Tau) > tolScipy {
			t.Errorf("case %d: tau-b %.15g, scipy %.15g", k, mk.TauB, a.Tau)
		}
		pNoCC := math.Erfc(math.Abs(mk.S) / math.Sqrt(mk.VarS) / math.Sqrt2)
		if relErr(pNoCC, a.TauP) > tolScipy {
			t.Errorf("case %d: MK p without continuity %.15g, scipy kendalltau %.15g", k, pNoCC, a.TauP)
		}
		sen, err := SenSlope(c.T, c.X, mk.VarS, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		if relErr(sen.Slope, a.Sen) > tolScipy || math.Abs(sen.Intercept-a.SenIcpt) > 1e-9*math.Max(1, math.Abs(a.SenIcpt)) {
			t.Errorf("case %d: Sen %.15g %.15g, scipy %.15g %.15g", k, sen.Slope, sen.Intercept, a.Sen, a.SenIcpt)
		}
		// scipy rounds the ranks of the CI bounds to whole numbers; Gilbert's
		// rule as we apply it interpolates. Both must lie between the same
		// two neighbouring ordered slopes (scipy's sorted list as the truth).
		if !sort.Float64sAreSorted(a.Pairs) || len(a.Pairs) != sen.Pairs {
			t.Fatalf("case %d: %d pairs from scipy, %d here", k, len(a.Pairs), sen.Pairs)
		}
		checkBracket := func(name string, ours, theirs, rank float64) {
			lo := orderStat(a.Pairs, math.Floor(rank))
			hi := orderStat(a.Pairs, math.Ceil(rank))
			if ours < lo-1e-12 || ours > hi+1e-12 || theirs < lo-1e-12 || theirs > hi+1e-12 {
				t.Errorf("case %d: Sen %s %.12g (rank %.3f), scipy %.12g; bracket [%.12g, %.12g]", k, name, ours, rank, theirs, lo, hi)
			}
		}
		checkBracket("low", sen.Low, a.SenLo, sen.LowRank)
		// scipy's upper index is round((N'+C)/2), 0-based, i.e. rank M2+1.
		checkBracket("high", sen.High, a.SenHi, sen.HighRank)

		ols, err := LeastSquares(c.T, c.X)
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range []struct {
			name      string
			got, want float64
		}{{"slope", ols.Slope, a.Slope}, {"intercept", ols.Intercept, a.Icpt}, {"r", ols.R, a.R},
			{"slope se", ols.SlopeSE, a.SE}, {"intercept se", ols.InterceptSE, a.IcptSE}, {"p", ols.P, a.P}} {
			if relErr(p.got, p.want) > 1e-8 { // 1e-8: t distribution tails computed by different code
				t.Errorf("case %d: OLS %s %.15g, scipy linregress %.15g", k, p.name, p.got, p.want)
			}
		}

		rs, err := MannWhitney(c.X, c.Y)
		if err != nil {
			t.Fatal(err)
		}
		if rs.U != a.U {
			t.Errorf("case %d: U %g, scipy %g", k, rs.U, a.U)
		}
		if relErr(rs.P, a.UP) > tolScipy {
			t.Errorf("case %d: rank-sum p %.15g (exact=%v), scipy default %.15g", k, rs.P, rs.Exact, a.UP)
		}
		rn, _ := mannWhitney(c.X, c.Y, true)
		if relErr(rn.P, a.UPAsym) > tolScipy {
			t.Errorf("case %d: rank-sum normal-approximation p %.15g, scipy %.15g", k, rn.P, a.UPAsym)
		}
		if k == 4 && !rs.Exact { // 7 continuous values: the exact branch (derived from the rule)
			t.Errorf("case %d: expected the exact rank-sum distribution", k)
		}
	}
}

// Hamed & Rao (1998) eq. 18 written out independently in Python with
// numpy/scipy (rankdata, theilslopes for the detrending slope, norm.ppf
// for the significance limit). This is a check of our code against the
// published formula ("derived"), not against a published number; no
// packaged reference implementation is available to Debian's Python.
const hamedRaoScript = `
import json, sys
import numpy as np
from scipy import stats
out = []
for x in json.load(sys.stdin):
    x = np.array(x, dtype=float); n = len(x)
    t = np.arange(1, n + 1, dtype=float)
    slope = stats.theilslopes(x, t)[0]
    r = stats.rankdata(x - slope * t)
    d = r - r.mean(); den = (d * d).sum()
    acf = [(d[:n-k] * d[k:]).sum() / den for k in range(n)]
    lim = stats.norm.ppf(1 - 0.05 / 2) / np.sqrt(n)
    s = sum((n-k)*(n-k-1)*(n-k-2)*acf[k] for k in range(1, n) if abs(acf[k]) > lim)
    f = 1 + 2.0 / (n*(n-1)*(n-2)) * s
    S = sum(np.sign(x[j]-x[i]) for i in range(n) for j in range(i+1, n))
    _, c = np.unique(x, return_counts=True)
    v = (n*(n-1)*(2*n+5) - sum(k*(k-1)*(2*k+5) for k in c)) / 18.0 * f
    z = 0.0 if S == 0 else (S - np.sign(S)) / np.sqrt(v)
    out.append(dict(factor=f, z=z, p=2*stats.norm.sf(abs(z))))
print(json.dumps(out))
`

func TestHamedRaoAgainstFormulaInPython(t *testing.T) {
	rng := rand.New(rand.NewPCG(1998, 204))
	var series [][]float64
	for k, n := range []int{25, 40, 60} {
		x := make([]float64, n)
		e := 0.0
		for i := range x {
			e = 0.7*e + rng.NormFloat64() // AR(1), phi 0.7: clearly persistent
			x[i] = 0.02*float64(i*k) + e
			if k == 1 {
				x[i] = math.Round(2 * x[i]) // ties
			}
		}
		series = append(series, x)
	}
	var ans []struct{ Factor, Z, P float64 }
	runScipy(t, hamedRaoScript, series, &ans)
	inflated := 0
	for k, x := range series {
		mk, err := MannKendallTest(x, CorrectionHamedRao, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		a := ans[k]
		if relErr(mk.Factor, a.Factor) > tolScipy || relErr(mk.Z, a.Z) > tolScipy || relErr(mk.P, a.P) > 1e-9 {
			t.Errorf("series %d: factor %.12g z %.12g p %.12g; python %.12g %.12g %.12g", k, mk.Factor, mk.Z, mk.P, a.Factor, a.Z, a.P)
		}
		if mk.Factor > 1 {
			inflated++
		}
	}
	if inflated == 0 { // derived: AR(1) with phi 0.7 gives significant lag-1 rank autocorrelation
		t.Error("no series had its variance inflated: the check did not exercise the correction")
	}
}

// tolExactP: both sides divide exact integer counts (below 2^53) by n!;
// only the final rounding (and scipy's summation order) can differ.
const tolExactP = 1e-12

// TestExactMannKendallAgainstScipy compares the exact two-sided p-value of
// S with scipy.stats.kendalltau(t, x, method="exact") on seeded random
// untied series for n = 4..10. With distinct times and no ties in x,
// Kendall's tau between time and value is S/(n(n-1)/2), so the two tests
// are the same test, and scipy's exact method uses the same permutation
// (inversion-count) distribution under independence. The sorted and
// reversed series (S at its extremes) are included for each n, since
// scipy handles those counts separately.
func TestExactMannKendallAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(20261202, 7))
	var xs [][]float64
	for n := 4; n <= 10; n++ {
		for rep := 0; rep < 8; rep++ {
			x := make([]float64, n)
			for i := range x {
				x[i] = 0.2*float64(i) + rng.NormFloat64() // continuous: ties have probability 0
			}
			xs = append(xs, x)
		}
		up := make([]float64, n)
		down := make([]float64, n)
		for i := range up {
			up[i], down[i] = float64(i), float64(-i)
		}
		xs = append(xs, up, down)
	}
	const script = `
import json, sys
import numpy as np
from scipy import stats
out = []
for x in json.load(sys.stdin):
    t = np.arange(len(x), dtype=float)
    out.append(stats.kendalltau(t, np.array(x), method="exact").pvalue)
print(json.dumps(out))
`
	var ps []float64
	runScipy(t, script, xs, &ps)
	if len(ps) != len(xs) {
		t.Fatalf("python answered %d cases, want %d", len(ps), len(xs))
	}
	for k, x := range xs {
		if len(tieGroups(x)) != 0 {
			t.Fatalf("case %d: random series has ties; pick another seed", k)
		}
		mk, err := MannKendallExactUpTo(x, CorrectionNone, 0.05, DefaultExactMaxN)
		if err != nil {
			t.Fatal(err)
		}
		if mk.PMethod != PMethodExact {
			t.Errorf("case %d (n=%d): method %q, want exact", k, len(x), mk.PMethod)
		}
		if math.Abs(mk.P-ps[k]) > tolExactP {
			t.Errorf("case %d (n=%d, S=%g): exact p %.17g, scipy kendalltau exact %.17g", k, len(x), mk.S, mk.P, ps[k])
		}
	}
}
