package stream

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// rankTol is the largest rank error accepted for a compression of 200:
// Dunning & Ertl (2019, fig. 6) report errors well below 1e-3 in q for
// the k1 scale at this size (from memory of the figure); we allow 2e-3.
const rankTol = 2e-3

func empiricalRank(sorted []float64, v float64) float64 {
	i, _ := slices.BinarySearch(sorted, v)
	return float64(i) / float64(len(sorted))
}

func TestDigestQuantiles(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4)) // fixed seed
	dists := map[string]func() float64{
		"normal":      rng.NormFloat64,
		"exponential": rng.ExpFloat64,
		"lognormal":   func() float64 { return math.Exp(2 * rng.NormFloat64()) },
	}
	for _, name := range []string{"normal", "exponential", "lognormal"} {
		gen := dists[name]
		const n = 200000
		xs := make([]float64, n)
		d := NewDigest(200)
		for i := range xs {
			xs[i] = gen()
			d.Add(xs[i], 1)
		}
		sorted := slices.Clone(xs)
		slices.Sort(sorted)
		for _, q := range []float64{0.001, 0.01, 0.05, 0.25, 0.5, 0.75, 0.95, 0.99, 0.999} {
			v := d.Quantile(q)
			// Reference: gonum's exact empirical quantile of the same sample.
			ref := stat.Quantile(q, stat.Empirical, sorted, nil)
			r := empiricalRank(sorted, v)
			if math.Abs(r-q) > rankTol {
				t.Errorf("%s q=%v: digest %v (rank %.5f), exact %v", name, q, v, r, ref)
			}
		}
		if d.Centroids() > 200 {
			t.Errorf("%s: %d centroids exceed the compression", name, d.Centroids())
		}
		if d.Quantile(0) != sorted[0] || d.Quantile(1) != sorted[n-1] {
			t.Errorf("%s: extremes not exact", name)
		}
	}
}

// TestDigestMergeAndWeights: merging per-slice digests and weighting by a
// factor must match the rank of a plain sort with repeated values.
func TestDigestMergeAndWeights(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6)) // fixed seed
	total := NewDigest(200)
	var rep []float64
	for s := 0; s < 50; s++ {
		part := NewDigest(200)
		for i := 0; i < 2000; i++ {
			x := rng.NormFloat64() + float64(s%5)
			w := float64(1 + i%3)
			part.Add(x, w)
			for j := 0; j < int(w); j++ {
				rep = append(rep, x)
			}
		}
		total.Merge(part)
	}
	slices.Sort(rep)
	for _, q := range []float64{0.001, 0.1, 0.5, 0.9, 0.999} {
		r := empiricalRank(rep, total.Quantile(q))
		if math.Abs(r-q) > rankTol {
			t.Errorf("q=%v: rank %v", q, r)
		}
	}
}

func TestDigestDeterministic(t *testing.T) {
	mk := func() []float64 {
		rng := rand.New(rand.NewPCG(9, 9)) // fixed seed
		d := NewDigest(100)
		for i := 0; i < 50000; i++ {
			d.Add(math.Round(rng.NormFloat64()*10), 1) // many ties
		}
		return []float64{d.Quantile(0.01), d.Quantile(0.5), d.Quantile(0.99)}
	}
	a, b := mk(), mk()
	if !slices.Equal(a, b) {
		t.Fatalf("%v != %v", a, b)
	}
}

func TestDigestSmall(t *testing.T) {
	d := NewDigest(100)
	if !math.IsNaN(d.Quantile(0.5)) {
		t.Fatal("empty digest must give NaN")
	}
	d.AddFloat32s([]float32{3, 1, 2, float32(math.NaN())}, nil)
	if d.Count() != 3 || d.Quantile(0.5) != 2 || d.Min() != 1 || d.Max() != 3 {
		t.Fatalf("median of {1,2,3}: %v (count %d)", d.Quantile(0.5), d.Count())
	}
}

func BenchmarkDigestAdd(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	xs := make([]float32, 192*288)
	for i := range xs {
		xs[i] = float32(rng.NormFloat64())
	}
	d := NewDigest(200)
	b.SetBytes(int64(4 * len(xs)))
	for b.Loop() {
		d.AddFloat32s(xs, nil)
	}
}

func BenchmarkMomentsAdd(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	xs := make([]float32, 192*288)
	for i := range xs {
		xs[i] = float32(rng.NormFloat64())
	}
	var m Moments
	b.SetBytes(int64(4 * len(xs)))
	for b.Loop() {
		m.AddFloat32s(xs, nil)
	}
}

// TestDigestFloat32Batch exercises the radix-sorted batch path with
// negative values, weights and NaN against a plain sort with repetition.
func TestDigestFloat32Batch(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12)) // fixed seed
	d := NewDigest(200)
	var rep []float64
	for s := 0; s < 20; s++ {
		xs := make([]float32, 5000)
		ws := make([]float64, len(xs))
		for i := range xs {
			xs[i] = float32(rng.NormFloat64()*1e-5 - 2e-6) // vorticity-like
			ws[i] = float64(1 + i%4)
			if i%97 == 0 {
				xs[i] = float32(math.NaN())
				continue
			}
			for j := 0; j < int(ws[i]); j++ {
				rep = append(rep, float64(xs[i]))
			}
		}
		d.AddFloat32s(xs, ws)
	}
	slices.Sort(rep)
	for _, q := range []float64{0.001, 0.01, 0.3, 0.5, 0.7, 0.99, 0.999} {
		r := empiricalRank(rep, d.Quantile(q))
		if math.Abs(r-q) > rankTol {
			t.Errorf("q=%v: rank %v", q, r)
		}
	}
	if d.Min() != rep[0] || d.Max() != rep[len(rep)-1] {
		t.Errorf("extremes %v %v vs %v %v", d.Min(), d.Max(), rep[0], rep[len(rep)-1])
	}
}
