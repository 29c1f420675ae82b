package shard

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
)

func TestAssignYearsFractions(t *testing.T) {
	years := []int{2001, 1995, 1996, 1997, 1998, 1999, 2000, 2002, 2003, 2004}
	r, err := AssignYears(years, pipeline.Split{}, []float64{0.7, 0.15, 0.15})
	if err != nil {
		t.Fatal(err)
	}
	// Derived: 10 years x (0.7, 0.15, 0.15) = 7, 1.5, 1.5; floors 7, 1, 1
	// and the one year left goes to the earlier tie (validate).
	want := map[string][]int{Train: {1995, 1996, 1997, 1998, 1999, 2000, 2001}, Validate: {2002, 2003}, Test: {2004}}
	for set, ys := range want {
		for _, y := range ys {
			if r[y] != set {
				t.Errorf("year %d: %q, want %q", y, r[y], set)
			}
		}
	}
	// A small positive fraction still gets a year.
	r, _ = AssignYears([]int{1, 2, 3, 4}, pipeline.Split{}, []float64{0.9, 0.05, 0.05})
	if r[3] != Validate || r[4] != Test || r[2] != Train {
		t.Errorf("4 years at 0.9/0.05/0.05: %v", r)
	}
	if _, err := AssignYears([]int{1, 2}, pipeline.Split{}, []float64{0.8, 0.1, 0.1}); err == nil {
		t.Error("2 years for 3 sets accepted")
	}
	if _, err := AssignYears([]int{1, 2, 3}, pipeline.Split{}, []float64{0.5, 0.1, 0.1}); err == nil {
		t.Error("fractions summing to 0.7 accepted")
	}
	split := pipeline.Split{Train: []pipeline.Period{{First: 1990, Last: 1991}}, Test: []pipeline.Period{{First: 1993, Last: 1993}}}
	r, _ = AssignYears([]int{1990, 1991, 1992, 1993}, split, nil)
	if r[1990] != Train || r[1993] != Test || r[1992] != "" {
		t.Errorf("campaign split: %v", r)
	}
}

func TestInGap(t *testing.T) {
	roles := map[int]string{1990: Train, 1991: Train, 1992: Test}
	cases := []struct {
		year int
		doy  float64
		want bool
	}{{1991, 0, false}, {1992, 0, true}, {1992, 4.75, true}, {1992, 5, false}, {1990, 0, false}}
	for _, c := range cases {
		if got := InGap(roles, c.year, c.doy, 5); got != c.want {
			t.Errorf("year %d day %v: %v", c.year, c.doy, got)
		}
	}
	if InGap(roles, 1992, 0, 0) {
		t.Error("gap 0 dropped a sample")
	}
}

// TestBalanceShards: disjoint and complete, and the largest load is
// within 4/3 of the optimum found by brute force (Graham 1969 bound for
// the longest-processing-time rule).
func TestBalanceShards(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 3)) // fixed seed
	for trial := 0; trial < 200; trial++ {
		n := 1 + rng.IntN(9)
		k := 1 + rng.IntN(4)
		bytes := make([]int64, n)
		for i := range bytes {
			bytes[i] = int64(1 + rng.IntN(1000))
		}
		a := BalanceShards(bytes, k)
		seen := make([]int, n)
		var maxLoad int64
		for _, list := range a {
			var load int64
			for _, s := range list {
				seen[s]++
				load += bytes[s]
			}
			maxLoad = max(maxLoad, load)
		}
		for s, c := range seen {
			if c != 1 {
				t.Fatalf("shard %d assigned %d times", s, c)
			}
		}
		opt := bruteForce(bytes, k)
		if float64(maxLoad) > 4.0/3.0*float64(opt)+1e-9 {
			t.Fatalf("%v over %d ranks: max load %d, optimum %d", bytes, k, maxLoad, opt)
		}
		if !slices.EqualFunc(a, BalanceShards(bytes, k), slices.Equal[[]int]) {
			t.Fatal("not deterministic")
		}
	}
}

func bruteForce(bytes []int64, k int) int64 {
	best := int64(math.MaxInt64)
	load := make([]int64, k)
	var rec func(i int)
	rec = func(i int) {
		if i == len(bytes) {
			m := slices.Max(load)
			best = min(best, m)
			return
		}
		for r := 0; r < k; r++ {
			load[r] += bytes[i]
			rec(i + 1)
			load[r] -= bytes[i]
		}
	}
	rec(0)
	return best
}

// TestSuggestWeights checks the three weightings against the formulas
// (derived) and inverse frequency against scikit-learn's
// compute_class_weight("balanced"), which is n/(C n_c): proportional.
func TestSuggestWeights(t *testing.T) {
	counts := []int64{950000, 30000, 20000, 0}
	w := SuggestWeights(counts, 0.9999)
	f := []float64{0.95, 0.03, 0.02}
	inv := []float64{1 / f[0], 1 / f[1], 1 / f[2]}
	sq := []float64{1 / math.Sqrt(f[0]), 1 / math.Sqrt(f[1]), 1 / math.Sqrt(f[2])}
	eff := make([]float64, 3)
	for i, n := range counts[:3] {
		eff[i] = (1 - 0.9999) / (1 - math.Pow(0.9999, float64(n))) // Cui et al. (2019), eq. 3 inverted
	}
	for name, pair := range map[string][2][]float64{"inverse": {w.InverseFrequency, inv}, "sqrt": {w.InverseSqrtFrequency, sq}, "effective": {w.EffectiveNumber, eff}} {
		got, raw := pair[0], pair[1]
		sum := raw[0] + raw[1] + raw[2]
		for i := 0; i < 3; i++ {
			want := raw[i] * 3 / sum // normalised to sum to the 3 classes present
			if math.Abs(got[i]-want) > 1e-12*want {
				t.Errorf("%s[%d] = %v, want %v", name, i, got[i], want)
			}
		}
		if got[3] != 0 {
			t.Errorf("%s: absent class weight %v", name, got[3])
		}
	}
	if _, err := os.Stat("/usr/bin/python3"); err != nil {
		t.Skip("/usr/bin/python3 missing (install Debian python3-sklearn)")
	}
	// Pixel labels 0/1/2 in the proportions above, scaled down 1000 x.
	script := `
import numpy as np
from sklearn.utils.class_weight import compute_class_weight
y = np.repeat([0, 1, 2], [950, 30, 20])
w = compute_class_weight('balanced', classes=np.array([0, 1, 2]), y=y)
print(' '.join(repr(float(x)) for x in w * 3 / w.sum()))
`
	out, err := exec.Command("/usr/bin/python3", "-c", script).CombinedOutput()
	if err != nil {
		t.Skipf("scikit-learn not usable from /usr/bin/python3 (install Debian python3-sklearn): %v %s", err, out)
	}
	ref := strings.Fields(string(out))
	for i, s := range ref {
		var x float64
		if _, err := fmt.Sscan(s, &x); err != nil {
			t.Fatal(err)
		}
		if math.Abs(w.InverseFrequency[i]-x) > 1e-12*x {
			t.Errorf("inverse frequency[%d] = %v, scikit-learn %v", i, w.InverseFrequency[i], x)
		}
	}
}

// TestBLAKE3Vector: the digest is BLAKE3-256: the empty input hashes to
// af1349b9...3262 (BLAKE3 specification test vectors, input length 0).
func TestBLAKE3Vector(t *testing.T) {
	p := filepath.Join(t.TempDir(), "empty")
	os.WriteFile(p, nil, 0o644)
	n, d, err := digestFile(p)
	if err != nil || n != 0 || d != "af1349b9f5f9a1a6a0404dea36dcc9499bcb25c9adc112b7cc9a93cae41f3262" {
		t.Fatalf("%d %s %v", n, d, err)
	}
}
