package strd

import (
	"math"
	"math/big"
	"strconv"
	"strings"
)

// Float64s parses the values to the nearest doubles (what a file of
// doubles holds; NumAcc3/4 are not exactly representable).
func (s Set) Float64s() []float64 {
	out := make([]float64, len(s.Values))
	for i, v := range s.Values {
		f, err := strconv.ParseFloat(v, 64)
		if err != nil {
			panic(err)
		}
		out[i] = f
	}
	return out
}

// Packed returns value * 10^Decimals as exact integers; with Scale they
// represent the published decimals without any rounding.
func (s Set) Packed() []int32 {
	out := make([]int32, len(s.Values))
	for i, v := range s.Values {
		digits := v
		if j := strings.IndexByte(v, '.'); j >= 0 {
			frac := v[j+1:]
			digits = v[:j] + frac + strings.Repeat("0", s.Decimals-len(frac))
		} else {
			digits += strings.Repeat("0", s.Decimals)
		}
		n, err := strconv.ParseInt(digits, 10, 32)
		if err != nil {
			panic(err)
		}
		out[i] = int32(n)
	}
	return out
}

// Scale is 10^-Decimals, the netCDF scale_factor that unpacks Packed.
func (s Set) Scale() float64 { return math.Pow(10, -float64(s.Decimals)) }

// LRE is the log relative error -log10(|x-c|/|c|) by which StRD judges
// accuracy (capped at 15.9 when x == c, the double-precision limit).
func LRE(x, c float64) float64 {
	if x == c {
		return 15.9
	}
	if c == 0 {
		return -math.Log10(math.Abs(x))
	}
	return -math.Log10(math.Abs(x-c) / math.Abs(c))
}

// ExactStats returns the mean and sample standard deviation of the given
// doubles computed in exact rational arithmetic (the standard deviation
// rounded once at the end). It tells an algorithm's error apart from the
// representation error of its input.
func ExactStats(xs []float64) (mean, std float64) {
	n := new(big.Rat).SetInt64(int64(len(xs)))
	sum := new(big.Rat)
	for _, x := range xs {
		sum.Add(sum, new(big.Rat).SetFloat64(x))
	}
	m := new(big.Rat).Quo(sum, n)
	ss := new(big.Rat)
	for _, x := range xs {
		d := new(big.Rat).Sub(new(big.Rat).SetFloat64(x), m)
		ss.Add(ss, d.Mul(d, d))
	}
	v := ss.Quo(ss, new(big.Rat).SetInt64(int64(len(xs)-1)))
	mf, _ := m.Float64()
	// sqrt of a rational to double precision: big.Float with 200 bits.
	vf := new(big.Float).SetPrec(200).SetRat(v)
	sf, _ := new(big.Float).SetPrec(200).Sqrt(vf).Float64()
	return mf, sf
}
