package shard

import "math"

// LossWeights are per-class weights for a pixel-wise loss, suggested from
// the class pixel counts of the training set. Each list has one weight per
// class (background first) and is normalised so that the weights of the
// classes present sum to the number of classes present, the normalisation
// Cui et al. (2019) use; a class with no training pixels gets weight 0.
type LossWeights struct {
	// InverseFrequency: w_c proportional to 1/f_c, f_c = n_c / sum n.
	InverseFrequency []float64 `json:"inverse_frequency"`
	// InverseSqrtFrequency: w_c proportional to 1/sqrt(f_c), a milder
	// correction.
	InverseSqrtFrequency []float64 `json:"inverse_sqrt_frequency"`
	// EffectiveNumber: w_c proportional to (1 - beta) / (1 - beta^n_c), the
	// inverse of the effective number of samples E_n = (1 - beta^n)/(1 - beta)
	// of Cui, Jia, Lin, Song & Belongie (2019), "Class-Balanced Loss Based on
	// Effective Number of Samples", CVPR, eq. (3) and section 4.
	EffectiveNumber []float64 `json:"effective_number"`
	// Beta is the beta used for EffectiveNumber.
	Beta float64 `json:"effective_number_beta"`
	// Source names where the formulas come from.
	Source string `json:"source"`
}

const weightsSource = "inverse frequency and inverse square-root frequency: common practice; " +
	"effective number of samples: Cui et al. (2019), Class-Balanced Loss Based on Effective Number of Samples, CVPR, eq. 3; " +
	"each list normalised to sum to the number of classes present (Cui et al., sec. 4)"

// SuggestWeights computes LossWeights from pixel counts per class.
func SuggestWeights(counts []int64, beta float64) LossWeights {
	var total float64
	for _, n := range counts {
		total += float64(n)
	}
	inv := make([]float64, len(counts))
	isq := make([]float64, len(counts))
	eff := make([]float64, len(counts))
	for c, n := range counts {
		if n <= 0 {
			continue
		}
		f := float64(n) / total
		inv[c] = 1 / f
		isq[c] = 1 / math.Sqrt(f)
		// (1-beta)/(1-beta^n) with beta^n = exp(n log beta) computed as
		// expm1 so that beta close to 1 keeps its digits.
		oneMinusBetaN := -math.Expm1(float64(n) * math.Log1p(-(1 - beta)))
		if beta == 0 {
			oneMinusBetaN = 1
		}
		eff[c] = (1 - beta) / oneMinusBetaN
	}
	return LossWeights{
		InverseFrequency:     normaliseWeights(inv),
		InverseSqrtFrequency: normaliseWeights(isq),
		EffectiveNumber:      normaliseWeights(eff),
		Beta:                 beta,
		Source:               weightsSource,
	}
}

// normaliseWeights scales w so that its positive entries sum to their
// number.
func normaliseWeights(w []float64) []float64 {
	var sum float64
	k := 0
	for _, x := range w {
		if x > 0 {
			sum += x
			k++
		}
	}
	out := make([]float64, len(w))
	if sum == 0 {
		return out
	}
	for i, x := range w {
		out[i] = x * float64(k) / sum
	}
	return out
}

// Frequencies returns counts / sum(counts) (zeros when the sum is 0).
func Frequencies(counts []int64) []float64 {
	var total float64
	for _, n := range counts {
		total += float64(n)
	}
	out := make([]float64, len(counts))
	if total == 0 {
		return out
	}
	for i, n := range counts {
		out[i] = float64(n) / total
	}
	return out
}
