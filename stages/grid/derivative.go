package grid

import (
	"fmt"
	"math"
)

// poleTol is how close (degrees) a row must be to +-90 to count as a pole
// row, where 1/cos(lat) is unbounded and derivatives are NaN.
const poleTol = 1e-9

// RelativeVorticity returns the vertical component of the relative
// vorticity (s^-1) of the wind (u eastward, v northward, m s^-1) on the
// sphere of radius EarthRadius:
//
//	zeta = 1/(R cos phi) dv/dlambda - 1/(R cos phi) d(u cos phi)/dphi
//
// with phi latitude and lambda longitude in radians. Derivatives are
// centred differences, (f[+1] - f[-1]) / (x[+1] - x[-1]), periodic in
// longitude on a global grid. Where one neighbour is missing (the edges of
// a regional grid, the outermost rows, or a NaN neighbour) the one-sided
// first-order difference with the other neighbour is used; where both are
// missing the result is NaN. The result is also NaN where u or v itself is
// NaN and on rows at a pole (cos phi = 0). Fields are in (lat, lon) order.
func (g *Grid) RelativeVorticity(u, v []float64) ([]float64, error) {
	return g.curlOrDiv(u, v, -1)
}

// Divergence returns the horizontal divergence (s^-1) of the wind (u, v)
// on the sphere, with the same differences and missing-value rules as
// RelativeVorticity:
//
//	delta = 1/(R cos phi) du/dlambda + 1/(R cos phi) d(v cos phi)/dphi
func (g *Grid) Divergence(u, v []float64) ([]float64, error) {
	return g.curlOrDiv(v, u, +1)
}

// curlOrDiv computes 1/(R cos phi) [da/dlambda + sign d(b cos phi)/dphi]
// where for vorticity a = v, b = u, sign = -1 and for divergence a = u,
// b = v, sign = +1. The arguments arrive as (b, a).
func (g *Grid) curlOrDiv(b, a []float64, sign float64) ([]float64, error) {
	n := g.Len()
	if len(a) != n || len(b) != n {
		return nil, fmt.Errorf("grid: wind components have %d and %d points, grid %dx%d has %d", len(b), len(a), g.NLat(), g.NLon(), n)
	}
	da := g.DDLon(a)
	nlat, nlon := g.NLat(), g.NLon()
	cosLat := make([]float64, nlat)
	for i, lat := range g.Lat {
		cosLat[i] = math.Cos(lat * deg2rad)
	}
	h := make([]float64, n)
	for i := range nlat {
		for j := range nlon {
			k := i*nlon + j
			h[k] = b[k] * cosLat[i]
		}
	}
	dh := g.DDLat(h)
	out := make([]float64, n)
	for i := range nlat {
		pole := math.Abs(g.Lat[i]) >= 90-poleTol
		f := 1 / (EarthRadius * cosLat[i])
		for j := range nlon {
			k := i*nlon + j
			if pole || math.IsNaN(a[k]) || math.IsNaN(b[k]) {
				out[k] = math.NaN()
				continue
			}
			out[k] = f * (da[k] + sign*dh[k])
		}
	}
	return out, nil
}

// DDLon returns the derivative of f with respect to longitude in radians,
// df/dlambda, by centred differences periodic on a global grid, one-sided
// where a neighbour is missing, NaN where both are (see
// RelativeVorticity). f must have Len() points.
func (g *Grid) DDLon(f []float64) []float64 {
	nlat, nlon := g.NLat(), g.NLon()
	out := make([]float64, len(f))
	step := g.dlon * deg2rad
	for i := range nlat {
		row := f[i*nlon : (i+1)*nlon]
		for j := range nlon {
			w, e := j-1, j+1
			if g.periodic {
				w = (w + nlon) % nlon
				e %= nlon
			}
			var fw, fe float64 = math.NaN(), math.NaN()
			if w >= 0 {
				fw = row[w]
			}
			if e < nlon {
				fe = row[e]
			}
			out[i*nlon+j] = difference(fw, row[j], fe, step, step)
		}
	}
	return out
}

// DDLat returns the derivative of f with respect to latitude in radians,
// df/dphi, by centred differences along each column (one-sided at the
// outermost rows and beside NaN, NaN where both neighbours are missing).
// It works in either latitude order.
func (g *Grid) DDLat(f []float64) []float64 {
	nlat, nlon := g.NLat(), g.NLon()
	out := make([]float64, len(f))
	for i := range nlat {
		var hs, hn float64 // latitude steps to the previous and next rows, radians, signed
		if i > 0 {
			hs = (g.Lat[i] - g.Lat[i-1]) * deg2rad
		}
		if i < nlat-1 {
			hn = (g.Lat[i+1] - g.Lat[i]) * deg2rad
		}
		for j := range nlon {
			k := i*nlon + j
			fp, fn := math.NaN(), math.NaN()
			if i > 0 {
				fp = f[k-nlon]
			}
			if i < nlat-1 {
				fn = f[k+nlon]
			}
			out[k] = difference(fp, f[k], fn, hs, hn)
		}
	}
	return out
}

// difference is the derivative at the middle of three samples fp, f0, fn
// at steps hp (from fp to f0) and hn (from f0 to fn): centred
// (fn - fp)/(hp + hn) when both neighbours are finite, else one-sided with
// the finite neighbour and f0, else NaN.
func difference(fp, f0, fn, hp, hn float64) float64 {
	okp, okn := isFinite(fp), isFinite(fn)
	switch {
	case okp && okn:
		return (fn - fp) / (hp + hn)
	case okn && isFinite(f0):
		return (fn - f0) / hn
	case okp && isFinite(f0):
		return (f0 - fp) / hp
	}
	return math.NaN()
}

func isFinite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
