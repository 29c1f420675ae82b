package trends

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// OLS is an ordinary least-squares straight line y = Intercept + Slope*x.
type OLS struct {
	N                    int
	Slope, Intercept     float64
	SlopeSE, InterceptSE float64
	ResidualSD, R2, R    float64
	// P is the two-sided p-value of slope = 0 from Student's t with n-2
	// degrees of freedom.
	P float64
}

// LeastSquares fits y on x. It centres both variables before forming sums
// of squares (two passes), which keeps about 12-13 significant digits on
// NIST StRD Norris where the one-pass textbook formula loses several.
//
//	Slope = Sxy/Sxx, Intercept = my - Slope*mx,
//	s^2 = SSE/(n-2), SE(Slope) = s/sqrt(Sxx),
//	SE(Intercept) = s*sqrt(1/n + mx^2/Sxx).
func LeastSquares(x, y []float64) (OLS, error) {
	n := len(x)
	r := OLS{N: n}
	if n != len(y) {
		return r, errors.New("x and y differ in length")
	}
	if n < 3 {
		return r, ErrTooShort
	}
	mx, my := mean(x), mean(y)
	var sxx, sxy, syy float64
	for i := range x {
		dx, dy := x[i]-mx, y[i]-my
		sxx += dx * dx
		sxy += dx * dy
		syy += dy * dy
	}
	if sxx == 0 {
		return r, errors.New("all x values are equal")
	}
	r.Slope = sxy / sxx
	r.Intercept = my - r.Slope*mx
	var sse float64
	for i := range x {
		e := y[i] - (r.Intercept + r.Slope*x[i])
		sse += e * e
	}
	nf := float64(n)
	s2 := sse / (nf - 2)
	r.ResidualSD = math.Sqrt(s2)
	r.SlopeSE = math.Sqrt(s2 / sxx)
	r.InterceptSE = math.Sqrt(s2 * (1/nf + mx*mx/sxx))
	if syy > 0 {
		r.R = sxy / math.Sqrt(sxx*syy)
		r.R2 = 1 - sse/syy
	}
	switch {
	case r.SlopeSE > 0:
		tt := r.Slope / r.SlopeSE
		r.P = 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: nf - 2}.Survival(math.Abs(tt))
	case syy == 0:
		r.P = 1 // a flat series: no trend
	default:
		r.P = 0 // a perfect line
	}
	return r, nil
}

// mean with a correction pass (sum of deviations), so that large offsets
// such as NIST NumAcc4 keep their digits.
func mean(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	var s float64
	for _, v := range x {
		s += v
	}
	m := s / float64(len(x))
	var c float64
	for _, v := range x {
		c += v - m
	}
	return m + c/float64(len(x))
}
