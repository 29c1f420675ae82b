package grid

import (
	"fmt"
	"math"
)

// EarthRadius is the radius of the sphere used for every distance and area:
// the GRS80/IUGG mean radius R1 = (2a + b)/3, in metres.
const EarthRadius = 6371008.7714

// CellArea is the area in m^2 of the cell between latitudes lat1 and lat2
// and longitudes lon1 and lon2 (degrees, lon2 east of lon1 by less than or
// exactly 360) on a sphere of radius EarthRadius (CF-1.13 section 7.2):
//
//	A = R^2 (lon2 - lon1) (sin lat2 - sin lat1),  angles in radians.
//
// The result is positive for lat2 > lat1.
func CellArea(lat1, lat2, lon1, lon2 float64) float64 {
	const rad = math.Pi / 180
	return EarthRadius * EarthRadius * (lon2 - lon1) * rad * (math.Sin(lat2*rad) - math.Sin(lat1*rad))
}

// rowBounds returns the southern and northern bound of row i: midpoints
// between neighbouring centres, half a step beyond the outer centres, and
// clamped to [-90, 90].
func (g *Grid) rowBounds(i int) (south, north float64) {
	h := g.DLat() / 2
	lat := g.Lat[i]
	south = math.Max(lat-h, -90)
	north = math.Min(lat+h, 90)
	return south, north
}

// LatBounds returns the southern and northern bound in degrees of every row,
// in row order: midpoints between neighbouring latitudes, half a step
// beyond the outermost ones, clamped to [-90, 90]. A row centred on a pole
// therefore has a half cell.
func (g *Grid) LatBounds() [][2]float64 {
	b := make([][2]float64, g.NLat())
	for i := range b {
		b[i][0], b[i][1] = g.rowBounds(i)
	}
	return b
}

// LonBounds returns the western and eastern bound in degrees of every
// column: the centre minus and plus half a step (the eastern bound may
// exceed 180 or 360; bounds are not normalised so that east - west is
// always the step).
func (g *Grid) LonBounds() [][2]float64 {
	b := make([][2]float64, g.NLon())
	h := g.dlon / 2
	for j := range b {
		b[j] = [2]float64{g.Lon[j] - h, g.Lon[j] + h}
	}
	return b
}

// RowAreas returns the area in m^2 of one cell of each row (all cells of a
// row have the same area), from CellArea and LatBounds.
func (g *Grid) RowAreas() []float64 {
	a := make([]float64, g.NLat())
	for i := range a {
		s, n := g.rowBounds(i)
		a[i] = CellArea(s, n, 0, g.dlon)
	}
	return a
}

// CellAreas returns the area in m^2 of every cell, in (lat, lon) order. On
// a global grid they sum to 4 pi R^2 up to rounding.
func (g *Grid) CellAreas() []float64 {
	rows := g.RowAreas()
	m := g.NLon()
	a := make([]float64, g.Len())
	for i, r := range rows {
		for j := range m {
			a[i*m+j] = r
		}
	}
	return a
}

// MaskArea is the total area in m^2 of the cells where mask is true (all
// cells when mask is nil).
func (g *Grid) MaskArea(mask []bool) (float64, error) {
	if mask != nil && len(mask) != g.Len() {
		return 0, fmt.Errorf("grid: mask has %d points, grid %dx%d has %d", len(mask), g.NLat(), g.NLon(), g.Len())
	}
	rows := g.RowAreas()
	n := g.NLon()
	var sum float64
	for i, a := range rows {
		for j := range n {
			if mask == nil || mask[i*n+j] {
				sum += a
			}
		}
	}
	return sum, nil
}

// AreaMean is the area-weighted mean of f over the cells where mask is true
// (all cells when mask is nil), skipping NaN values:
//
//	mean = sum_k A_k f_k / sum_k A_k  over selected cells with finite f_k
//
// area is the sum of A_k over the cells that counted; with none, mean is
// NaN and area 0.
func (g *Grid) AreaMean(f []float64, mask []bool) (mean, area float64, err error) {
	if len(f) != g.Len() || (mask != nil && len(mask) != g.Len()) {
		return 0, 0, fmt.Errorf("grid: field has %d points and mask %d, grid %dx%d has %d", len(f), len(mask), g.NLat(), g.NLon(), g.Len())
	}
	rows := g.RowAreas()
	n := g.NLon()
	var sum float64
	for i, a := range rows {
		for j := range n {
			k := i*n + j
			if (mask == nil || mask[k]) && isFinite(f[k]) {
				sum += a * f[k]
				area += a
			}
		}
	}
	if area == 0 {
		return math.NaN(), 0, nil
	}
	return sum / area, area, nil
}
