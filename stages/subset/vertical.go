package subset

import (
	"math"
)

// G0 is standard gravity in m s-2 (3rd CGPM, 1901; exact), the g of the
// IWV and IVT integrals.
const G0 = 9.80665

// column gives the pressure (Pa) of level k at horizontal point c.
type column interface {
	nlev() int
	pressure(k, c int) float64
}

// fixedLevels are pressure levels, the same everywhere.
type fixedLevels []float64

func (l fixedLevels) nlev() int                 { return len(l) }
func (l fixedLevels) pressure(k, _ int) float64 { return l[k] }

// hybridLevels are hybrid sigma-pressure levels, p = a*p0 + b*ps (CF-1.13
// appendix D), with ps (Pa) per horizontal point.
type hybridLevels struct {
	a, b []float64 // a already multiplied by p0
	ps   []float32
}

func (l hybridLevels) nlev() int { return len(l.b) }
func (l hybridLevels) pressure(k, c int) float64 {
	return l.a[k] + l.b[k]*float64(l.ps[c])
}

// interpLogP interpolates a field on levels (x[k][c]) to pressure target
// (Pa), linearly in ln p between the two levels that bracket the target at
// each point. A target outside the point's levels (below the lowest model
// level, i.e. towards or under the surface, or above the top) gives NaN:
// nothing is extrapolated. A NaN at either bracketing level gives NaN.
func interpLogP(dst []float32, x [][]float32, lv column, target float64) {
	n := lv.nlev()
	lt := math.Log(target)
	for c := range dst {
		dst[c] = float32(math.NaN())
		// Levels may run either way; find k with target between p[k], p[k+1].
		pPrev := lv.pressure(0, c)
		if pPrev == target {
			dst[c] = x[0][c]
			continue
		}
		for k := 1; k < n; k++ {
			p := lv.pressure(k, c)
			if (pPrev <= target && target <= p) || (p <= target && target <= pPrev) {
				if p == target {
					dst[c] = x[k][c]
					break
				}
				w := (lt - math.Log(pPrev)) / (math.Log(p) - math.Log(pPrev))
				a, b := float64(x[k-1][c]), float64(x[k][c])
				dst[c] = float32(a + w*(b-a)) // NaN propagates
				break
			}
			pPrev = p
		}
	}
}

// integrate computes (1/g) * integral of f dp over [top, bottom] (Pa) at
// every point by the trapezoid rule in pressure over the levels where f
// is defined (NaN levels, e.g. below the surface, are left out and their
// neighbours joined). Layers that straddle top or bottom are cut there
// with f interpolated linearly in p, so the result does not depend on
// whether top and bottom are levels of the file; nothing is extrapolated
// beyond the outermost defined levels. A point with fewer than two
// defined levels inside or around the range gives NaN.
//
// f(k, c) returns the integrand at level k and point c.
func integrate(dst []float64, f func(k, c int) float64, lv column, top, bottom float64) {
	n := lv.nlev()
	type lp struct{ p, v float64 }
	buf := make([]lp, 0, n)
	for c := range dst {
		buf = buf[:0]
		for k := 0; k < n; k++ {
			v := f(k, c)
			if math.IsNaN(v) {
				continue
			}
			buf = append(buf, lp{lv.pressure(k, c), v})
		}
		// Order by increasing pressure (files store levels either way).
		if len(buf) > 1 && buf[0].p > buf[len(buf)-1].p {
			for i, j := 0, len(buf)-1; i < j; i, j = i+1, j-1 {
				buf[i], buf[j] = buf[j], buf[i]
			}
		}
		sum, used := 0.0, false
		for i := 1; i < len(buf); i++ {
			p0, p1 := buf[i-1].p, buf[i].p
			lo, hi := math.Max(p0, top), math.Min(p1, bottom)
			if hi <= lo {
				continue
			}
			f0, f1 := buf[i-1].v, buf[i].v
			at := func(p float64) float64 { return f0 + (f1-f0)*(p-p0)/(p1-p0) }
			sum += (hi - lo) * (at(lo) + at(hi)) / 2
			used = true
		}
		if !used {
			dst[c] = math.NaN()
			continue
		}
		dst[c] = sum / G0
	}
}
