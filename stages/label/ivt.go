package label

import (
	"math"
	"sort"
)

// G0 is standard gravity in m s-2 (3rd CGPM, 1901, exact).
const G0 = 9.80665

// ColumnIntegral returns (1/G0) * integral of f dp from the lowest valid
// level up to top (Pa), by the trapezoid rule over the levels p (Pa, any
// order; f[k] belongs to p[k]). Levels above top are ignored; when top lies
// between two levels, f is interpolated linearly in p at top. Levels where
// f is NaN (below the surface, or missing) are skipped, so the integral
// starts at the first level above ground and bridges isolated gaps. It
// returns NaN when fewer than two usable points remain.
//
// With f = q*u this is IVT_u in kg m-1 s-1; with f = q it is IWV in kg m-2.
func ColumnIntegral(p, f []float64, top float64) float64 {
	type pt struct{ p, f float64 }
	pts := make([]pt, 0, len(p)+1)
	for k := range p {
		if !math.IsNaN(f[k]) && !math.IsNaN(p[k]) {
			pts = append(pts, pt{p[k], f[k]})
		}
	}
	// Highest pressure (lowest level) first.
	sort.Slice(pts, func(a, b int) bool { return pts[a].p > pts[b].p })
	var s float64
	n := 0
	for k := 0; k+1 < len(pts); k++ {
		a, b := pts[k], pts[k+1]
		if a.p <= top {
			break
		}
		if b.p < top {
			// Cut the last interval at top.
			fb := a.f + (b.f-a.f)*(a.p-top)/(a.p-b.p)
			b = pt{top, fb}
		}
		s += (a.p - b.p) * (a.f + b.f) / 2
		n++
	}
	if n == 0 {
		return math.NaN()
	}
	return s / G0
}

// IVTFromLevels integrates IVT = sqrt(IVT_u^2 + IVT_v^2) on every pixel
// from specific humidity q (kg/kg) and winds u, v (m s-1) on the pressure
// levels p (Pa): q[k], u[k], v[k] are flat fields at level p[k]. A pixel
// where any of q, u, v is NaN at a level skips that level (see
// ColumnIntegral); a pixel with no usable column is NaN.
func IVTFromLevels(p []float64, q, u, v [][]float64, top float64) []float64 {
	n := len(q[0])
	out := make([]float64, n)
	fu := make([]float64, len(p))
	fv := make([]float64, len(p))
	for i := 0; i < n; i++ {
		for k := range p {
			qq, uu, vv := q[k][i], u[k][i], v[k][i]
			if math.IsNaN(qq) || math.IsNaN(uu) || math.IsNaN(vv) {
				fu[k], fv[k] = math.NaN(), math.NaN()
				continue
			}
			fu[k], fv[k] = qq*uu, qq*vv
		}
		out[i] = math.Hypot(ColumnIntegral(p, fu, top), ColumnIntegral(p, fv, top))
	}
	return out
}
