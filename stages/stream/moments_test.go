package stream

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/squall-climate/squall/stages/stream/strd"
)

// minLRE is the accuracy the data stages promise on NIST StRD (issue 4).
const minLRE = 13

// TestMomentsNIST checks the certified NIST StRD mean and s. Packed path:
// values stored as exact integers with a scale factor (as a packed netCDF
// variable is), accumulated in the packed domain and mapped back with
// Affine. Every set must reach LRE >= 13 against the certified values.
func TestMomentsNIST(t *testing.T) {
	for _, set := range strd.Sets() {
		packed := set.Packed()
		xs := make([]float64, len(packed))
		for i, p := range packed {
			xs[i] = float64(p)
		}
		for _, how := range []string{"batch", "welford", "merged"} {
			var m Moments
			switch how {
			case "batch":
				m.AddFloat64s(xs, nil)
			case "welford":
				for _, x := range xs {
					m.Add(x, 1)
				}
			case "merged":
				// Uneven pieces merged in order, as time slices are.
				for i := 0; i < len(xs); i += 7 {
					var p Moments
					p.AddFloat64s(xs[i:min(i+7, len(xs))], nil)
					m.Merge(p)
				}
			}
			m = m.Affine(set.Scale(), 0)
			// Certified values: NIST StRD via strd.Set (reference-values.md).
			if l := strd.LRE(m.Mean(), set.Mean); l < minLRE {
				t.Errorf("%s %s: mean %.17g, LRE %.1f < %d", set.Name, how, m.Mean(), l, minLRE)
			}
			if l := strd.LRE(m.Std(), set.Std); l < minLRE {
				t.Errorf("%s %s: s %.17g, LRE %.1f < %d", set.Name, how, m.Std(), l, minLRE)
			}
			if m.N != int64(len(xs)) {
				t.Errorf("%s: count %d", set.Name, m.N)
			}
		}
	}
}

// TestMomentsNISTDoubles feeds the nearest doubles of the published
// decimals and compares with the exact statistics of those same doubles
// (rational arithmetic): the algorithm itself must lose less than 3 digits
// of the 16 a double holds. It also records how close the doubles alone can
// get to the certified values.
func TestMomentsNISTDoubles(t *testing.T) {
	for _, set := range strd.Sets() {
		xs := set.Float64s()
		var m Moments
		for i := 0; i < len(xs); i += 10 {
			m.AddFloat64s(xs[i:min(i+10, len(xs))], nil)
		}
		em, es := strd.ExactStats(xs) // derived: exact arithmetic on the stored doubles
		if l := strd.LRE(m.Mean(), em); l < minLRE {
			t.Errorf("%s: mean LRE %.1f against exact", set.Name, l)
		}
		if l := strd.LRE(m.Std(), es); l < minLRE {
			t.Errorf("%s: s %.17g vs exact %.17g, LRE %.1f", set.Name, m.Std(), es, l)
		}
		t.Logf("%s doubles: LRE of s against certified %.1f (representation limit %.1f)",
			set.Name, strd.LRE(m.Std(), set.Std), strd.LRE(es, set.Std))
	}
}

// TestNaiveFails shows the test can fail: the textbook one-pass sum of
// squares scores about 0 on NumAcc4 (reference-values.md, memory).
func TestNaiveFails(t *testing.T) {
	set := strd.Sets()[3]
	xs := set.Float64s()
	var s, ss float64
	for _, x := range xs {
		s += x
		ss += x * x
	}
	n := float64(len(xs))
	naive := math.Sqrt(math.Max(0, (ss-s*s/n)/(n-1)))
	if l := strd.LRE(naive, set.Std); l >= minLRE {
		t.Fatalf("naive variance reached LRE %.1f; the NIST check would not discriminate", l)
	}
}

// TestMomentsWeighted checks weights against repetition: integer weights
// must equal repeating the value (derived from the definition), and the
// reliability-weight denominator reduces to n-1 for unit weights.
func TestMomentsWeighted(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2)) // fixed seed
	var wm, rm Moments
	var xs, ws []float64
	for i := 0; i < 1000; i++ {
		x := rng.NormFloat64()*3 + 280
		k := 1 + rng.IntN(4)
		xs = append(xs, x)
		ws = append(ws, float64(k))
		for j := 0; j < k; j++ {
			rm.Add(x, 1)
		}
	}
	wm.AddFloat64s(xs, ws)
	const tol = 1e-12 // relative; round-off only
	if math.Abs(wm.Mean()-rm.Mean()) > tol*math.Abs(rm.Mean()) {
		t.Errorf("weighted mean %v vs repeated %v", wm.Mean(), rm.Mean())
	}
	if math.Abs(wm.Variance()-rm.Variance()) > tol*rm.Variance() {
		t.Errorf("weighted variance %v vs repeated %v", wm.Variance(), rm.Variance())
	}
	if wm.Min != rm.Min || wm.Max != rm.Max {
		t.Errorf("min/max differ")
	}
}

// TestMomentsNaN: NaN never leaks into statistics (design rule).
func TestMomentsNaN(t *testing.T) {
	var m Moments
	m.AddFloat32s([]float32{1, float32(math.NaN()), 3}, nil)
	m.Add(math.NaN(), 1)
	if m.N != 2 || m.Mean() != 2 || m.Min != 1 || m.Max != 3 {
		t.Fatalf("got %+v", m)
	}
	// Sample variance of {1,3} with n-1 is 2 (derived).
	if m.SampleVariance() != 2 {
		t.Fatalf("variance %v", m.SampleVariance())
	}
	var e Moments
	e.AddFloat32s([]float32{float32(math.NaN())}, nil)
	if e.N != 0 || !math.IsNaN(e.Std()) {
		t.Fatalf("empty: %+v", e)
	}
}

// TestMomentsFloat32Mean reproduces the failure the issue reports for a
// float32-accumulating script (std 42250 Pa instead of 1085.5 Pa for sea
// level pressure): float32 data with float64 sums stay exact.
func TestMomentsFloat32Mean(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7)) // fixed seed
	const n = 1 << 16
	xs := make([]float32, n)
	for i := range xs {
		xs[i] = float32(101325 + 1085.5*rng.NormFloat64())
	}
	var m Moments
	for i := 0; i < n; i += 4096 {
		m.AddFloat32s(xs[i:i+4096], nil)
	}
	ref := make([]float64, n)
	for i, x := range xs {
		ref[i] = float64(x)
	}
	em, es := strd.ExactStats(ref) // exact arithmetic on the same values
	if strd.LRE(m.Mean(), em) < minLRE || strd.LRE(m.Std(), es) < minLRE {
		t.Fatalf("mean %v std %v, exact %v %v", m.Mean(), m.Std(), em, es)
	}
}
