package grid

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sort"
)

// Shape is the extent of an object along its axis, for elongation criteria
// such as those used to detect atmospheric rivers.
type Shape struct {
	// Length is the largest great-circle distance in metres between two
	// pixel centres of the object (its spherical diameter), and Ends are
	// those two pixels (flat indices, the smaller first).
	Length float64
	Ends   [2]int
	// Area is the object's area in m^2 (sum of cell areas).
	Area float64
	// Width is Area / Length in metres and Ratio is Length / Width; both
	// are 0 for a one-pixel object, whose Length is 0.
	Width, Ratio float64
	// Axis is the bearing of the great circle through the two ends,
	// measured at their midpoint, in degrees clockwise from north folded to
	// [0, 180): 0 for a north-south object, 90 for an east-west one.
	Axis float64
}

// Shape measures the object made of the given pixels (flat indices, e.g.
// Labelling.Pixels; any order, no duplicates).
//
// The length is exact: the largest great-circle distance between pixel
// centres, found without comparing every pair.
//   - Candidates: when all pixel centres lie within a longitude arc shorter
//     than 180 degrees, the farthest pixel from any point, within one row,
//     is at an end of one of that row's runs of consecutive columns (the
//     distance to a point of a parallel grows with the longitude difference
//     up to 180 degrees), so only run ends are candidates. Otherwise every
//     pixel is.
//   - Search: a lower bound from two farthest-point sweeps, then row pairs
//     in decreasing order of an upper bound on their distance (from the two
//     latitudes and the largest longitude difference the rows allow); the
//     candidates of a row pair are compared only while the bound can still
//     beat the best pair, and the search stops at the first row pair that
//     cannot.
//
// Cost: O(P log P) to sort the pixels, O(R^2 log R) for R rows to order
// the row pairs, and pair comparisons (3 multiply-adds each) for the row
// pairs that survive the bound: for compact objects a few rows near each
// end of the axis. The worst case (a checkerboard object, where every pixel
// is a run) is quadratic in P.
func (g *Grid) Shape(pixels []int32) (Shape, error) {
	if len(pixels) == 0 {
		return Shape{}, fmt.Errorf("grid: shape of an empty object")
	}
	n := g.Len()
	pix := make([]int, len(pixels))
	for k, p := range pixels {
		if p < 0 || int(p) >= n {
			return Shape{}, fmt.Errorf("grid: pixel index %d outside the %dx%d grid", p, g.NLat(), g.NLon())
		}
		pix[k] = int(p)
	}
	sort.Ints(pix)
	rowArea := g.RowAreas()
	nlon := g.NLon()
	var s Shape
	cols := make([]int, 0, len(pix))
	seen := make([]bool, nlon)
	for k, p := range pix {
		if k > 0 && p == pix[k-1] {
			return Shape{}, fmt.Errorf("grid: pixel %d listed twice", p)
		}
		s.Area += rowArea[p/nlon]
		if c := p % nlon; !seen[c] {
			seen[c] = true
			cols = append(cols, c)
		}
	}
	sort.Ints(cols)
	west, east := g.lonExtent(cols)
	wide := len(cols) == nlon && g.periodic || float64(g.colSpan(west, east))*g.dlon >= 180

	// Candidates grouped by row, in row order.
	type row struct {
		lat, lo, hi float64 // lo, hi: unwrapped longitude range east of west
		first, end  int     // cand[first:end]
	}
	var rows []row
	var cand []int
	for k := 0; k < len(pix); {
		r := pix[k] / nlon
		start := len(cand)
		e := k
		for e < len(pix) && pix[e]/nlon == r {
			e++
		}
		// pix[k:e] is row r, columns ascending.
		for q := k; q < e; q++ {
			c := pix[q] % nlon
			runStart := q == k || pix[q-1]%nlon != c-1
			runEnd := q == e-1 || pix[q+1]%nlon != c+1
			if wide || runStart || runEnd {
				cand = append(cand, pix[q])
			}
		}
		rw := row{lat: g.Lat[r], lo: math.Inf(1), hi: math.Inf(-1), first: start, end: len(cand)}
		for _, p := range cand[start:] {
			u := float64(g.colSpan(west, p%nlon)) * g.dlon
			rw.lo = math.Min(rw.lo, u)
			rw.hi = math.Max(rw.hi, u)
		}
		rows = append(rows, rw)
		k = e
	}
	vec := make([][3]float64, len(cand))
	for k, p := range cand {
		i, j := p/nlon, p%nlon
		vec[k] = unitVector(g.Lat[i], g.Lon[j])
	}
	dot := func(a, b int) float64 {
		return vec[a][0]*vec[b][0] + vec[a][1]*vec[b][1] + vec[a][2]*vec[b][2]
	}
	// The farthest pair has the smallest dot product of unit vectors.
	farthest := func(a int) int {
		best, bd := a, 2.0
		for b := range vec {
			if d := dot(a, b); d < bd {
				best, bd = b, d
			}
		}
		return best
	}
	ea := farthest(0)
	eb := farthest(ea)
	bestDot := dot(ea, eb)

	type pair struct {
		r1, r2 int
		bound  float64 // lower bound on the dot product of the rows' points
	}
	// boundSlack absorbs rounding between the row bound and the vector dot
	// products (both near 1e-16), so no better pair is pruned.
	const boundSlack = 1e-12
	// Only row pairs whose bound can beat the two-sweep pair are kept.
	var pairs []pair
	sinLat := make([]float64, len(rows))
	cosLat := make([]float64, len(rows))
	for a := range rows {
		sinLat[a], cosLat[a] = math.Sincos(rows[a].lat * deg2rad)
	}
	for a := range rows {
		sa, ca := sinLat[a], cosLat[a]
		for b := a; b < len(rows); b++ {
			sb, cb := sinLat[b], cosLat[b]
			// Antipodal longitudes give the smallest possible dot product;
			// skip the cosine when even that cannot beat the best pair.
			if sa*sb-ca*cb > bestDot+boundSlack {
				continue
			}
			dl := 180.0
			if !wide {
				dl = math.Min(180, math.Max(rows[b].hi-rows[a].lo, rows[a].hi-rows[b].lo))
			}
			if bound := sa*sb + ca*cb*math.Cos(dl*deg2rad); bound <= bestDot+boundSlack {
				pairs = append(pairs, pair{a, b, bound})
			}
		}
	}
	slices.SortFunc(pairs, func(x, y pair) int {
		if c := cmp.Compare(x.bound, y.bound); c != 0 {
			return c
		}
		if c := cmp.Compare(x.r1, y.r1); c != 0 {
			return c
		}
		return cmp.Compare(x.r2, y.r2)
	})
	for _, pr := range pairs {
		if pr.bound > bestDot+boundSlack {
			break
		}
		ra, rb := rows[pr.r1], rows[pr.r2]
		for a := ra.first; a < ra.end; a++ {
			for b := rb.first; b < rb.end; b++ {
				if d := dot(a, b); d < bestDot {
					bestDot, ea, eb = d, a, b
				}
			}
		}
	}
	p1, p2 := cand[ea], cand[eb]
	if p1 > p2 {
		p1, p2 = p2, p1
	}
	s.Ends = [2]int{p1, p2}
	i1, j1 := g.RowCol(p1)
	i2, j2 := g.RowCol(p2)
	lat1, lon1, lat2, lon2 := g.Lat[i1], g.Lon[j1], g.Lat[i2], g.Lon[j2]
	s.Length = Distance(lat1, lon1, lat2, lon2)
	if s.Length > 0 {
		s.Width = s.Area / s.Length
		s.Ratio = s.Length / s.Width
		mlat, mlon := Midpoint(lat1, lon1, lat2, lon2)
		s.Axis = math.Mod(InitialBearing(mlat, mlon, lat2, lon2), 180)
	}
	return s, nil
}

// Flow is the mean of a vector field (such as IVT) over an object.
type Flow struct {
	// U and V are the area-weighted means of the eastward and northward
	// components over the object's pixels where both are finite. Averaging
	// components is the usual practice for objects of synoptic size; over
	// thousands of kilometres the local east and north directions turn,
	// so treat it as a summary, not a transport.
	U, V float64
	// Direction is the bearing toward which the mean vector points, in
	// degrees clockwise from north in [0, 360): atan2(U, V).
	Direction float64
	// Coherence is |mean vector| / mean |vector|: 1 when every vector
	// points the same way, near 0 when they cancel.
	Coherence float64
	// Aligned is the area fraction of the valid pixels whose own direction
	// is within the requested angle of Direction.
	Aligned float64
	// Valid is the number of pixels where both components are finite.
	Valid int
}

// MeanFlow averages the vector field (u, v), in (lat, lon) order, over the
// object's pixels, weighting by cell area; within (degrees) sets the angle
// used for Flow.Aligned. NaN components are skipped; with no valid pixel,
// Valid is 0 and the other fields are NaN.
func (g *Grid) MeanFlow(u, v []float64, pixels []int32, within float64) (Flow, error) {
	if len(u) != g.Len() || len(v) != g.Len() {
		return Flow{}, fmt.Errorf("grid: vector field has %d and %d points, grid has %d", len(u), len(v), g.Len())
	}
	rowArea := g.RowAreas()
	nlon := g.NLon()
	var su, sv, smag, sa float64
	var f Flow
	for _, p := range pixels {
		if p < 0 || int(p) >= len(u) {
			return Flow{}, fmt.Errorf("grid: pixel index %d outside the grid", p)
		}
		a, b := u[p], v[p]
		if math.IsNaN(a) || math.IsNaN(b) || math.IsInf(a, 0) || math.IsInf(b, 0) {
			continue
		}
		w := rowArea[int(p)/nlon]
		su += w * a
		sv += w * b
		smag += w * math.Hypot(a, b)
		sa += w
		f.Valid++
	}
	if f.Valid == 0 {
		nan := math.NaN()
		return Flow{U: nan, V: nan, Direction: nan, Coherence: nan, Aligned: nan}, nil
	}
	f.U, f.V = su/sa, sv/sa
	f.Direction = wrap360(math.Atan2(f.U, f.V) * rad2deg)
	if smag > 0 {
		f.Coherence = math.Hypot(su, sv) / smag
	}
	var aligned float64
	for _, p := range pixels {
		a, b := u[p], v[p]
		if math.IsNaN(a) || math.IsNaN(b) || math.IsInf(a, 0) || math.IsInf(b, 0) {
			continue
		}
		if DirectionDiff(math.Atan2(a, b)*rad2deg, f.Direction) <= within {
			aligned += rowArea[int(p)/nlon]
		}
	}
	f.Aligned = aligned / sa
	return f, nil
}

// DirectionDiff is the smallest angle in degrees, in [0, 180], between two
// bearings.
func DirectionDiff(a, b float64) float64 {
	return math.Abs(NormalizeLon180(b - a))
}

// AxisDiff is the smallest angle in degrees, in [0, 90], between two axes
// (undirected lines, bearings taken modulo 180), such as Shape.Axis and a
// flow direction.
func AxisDiff(a, b float64) float64 {
	d := math.Mod(math.Abs(b-a), 180)
	return math.Min(d, 180-d)
}
