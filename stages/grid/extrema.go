package grid

import (
	"fmt"
	"math"
)

// LocalMinima returns, in ascending flat-index order, the points where f
// (in (lat, lon) order) is lowest within the window of 2*radius+1 rows by
// 2*radius+1 columns centred on it, such as sea-level pressure minima for
// cyclone centres. The window wraps in longitude on a global grid and is
// cut at the outermost rows and, on a regional grid, at the outermost
// columns, so points near the edge of a regional grid can be minima of a
// cut window (callers wanting only interior minima drop those within
// radius of the edge). NaN points are never minima and are ignored inside
// windows.
//
// Ties are broken by index so that a flat bottom yields one point: the
// point at k is a minimum when, for every other finite point m of its
// window, f[k] < f[m], or f[k] == f[m] and k < m. (A plateau wider than the
// window may still yield several points.)
//
// Cost: up to (2r+1)^2 comparisons per point, usually far fewer since a
// point is rejected at its first lower neighbour.
func (g *Grid) LocalMinima(f []float64, radius int) ([]int, error) {
	return g.localExtrema(f, radius, func(a, b float64) bool { return a < b })
}

// LocalMaxima is LocalMinima for the highest points (for example
// vorticity maxima), with the same window, tie and NaN rules.
func (g *Grid) LocalMaxima(f []float64, radius int) ([]int, error) {
	return g.localExtrema(f, radius, func(a, b float64) bool { return a > b })
}

// localExtrema finds the points k whose value beats (strictly, per
// better) every other finite value m in the window, with ties won by the
// smaller index.
func (g *Grid) localExtrema(f []float64, radius int, better func(a, b float64) bool) ([]int, error) {
	if len(f) != g.Len() {
		return nil, fmt.Errorf("grid: field has %d points, grid %dx%d has %d", len(f), g.NLat(), g.NLon(), g.Len())
	}
	if radius < 1 {
		return nil, fmt.Errorf("grid: extremum window radius %d, want at least 1 (window 3x3)", radius)
	}
	nlat, nlon := g.NLat(), g.NLon()
	// On a periodic grid a window wider than the globe would meet columns
	// twice; limit it to every column once.
	rw, re := radius, radius
	if g.periodic && 2*radius+1 > nlon {
		rw, re = (nlon-1)/2, nlon/2
	}
	var out []int
	for i := range nlat {
		i0, i1 := max(i-radius, 0), min(i+radius, nlat-1)
		for j := range nlon {
			k := i*nlon + j
			v := f[k]
			if !isFinite(v) {
				continue
			}
			ok := true
		window:
			for ii := i0; ii <= i1; ii++ {
				row := ii * nlon
				for dj := -rw; dj <= re; dj++ {
					jj := j + dj
					if g.periodic {
						jj = (jj + nlon) % nlon
					} else if jj < 0 || jj >= nlon {
						continue
					}
					m := row + jj
					if m == k {
						continue
					}
					w := f[m]
					if math.IsNaN(w) {
						continue
					}
					if better(w, v) || (w == v && m < k) {
						ok = false
						break window
					}
				}
			}
			if ok {
				out = append(out, k)
			}
		}
	}
	return out, nil
}
