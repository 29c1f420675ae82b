package grid

import "fmt"

// NearestMap returns, for every point of dst in (lat, lon) order, the flat
// index of the cell of g that contains it (Locate: the nearest centre along
// each axis), or -1 when the point lies outside g's cells. Computing the
// map once and applying it to every time step is cheaper than regridding
// each step from scratch. A dst point exactly on a cell boundary of g goes
// to the cell math.Round picks (half away from the first centre).
func (g *Grid) NearestMap(dst *Grid) []int {
	m := make([]int, dst.Len())
	n := dst.NLon()
	// Locate separates into a row for each latitude and a column for each
	// longitude, so the map is built from two short tables.
	rows := make([]int, dst.NLat())
	for i, lat := range dst.Lat {
		r, _, ok := g.Locate(lat, g.Lon[0])
		if !ok {
			r = -1
		}
		rows[i] = r
	}
	cols := make([]int, n)
	for j, lon := range dst.Lon {
		_, c, ok := g.Locate(g.Lat[0], lon)
		if !ok {
			c = -1
		}
		cols[j] = c
	}
	for i, r := range rows {
		for j, c := range cols {
			k := -1
			if r >= 0 && c >= 0 {
				k = g.Index(r, c)
			}
			m[i*n+j] = k
		}
	}
	return m
}

// RegridNearest resamples the field f on grid src onto grid dst by nearest
// neighbour: each dst point takes the value of the src cell that contains
// it, or fill when it lies outside src. It works for any element type
// (float32 land fractions, byte class masks).
//
// When it is appropriate: for categorical fields (land-sea or class masks,
// region numbers), whose values must not be blended, and for continuous
// fields when dst is as fine as src or finer, or when the grids differ
// only in order or longitude convention (the values are then copied
// exactly). It is not appropriate for taking a continuous field to a
// coarser grid (it samples one src cell per dst cell and ignores the rest:
// use an area-weighted, conservative average for that), nor for fluxes
// whose totals must be conserved.
func RegridNearest[T any](src *Grid, f []T, dst *Grid, fill T) ([]T, error) {
	if len(f) != src.Len() {
		return nil, fmt.Errorf("grid: field has %d points, source grid %dx%d has %d", len(f), src.NLat(), src.NLon(), src.Len())
	}
	m := src.NearestMap(dst)
	out := make([]T, len(m))
	for k, s := range m {
		if s < 0 {
			out[k] = fill
		} else {
			out[k] = f[s]
		}
	}
	return out, nil
}
