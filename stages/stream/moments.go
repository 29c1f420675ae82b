package stream

import "math"

// Moments accumulates the weighted count, mean, sum of squared deviations,
// minimum and maximum of a stream of values. The zero value is an empty
// accumulator. Two accumulators over disjoint parts of a stream merge
// exactly as if one had seen both parts (Chan, Golub & LeVeque 1979), so
// work can be split by time step, file or goroutine and combined in any
// fixed order.
//
// With weights w_i (unit weights when none are given):
//
//	W    = sum w_i            W2 = sum w_i^2        N = count
//	Mean = sum w_i x_i / W
//	M2   = sum w_i (x_i - Mean)^2
//
// (Mean is held as Shift + Dev; see the fields.)
//
// NaN values are skipped and never reach the sums; values with weight <= 0
// are skipped too.
type Moments struct {
	N  int64   `json:"count"`
	W  float64 `json:"weight"`
	W2 float64 `json:"weight_squared"`
	// Shift is a reference value (the first value seen) subtracted before
	// accumulating, and Dev the weighted mean of x - Shift. Working with
	// deviations keeps every sum small, so data such as 1e7 +- 0.1 lose no
	// digits to their magnitude when partial results are merged.
	Shift float64 `json:"shift"`
	Dev   float64 `json:"mean_minus_shift"`
	M2    float64 `json:"m2"`
	Min   float64 `json:"min"`
	Max   float64 `json:"max"`
}

// Mean is the weighted mean, Shift + Dev.
func (m Moments) Mean() float64 {
	if m.N == 0 {
		return math.NaN()
	}
	return m.Shift + m.Dev
}

// Add includes one value with weight w (Welford's update, weighted form of
// West 1979).
func (m *Moments) Add(x, w float64) {
	if math.IsNaN(x) || !(w > 0) {
		return
	}
	if m.N == 0 {
		*m = Moments{N: 1, W: w, W2: w * w, Shift: x, Min: x, Max: x}
		return
	}
	m.N++
	m.W += w
	m.W2 += w * w
	y := x - m.Shift
	d := y - m.Dev
	m.Dev += d * w / m.W
	m.M2 += w * d * (y - m.Dev)
	if x < m.Min {
		m.Min = x
	}
	if x > m.Max {
		m.Max = x
	}
}

// Merge folds o into m (Chan, Golub & LeVeque 1979, eq. 2.1b):
//
//	delta = o.Mean - m.Mean
//	Mean  = m.Mean + delta o.W / W
//	M2    = m.M2 + o.M2 + delta^2 m.W o.W / W
//
// with both means taken relative to m.Shift.
func (m *Moments) Merge(o Moments) {
	if o.N == 0 {
		return
	}
	if m.N == 0 {
		*m = o
		return
	}
	w := m.W + o.W
	d := (o.Dev + (o.Shift - m.Shift)) - m.Dev
	m.Dev += d * (o.W / w)
	m.M2 += o.M2 + d*d*(m.W/w)*o.W
	m.N += o.N
	m.W = w
	m.W2 += o.W2
	m.Min = math.Min(m.Min, o.Min)
	m.Max = math.Max(m.Max, o.Max)
}

// AddFloat64s includes a batch of values with optional weights (ws nil means
// unit weights; otherwise len(ws) == len(xs)). The batch is summarised with
// the corrected two-pass algorithm (Björck; Chan, Golub & LeVeque 1983,
// eq. 1.7) and then merged, which is more accurate than one Welford update
// per value and as cheap.
func (m *Moments) AddFloat64s(xs, ws []float64) { m.Merge(batch(xs, ws)) }

// AddFloat32s is AddFloat64s for float32 data; the sums are float64.
func (m *Moments) AddFloat32s(xs []float32, ws []float64) { m.Merge(batch(xs, ws)) }

func batch[T float32 | float64](xs []T, ws []float64) Moments {
	if ws != nil && len(ws) != len(xs) {
		panic("stream: weights and values differ in length")
	}
	var b Moments
	var sum float64
	first := true
	for i, v := range xs {
		x := float64(v)
		w := 1.0
		if ws != nil {
			w = ws[i]
		}
		if math.IsNaN(x) || !(w > 0) {
			continue
		}
		if first {
			b.Min, b.Max, b.Shift = x, x, x
			first = false
		}
		b.N++
		b.W += w
		b.W2 += w * w
		sum += w * (x - b.Shift)
		if x < b.Min {
			b.Min = x
		}
		if x > b.Max {
			b.Max = x
		}
	}
	if b.N == 0 {
		return Moments{}
	}
	mean := sum / b.W
	// Second pass: deviations from the provisional mean, plus the
	// correction term that removes the first pass's rounding error.
	var ss, corr float64
	for i, v := range xs {
		x := float64(v)
		w := 1.0
		if ws != nil {
			w = ws[i]
		}
		if math.IsNaN(x) || !(w > 0) {
			continue
		}
		d := x - b.Shift - mean
		ss += w * d * d
		corr += w * d
	}
	b.Dev = mean + corr/b.W
	b.M2 = ss - corr*corr/b.W
	if b.M2 < 0 {
		b.M2 = 0
	}
	return b
}

// Variance is the weighted population variance M2 / W.
func (m Moments) Variance() float64 {
	if m.N == 0 {
		return math.NaN()
	}
	return m.M2 / m.W
}

// SampleVariance is the unbiased variance with reliability weights,
// M2 / (W - W2/W); with unit weights the denominator is n - 1 (the
// definition NIST StRD certifies).
func (m Moments) SampleVariance() float64 {
	d := m.W - m.W2/m.W
	if m.N < 2 || !(d > 0) {
		return math.NaN()
	}
	return m.M2 / d
}

// Std is the square root of SampleVariance.
func (m Moments) Std() float64 { return math.Sqrt(m.SampleVariance()) }

// Affine returns the moments of a*x + b given the moments of x. Packed
// netCDF variables (scale_factor, add_offset) are accumulated in their packed
// domain, where decimal data such as NIST StRD's are exact integers, and
// mapped back once at the end.
func (m Moments) Affine(a, b float64) Moments {
	if m.N == 0 {
		return m
	}
	out := m
	out.Shift = a*m.Shift + b
	out.Dev = a * m.Dev
	out.M2 = a * a * m.M2
	lo, hi := a*m.Min+b, a*m.Max+b
	if a < 0 {
		lo, hi = hi, lo
	}
	out.Min, out.Max = lo, hi
	return out
}
