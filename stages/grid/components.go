package grid

import (
	"fmt"
	"math"
	"sort"
)

// Component is one connected object of a mask.
type Component struct {
	// Label is the component's number in Labelling.Labels, 1..N, ordered
	// by First.
	Label int32
	// First is the flat index of the component's first pixel in (lat, lon)
	// row-major order.
	First int
	// Pixels is the number of grid points in the component.
	Pixels int
	// Area is the summed cell area in m^2.
	Area float64
	// CentroidLat and CentroidLon (degrees, lon in [-180, 180]) are the
	// area-weighted centroid: the direction of sum_k A_k x_k over the
	// pixels' 3-D unit vectors x_k, projected back onto the sphere. It is
	// correct across the date line and near the poles; for an object that
	// surrounds a pole or wraps the globe it is only a direction.
	CentroidLat, CentroidLon float64
	// RowMin and RowMax are the first and last rows the component touches;
	// LatMin and LatMax the southernmost and northernmost pixel-centre
	// latitudes.
	RowMin, RowMax int
	LatMin, LatMax float64
	// ColWest and ColEast are the columns at the western and eastern end of
	// the shortest longitude arc holding all the component's pixel centres,
	// and LonWest and LonEast their longitudes. On a periodic grid the arc
	// may cross column NLon-1 to 0, in which case ColWest > ColEast; an
	// object touching every column has ColWest = 0 and ColEast = NLon-1
	// and LonSpan 360.
	ColWest, ColEast int
	LonWest, LonEast float64
	// LonSpan is the eastward extent in degrees from LonWest to LonEast
	// (pixel centres), or 360 for an object touching every column.
	LonSpan float64
}

// Labelling is the result of Components.
type Labelling struct {
	// Labels holds, per grid point in (lat, lon) order, 0 for background
	// or the 1-based label of the point's component.
	Labels []int32
	// Components is indexed by label-1.
	Components []Component

	start []int32 // component c's pixels are pix[start[c]:start[c+1]]
	pix   []int32 // pixel indices grouped by component, ascending within
}

// Pixels returns the flat indices of the pixels of the component with the
// given label, in ascending order. The slice is shared; do not modify it.
func (l *Labelling) Pixels(label int32) []int32 {
	c := int(label) - 1
	if c < 0 || c >= len(l.Components) {
		return nil
	}
	return l.pix[l.start[c]:l.start[c+1]]
}

// Equal returns the mask of points whose value equals v, e.g. the pixels of
// one class of a class mask.
func Equal(values []byte, v byte) []bool {
	m := make([]bool, len(values))
	for k, x := range values {
		m[k] = x == v
	}
	return m
}

// Components labels the connected components of mask (true = object), in
// (lat, lon) order. Points are connected to their 8 neighbours (edges and
// corners); on a periodic grid column NLon-1 neighbours column 0, so an
// object crossing the date line is one object. Connectivity never crosses a
// pole. Labels are 1..N in the order of each component's first pixel in
// row-major order, so the result does not depend on anything but the mask.
//
// Cost: one union-find pass (union by size, path halving) and one labelling
// pass, near-linear in the number of points; 4 bytes per point of scratch
// beside the 4-byte labels, and a sort of each component's distinct columns
// to find its longitude extent.
func (g *Grid) Components(mask []bool) (*Labelling, error) {
	n := g.Len()
	if len(mask) != n {
		return nil, fmt.Errorf("grid: mask has %d points, grid %dx%d has %d", len(mask), g.NLat(), g.NLon(), n)
	}
	if n > math.MaxInt32 {
		return nil, fmt.Errorf("grid: %d points is too many to label", n)
	}
	nlat, nlon := g.NLat(), g.NLon()
	parent := make([]int32, n)
	for k := range parent {
		parent[k] = -1 // every point starts as a root of size 1 (-size)
	}
	find := func(x int32) int32 {
		for parent[x] >= 0 {
			p := parent[x]
			if parent[p] >= 0 {
				parent[x] = parent[p]
			}
			x = p
		}
		return x
	}
	union := func(a, b int32) {
		ra, rb := find(a), find(b)
		if ra == rb {
			return
		}
		// parent[root] = -size; attach the smaller tree below the larger.
		if parent[ra] > parent[rb] {
			ra, rb = rb, ra
		}
		parent[ra] += parent[rb]
		parent[rb] = ra
	}
	// Scan in row-major order; join each object pixel with its already
	// visited neighbours W, NW, N, NE (each pair is met once). On a periodic
	// grid columns wrap; pairs met twice (narrow grids) are harmless.
	// Background entries of parent are never read.
	periodic := g.periodic
	for i := range nlat {
		row := i * nlon
		for j := range nlon {
			k := row + j
			if !mask[k] {
				continue
			}
			west, east := j-1, j+1
			if periodic {
				if west < 0 {
					west = nlon - 1
				}
				if east == nlon {
					east = 0
				}
			}
			// On a periodic grid column 0's west is column NLon-1, which
			// covers the wrap pair (NLon-1, 0) of this row.
			if west >= 0 && mask[row+west] {
				union(int32(k), int32(row+west))
			}
			if i == 0 {
				continue
			}
			up := row - nlon
			if mask[up+j] {
				union(int32(k), int32(up+j))
			}
			if west >= 0 && mask[up+west] {
				union(int32(k), int32(up+west))
			}
			if east < nlon && mask[up+east] {
				union(int32(k), int32(up+east))
			}
		}
	}
	return g.finishLabels(mask, parent)
}

// finishLabels turns the union-find forest into 1-based labels ordered by
// first pixel, groups the pixels by component and fills the statistics.
func (g *Grid) finishLabels(mask []bool, parent []int32) (*Labelling, error) {
	n := len(mask)
	labels := make([]int32, n)
	find := func(x int32) int32 {
		for parent[x] >= 0 {
			x = parent[x]
		}
		return x
	}
	// Roots hold negative sizes; map each root to its label by storing the
	// label in labels[root] as we meet components in row-major order.
	var count []int32
	for k := range n {
		if !mask[k] {
			continue
		}
		r := find(int32(k))
		if labels[r] == 0 {
			count = append(count, 0)
			labels[r] = int32(len(count))
		}
		l := labels[r]
		labels[k] = l
		count[l-1]++
	}
	nc := len(count)
	lab := &Labelling{Labels: labels, Components: make([]Component, nc), start: make([]int32, nc+1)}
	for c, m := range count {
		lab.start[c+1] = lab.start[c] + m
	}
	lab.pix = make([]int32, lab.start[nc])
	fill := append([]int32(nil), lab.start[:nc]...)
	for k, l := range labels {
		if l > 0 {
			lab.pix[fill[l-1]] = int32(k)
			fill[l-1]++
		}
	}
	rowArea := g.RowAreas()
	nlon := g.NLon()
	// Unit vectors per row and column, so the centroid sum costs a few
	// multiplications per pixel.
	sinLat := make([]float64, g.NLat())
	cosLat := make([]float64, g.NLat())
	for i, v := range g.Lat {
		sinLat[i], cosLat[i] = math.Sincos(v * deg2rad)
	}
	sinLon := make([]float64, nlon)
	cosLon := make([]float64, nlon)
	for j, v := range g.Lon {
		sinLon[j], cosLon[j] = math.Sincos(v * deg2rad)
	}
	stamp := make([]int32, nlon)
	var cols []int
	for c := range lab.Components {
		p := lab.pix[lab.start[c]:lab.start[c+1]]
		comp := &lab.Components[c]
		comp.Label = int32(c + 1)
		comp.First = int(p[0])
		comp.Pixels = len(p)
		comp.RowMin, comp.RowMax = int(p[0])/nlon, int(p[len(p)-1])/nlon
		var x, y, z, area float64
		cols = cols[:0]
		for _, k := range p {
			i, j := int(k)/nlon, int(k)%nlon
			a := rowArea[i]
			area += a
			x += a * cosLat[i] * cosLon[j]
			y += a * cosLat[i] * sinLon[j]
			z += a * sinLat[i]
			if stamp[j] != comp.Label {
				stamp[j] = comp.Label
				cols = append(cols, j)
			}
		}
		comp.Area = area
		comp.CentroidLat, comp.CentroidLon = vectorLatLon(x, y, z)
		comp.LatMin = math.Min(g.Lat[comp.RowMin], g.Lat[comp.RowMax])
		comp.LatMax = math.Max(g.Lat[comp.RowMin], g.Lat[comp.RowMax])
		sort.Ints(cols)
		comp.ColWest, comp.ColEast = g.lonExtent(cols)
		comp.LonWest, comp.LonEast = g.Lon[comp.ColWest], g.Lon[comp.ColEast]
		if len(cols) == nlon && g.periodic {
			comp.LonSpan = 360
		} else {
			comp.LonSpan = float64(g.colSpan(comp.ColWest, comp.ColEast)) * g.dlon
		}
	}
	return lab, nil
}

// colSpan is the number of column steps eastward from column w to column e.
func (g *Grid) colSpan(w, e int) int {
	d := e - w
	if d < 0 {
		d += g.NLon()
	}
	return d
}

// lonExtent returns the western and eastern column of the shortest arc
// holding the sorted distinct columns cols. On a periodic grid the arc is
// the complement of the largest circular gap between occupied columns (the
// first largest gap in column order, for determinism).
func (g *Grid) lonExtent(cols []int) (west, east int) {
	if !g.periodic || len(cols) == 1 {
		return cols[0], cols[len(cols)-1]
	}
	n := g.NLon()
	if len(cols) == n {
		return 0, n - 1
	}
	// Gap after the last column, wrapping to the first.
	best := cols[0] + n - cols[len(cols)-1]
	west, east = cols[0], cols[len(cols)-1]
	for k := 1; k < len(cols); k++ {
		if gap := cols[k] - cols[k-1]; gap > best {
			best = gap
			west, east = cols[k], cols[k-1]
		}
	}
	return west, east
}
