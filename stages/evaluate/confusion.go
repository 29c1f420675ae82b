package evaluate

import "math"

// Confusion is a square confusion matrix over K classes, rows indexed by
// the reference class and columns by the candidate class (the same
// orientation as scikit-learn's confusion_matrix(y_true, y_pred)). Count
// holds pixel-steps; Area holds the same pixel-steps weighted by cell area
// in km2, so that a polar cell counts for what it covers.
type Confusion struct {
	K     int
	Count []int64   // K*K, row-major
	Area  []float64 // K*K, row-major, km2 summed over steps
}

// NewConfusion returns an empty K-class matrix.
func NewConfusion(k int) *Confusion {
	return &Confusion{K: k, Count: make([]int64, k*k), Area: make([]float64, k*k)}
}

// AddPixel records one pixel-step of reference class r and candidate class
// c with cell area a (km2).
func (m *Confusion) AddPixel(r, c int, a float64) {
	m.Count[r*m.K+c]++
	m.Area[r*m.K+c] += a
}

// Add accumulates another matrix of the same size.
func (m *Confusion) Add(o *Confusion) {
	for i := range m.Count {
		m.Count[i] += o.Count[i]
		m.Area[i] += o.Area[i]
	}
}

// Weighted returns the matrix as float64, weighted by area or not.
func (m *Confusion) Weighted(byArea bool) []float64 {
	out := make([]float64, len(m.Count))
	for i := range out {
		if byArea {
			out[i] = m.Area[i]
		} else {
			out[i] = float64(m.Count[i])
		}
	}
	return out
}

// ClassScores are the one-versus-rest pixel scores of one class:
// TP = M[k][k], FP = column sum - TP, FN = row sum - TP,
// IoU = TP/(TP+FP+FN), precision = TP/(TP+FP), recall = TP/(TP+FN),
// F1 = 2TP/(2TP+FP+FN). Undefined ratios are NaN.
type ClassScores struct {
	TP, FP, FN, TN float64
	IoU            float64
	Precision      float64
	Recall         float64
	F1             float64
}

// PerClass computes ClassScores for class k from a K*K matrix w.
func PerClass(w []float64, K, k int) ClassScores {
	var row, col, total float64
	for j := 0; j < K; j++ {
		row += w[k*K+j]
		col += w[j*K+k]
	}
	for _, x := range w {
		total += x
	}
	tp := w[k*K+k]
	fp := col - tp
	fn := row - tp
	return ClassScores{
		TP: tp, FP: fp, FN: fn, TN: total - tp - fp - fn,
		IoU:       ratio(tp, tp+fp+fn),
		Precision: ratio(tp, tp+fp),
		Recall:    ratio(tp, tp+fn),
		F1:        ratio(2*tp, 2*tp+fp+fn),
	}
}

// MeanIoU is the mean of the per-class IoU over the classes where it is
// defined (a class absent from both masks is left out rather than counted
// as 0 or 1); NaN when no class is defined.
func MeanIoU(w []float64, K int) float64 {
	var s float64
	n := 0
	for k := 0; k < K; k++ {
		if v := PerClass(w, K, k).IoU; !math.IsNaN(v) {
			s += v
			n++
		}
	}
	return ratio(s, float64(n))
}

// Accuracy is the trace over the total (overall proportion correct).
func Accuracy(w []float64, K int) float64 {
	var tr, total float64
	for i := 0; i < K; i++ {
		tr += w[i*K+i]
	}
	for _, x := range w {
		total += x
	}
	return ratio(tr, total)
}
