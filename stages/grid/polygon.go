package grid

import (
	"fmt"
	"math"
	"sort"
)

// Polygon is a GeoJSON polygon (RFC 7946 section 3.1.6) prepared for
// point-in-polygon tests: an outer ring and optional holes, each a list of
// [lon, lat] positions in degrees.
//
// # The rule
//
// As RFC 7946 section 3.1.1 prescribes, an edge between two positions is a
// straight line in longitude-latitude coordinates (not a great-circle arc).
// Rings may cross the antimeridian: each ring's longitudes are unwrapped
// relative to its first position, every step taken the shorter way round
// (consecutive positions must be less than 180 degrees apart in
// longitude), so 170, 180, -170 becomes 170, 180, 190. A point is then
// tested at each of its longitudes lon + 360k that fall within the ring's
// unwrapped longitude range, with the even-odd rule (a ray towards
// increasing longitude crosses the ring an odd number of times; an edge
// counts when exactly one of its ends lies strictly north of the point).
// Points exactly on an edge may fall either way.
//
// A ring whose unwrapped longitudes end 360 degrees from where they began
// goes once around a pole: it is closed through the pole on the side of its
// mean vertex latitude (a ring along 60N encloses the North Pole), whatever
// its orientation. Such a ring with mean latitude exactly 0 is refused as
// ambiguous. A point is in the polygon when it is in the outer ring and in
// none of the holes. Ring orientation is otherwise ignored (RFC 7946 asks
// parsers not to reject polygons that break the right-hand rule).
type Polygon struct {
	rings []ring // rings[0] is the outer boundary
}

type ring struct {
	x, y       []float64 // unwrapped lon, lat; closed (last = first)
	xmin, xmax float64
}

// NewPolygon prepares a polygon from GeoJSON rings: rings[0] the outer
// boundary, the rest holes. Rings need at least 3 distinct positions; the
// closing position (equal to the first) may be given or omitted.
func NewPolygon(rings [][][2]float64) (*Polygon, error) {
	if len(rings) == 0 {
		return nil, fmt.Errorf("polygon: no rings")
	}
	p := &Polygon{}
	for r, pos := range rings {
		rg, err := newRing(pos)
		if err != nil {
			what := "outer ring"
			if r > 0 {
				what = fmt.Sprintf("hole %d", r)
			}
			return nil, fmt.Errorf("polygon: %s: %w", what, err)
		}
		p.rings = append(p.rings, rg)
	}
	return p, nil
}

func newRing(pos [][2]float64) (ring, error) {
	n := len(pos)
	if n > 0 && pos[0] == pos[n-1] {
		n-- // drop the explicit closing position; we close below
	}
	if n < 3 {
		return ring{}, fmt.Errorf("a ring needs at least 3 distinct positions, got %d", n)
	}
	x := make([]float64, 0, n+4)
	y := make([]float64, 0, n+4)
	var latSum float64
	for k := range n {
		lon, lat := pos[k][0], pos[k][1]
		if math.IsNaN(lon) || math.IsInf(lon, 0) || !(lat >= -90 && lat <= 90) {
			return ring{}, fmt.Errorf("position %d [%g, %g] is not a longitude-latitude pair", k, lon, lat)
		}
		latSum += lat
		if k == 0 {
			x = append(x, lon)
		} else {
			d := LonDiff(pos[k-1][0], lon)
			if d == -180 {
				return ring{}, fmt.Errorf("positions %d and %d are 180 degrees apart in longitude; the edge between them is ambiguous (add a position between them)", k-1, k)
			}
			x = append(x, x[k-1]+d)
		}
		y = append(y, lat)
	}
	// Closing step back to the first position.
	d := LonDiff(pos[n-1][0], pos[0][0])
	if d == -180 {
		return ring{}, fmt.Errorf("the last and first positions are 180 degrees apart in longitude; the closing edge is ambiguous")
	}
	end := x[n-1] + d
	turns := math.Round((end - x[0]) / 360)
	switch turns {
	case 0:
		x = append(x, x[0])
		y = append(y, y[0])
	case 1, -1:
		mean := latSum / float64(n)
		if mean == 0 {
			return ring{}, fmt.Errorf("the ring goes around the globe with mean latitude 0, so the pole it encloses is ambiguous (split it into two polygons)")
		}
		pole := math.Copysign(90, mean)
		x = append(x, end, end, x[0], x[0])
		y = append(y, y[0], pole, pole, y[0])
	default:
		return ring{}, fmt.Errorf("the ring winds %g times around the globe", math.Abs(turns))
	}
	rg := ring{x: x, y: y, xmin: math.Inf(1), xmax: math.Inf(-1)}
	for _, v := range x {
		rg.xmin = math.Min(rg.xmin, v)
		rg.xmax = math.Max(rg.xmax, v)
	}
	return rg, nil
}

// crossings appends the longitudes at which the ring's edges cross the
// parallel lat (edges with exactly one end strictly north of lat) and
// returns them sorted.
func (r *ring) crossings(lat float64, buf []float64) []float64 {
	buf = buf[:0]
	for k := 0; k+1 < len(r.x); k++ {
		x1, y1, x2, y2 := r.x[k], r.y[k], r.x[k+1], r.y[k+1]
		if (y1 > lat) != (y2 > lat) {
			buf = append(buf, x1+(lat-y1)*(x2-x1)/(y2-y1))
		}
	}
	sort.Float64s(buf)
	return buf
}

// containsOnParallel reports whether longitude lon is inside the ring,
// given the ring's sorted crossings of the point's parallel.
func (r *ring) containsOnParallel(lon float64, cross []float64) bool {
	if len(cross) == 0 {
		return false
	}
	// First shift of lon at or east of xmin.
	x := r.xmin + wrap360(lon-r.xmin)
	for ; x <= r.xmax; x += 360 {
		// Crossings strictly east of x.
		east := len(cross) - sort.Search(len(cross), func(k int) bool { return cross[k] > x })
		if east%2 == 1 {
			return true
		}
	}
	return false
}

// Contains reports whether the point (degrees, any longitude convention)
// lies in the polygon. Cost: O(V log V) for V vertices; use Grid.PolygonMask
// for many points.
func (p *Polygon) Contains(lat, lon float64) bool {
	var buf []float64
	for k := range p.rings {
		r := &p.rings[k]
		buf = r.crossings(lat, buf)
		in := r.containsOnParallel(lon, buf)
		if k == 0 && !in {
			return false
		}
		if k > 0 && in {
			return false
		}
	}
	return true
}

// PolygonMask returns, in (lat, lon) order, whether each cell centre lies
// in any of the polygons (a GeoJSON MultiPolygon, or a region made of
// several polygons). Cost: O(NLat V log V + NLat NLon log V) for V
// vertices in all, since each row's crossings are found once.
func (g *Grid) PolygonMask(polys ...*Polygon) []bool {
	m := make([]bool, g.Len())
	n := g.NLon()
	var cross [][]float64
	for i, lat := range g.Lat {
		for _, p := range polys {
			cross = cross[:0]
			for k := range p.rings {
				cross = append(cross, p.rings[k].crossings(lat, nil))
			}
			for j, lon := range g.Lon {
				if m[i*n+j] {
					continue
				}
				in := p.rings[0].containsOnParallel(lon, cross[0])
				for k := 1; in && k < len(p.rings); k++ {
					if p.rings[k].containsOnParallel(lon, cross[k]) {
						in = false
					}
				}
				m[i*n+j] = in
			}
		}
	}
	return m
}

// RegionMask returns, in (lat, lon) order, whether each cell centre lies in
// a campaign region given as a box (box may be nil) and/or GeoJSON polygons
// (each a list of rings): a cell is in the region when it is in the box or
// in any polygon. A pipeline.Region converts directly:
// g.RegionMask((*grid.Box)(r.Box), r.Polygons). Errors name the polygon.
func (g *Grid) RegionMask(box *Box, polygons [][][][2]float64) ([]bool, error) {
	if box == nil && len(polygons) == 0 {
		return nil, fmt.Errorf("grid: region has neither a box nor polygons")
	}
	var m []bool
	if box != nil {
		if !(box.LatMin <= box.LatMax) {
			return nil, fmt.Errorf("grid: region box lat_min %g is above lat_max %g", box.LatMin, box.LatMax)
		}
		m = g.BoxMask(*box)
	}
	if len(polygons) > 0 {
		ps := make([]*Polygon, len(polygons))
		for k, rings := range polygons {
			p, err := NewPolygon(rings)
			if err != nil {
				return nil, fmt.Errorf("grid: region polygon %d: %w", k, err)
			}
			ps[k] = p
		}
		pm := g.PolygonMask(ps...)
		if m == nil {
			m = pm
		} else {
			for k := range m {
				m[k] = m[k] || pm[k]
			}
		}
	}
	return m, nil
}
