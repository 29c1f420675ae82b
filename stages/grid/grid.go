package grid

import (
	"fmt"
	"math"
)

// SpacingTolerance is the largest relative departure of any coordinate
// step from the grid's mean step for the grid to count as regular. It is
// loose enough for coordinates stored as float32 (about 1e-4 relative on a
// 0.1 degree grid near 360) and tight enough to refuse Gaussian latitudes.
// The same relative tolerance (times the step) is used when comparing
// coordinates in SameAs and when deciding whether longitudes cover the
// globe.
const SpacingTolerance = 1e-3

// Grid is a regular latitude-longitude grid. Lat and Lon are the cell
// centres in degrees as given (copied by New); treat them as read-only.
type Grid struct {
	Lat []float64
	Lon []float64

	dlat     float64 // signed latitude step (negative for north-to-south)
	dlon     float64 // positive longitude step
	periodic bool
}

// New validates lat and lon and returns a Grid. Latitudes must lie in
// [-90, 90] and be strictly monotonic with regular spacing; longitudes must
// increase eastwards with regular spacing, where each step is taken modulo
// 360 (so 350, 355, 0, 5 is a valid regional grid crossing the prime
// meridian). At least two points are needed along each axis. A global grid
// must not repeat its first longitude at the end (0..360 inclusive).
func New(lat, lon []float64) (*Grid, error) {
	if len(lat) < 2 || len(lon) < 2 {
		return nil, fmt.Errorf("grid: need at least 2 latitudes and 2 longitudes, got %d x %d", len(lat), len(lon))
	}
	for i, v := range lat {
		if math.IsNaN(v) || v < -90-1e-9 || v > 90+1e-9 {
			return nil, fmt.Errorf("grid: latitude[%d] = %g is outside [-90, 90]", i, v)
		}
	}
	for j, v := range lon {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < -360 || v > 720 {
			return nil, fmt.Errorf("grid: longitude[%d] = %g is not a longitude in degrees", j, v)
		}
	}
	dlat := (lat[len(lat)-1] - lat[0]) / float64(len(lat)-1)
	if dlat == 0 {
		return nil, fmt.Errorf("grid: latitudes are not strictly monotonic (first and last are both %g)", lat[0])
	}
	for i := 1; i < len(lat); i++ {
		if step := lat[i] - lat[i-1]; step*dlat <= 0 {
			return nil, fmt.Errorf("grid: latitudes are not strictly monotonic at index %d (%g then %g)", i, lat[i-1], lat[i])
		}
	}
	for i := 1; i < len(lat); i++ {
		step := lat[i] - lat[i-1]
		if math.Abs(step-dlat) > SpacingTolerance*math.Abs(dlat) {
			return nil, fmt.Errorf("grid: latitudes are not regularly spaced: step %g at index %d differs from the mean step %g by more than %g of it (Gaussian or stretched grids are not supported; regrid to a regular grid first)",
				step, i, dlat, SpacingTolerance)
		}
	}
	steps := make([]float64, len(lon)-1)
	var total float64
	for j := 1; j < len(lon); j++ {
		s := math.Mod(lon[j]-lon[j-1], 360)
		if s < 0 {
			s += 360
		}
		if s == 0 {
			return nil, fmt.Errorf("grid: longitude %g repeats at index %d (a global grid must not repeat its first longitude at the end)", lon[j], j)
		}
		steps[j-1] = s
		total += s
	}
	dlon := total / float64(len(lon)-1)
	for j, s := range steps {
		if math.Abs(s-dlon) > SpacingTolerance*dlon {
			return nil, fmt.Errorf("grid: longitudes are not regularly spaced or do not increase eastwards: step %g at index %d differs from the mean step %g by more than %g of it",
				s, j+1, dlon, SpacingTolerance)
		}
	}
	span := dlon * float64(len(lon))
	if math.Abs(span-360-dlon) <= SpacingTolerance*dlon {
		return nil, fmt.Errorf("grid: the last longitude %g repeats the first %g (a global grid must not repeat its first longitude at the end; drop the last column)", lon[len(lon)-1], lon[0])
	}
	if span > 360+SpacingTolerance*dlon {
		return nil, fmt.Errorf("grid: %d longitudes at spacing %g would cover %g degrees, more than the globe (longitudes must increase eastwards)", len(lon), dlon, span)
	}
	g := &Grid{
		Lat:      append([]float64(nil), lat...),
		Lon:      append([]float64(nil), lon...),
		dlat:     dlat,
		dlon:     dlon,
		periodic: math.Abs(span-360) <= SpacingTolerance*dlon,
	}
	return g, nil
}

// Regular returns the grid with nlat latitudes from lat0 in steps of dlat
// (negative for north-to-south) and nlon longitudes from lon0 in steps of
// dlon. It is a convenience for tests and generators.
func Regular(lat0, dlat float64, nlat int, lon0, dlon float64, nlon int) (*Grid, error) {
	lat := make([]float64, nlat)
	for i := range lat {
		lat[i] = lat0 + float64(i)*dlat
	}
	lon := make([]float64, nlon)
	for j := range lon {
		lon[j] = lon0 + float64(j)*dlon
	}
	return New(lat, lon)
}

// Global returns the global grid of cell centres at the given spacing in
// degrees, south-to-north from -90+dlat/2 and eastwards from dlon/2: the
// common layout of 1x1 or 0.25x0.25 degree data. 180/dlat and 360/dlon must
// be whole numbers.
func Global(dlat, dlon float64) (*Grid, error) {
	nlat := int(math.Round(180 / dlat))
	nlon := int(math.Round(360 / dlon))
	if nlat < 2 || nlon < 2 || math.Abs(float64(nlat)*dlat-180) > 1e-9 || math.Abs(float64(nlon)*dlon-360) > 1e-9 {
		return nil, fmt.Errorf("grid: spacing %g x %g degrees does not divide the globe", dlat, dlon)
	}
	return Regular(-90+dlat/2, dlat, nlat, dlon/2, dlon, nlon)
}

// NLat is the number of latitudes (rows).
func (g *Grid) NLat() int { return len(g.Lat) }

// NLon is the number of longitudes (columns).
func (g *Grid) NLon() int { return len(g.Lon) }

// Len is the number of grid points, NLat*NLon.
func (g *Grid) Len() int { return len(g.Lat) * len(g.Lon) }

// Index is the flat index of row i (latitude) and column j (longitude).
func (g *Grid) Index(i, j int) int { return i*len(g.Lon) + j }

// RowCol is the inverse of Index.
func (g *Grid) RowCol(k int) (i, j int) { return k / len(g.Lon), k % len(g.Lon) }

// DLat is the latitude spacing in degrees (positive).
func (g *Grid) DLat() float64 { return math.Abs(g.dlat) }

// DLon is the longitude spacing in degrees (positive).
func (g *Grid) DLon() float64 { return g.dlon }

// NorthToSouth reports whether latitudes decrease with the row index.
func (g *Grid) NorthToSouth() bool { return g.dlat < 0 }

// Periodic reports whether the longitudes cover the whole globe, so that
// column NLon-1 neighbours column 0.
func (g *Grid) Periodic() bool { return g.periodic }

// LonConvention is "-180..180" when any longitude is negative and
// "0..360" otherwise.
func (g *Grid) LonConvention() string {
	for _, v := range g.Lon {
		if v < 0 {
			return "-180..180"
		}
	}
	return "0..360"
}

func (g *Grid) latOrder() string {
	if g.NorthToSouth() {
		return "north-to-south"
	}
	return "south-to-north"
}

// String describes the grid in one line, for messages.
func (g *Grid) String() string {
	kind := "regional"
	if g.periodic {
		kind = "global"
	}
	return fmt.Sprintf("%dx%d %s grid, lat %g..%g (%s, step %g), lon %g..%g (step %g, %s)",
		g.NLat(), g.NLon(), kind, g.Lat[0], g.Lat[len(g.Lat)-1], g.latOrder(), g.DLat(),
		g.Lon[0], g.Lon[len(g.Lon)-1], g.dlon, g.LonConvention())
}

// Locate returns the row and column of the cell containing the point, the
// nearest cell centre along each axis. ok is false when the point lies
// outside the grid's cells (more than half a step beyond the outer
// centres); on a periodic grid every longitude is inside.
func (g *Grid) Locate(lat, lon float64) (i, j int, ok bool) {
	if math.IsNaN(lat) || math.IsNaN(lon) {
		return 0, 0, false
	}
	const eps = 1e-9
	fi := (lat - g.Lat[0]) / g.dlat
	i = int(math.Round(fi))
	n := g.NLat()
	if i < 0 || i >= n {
		// Inside the outer half cell (clamped at the pole) still counts.
		lo, hi := g.rowBounds(min(max(i, 0), n-1))
		if lat < lo-eps || lat > hi+eps {
			return 0, 0, false
		}
		i = min(max(i, 0), n-1)
	}
	off := wrap360(lon - g.Lon[0])
	m := g.NLon()
	fj := off / g.dlon
	j = int(math.Round(fj))
	if g.periodic {
		return i, j % m, true
	}
	switch {
	case j <= m-1:
		return i, j, true
	case off <= float64(m-1)*g.dlon+g.dlon/2+eps:
		return i, m - 1, true
	case 360-off <= g.dlon/2+eps:
		return i, 0, true
	}
	return 0, 0, false
}

// SameAs returns nil when other has the same points as g (within
// SpacingTolerance of a step), and otherwise an error saying what differs:
// size, latitude order, latitude values, longitude convention or longitude
// values.
func (g *Grid) SameAs(other *Grid) error {
	if other == nil {
		return fmt.Errorf("grid mismatch: no grid to compare with %s", g)
	}
	if g.NLat() != other.NLat() || g.NLon() != other.NLon() {
		return fmt.Errorf("grid mismatch: size %dx%d (lat x lon) vs %dx%d", g.NLat(), g.NLon(), other.NLat(), other.NLon())
	}
	if g.NorthToSouth() != other.NorthToSouth() {
		return fmt.Errorf("grid mismatch: latitude order %s vs %s (flip one along latitude)", g.latOrder(), other.latOrder())
	}
	tlat := SpacingTolerance * g.DLat()
	for i := range g.Lat {
		if math.Abs(g.Lat[i]-other.Lat[i]) > tlat {
			return fmt.Errorf("grid mismatch: latitude[%d] %g vs %g", i, g.Lat[i], other.Lat[i])
		}
	}
	tlon := SpacingTolerance * g.dlon
	for j := range g.Lon {
		if math.Abs(g.Lon[j]-other.Lon[j]) <= tlon {
			continue
		}
		if g.sameLonsRotated(other, tlon) {
			return fmt.Errorf("grid mismatch: longitude convention %s vs %s: the same longitudes in a different column order (longitude[%d] %g vs %g; normalise one of them)",
				g.LonConvention(), other.LonConvention(), j, g.Lon[j], other.Lon[j])
		}
		return fmt.Errorf("grid mismatch: longitude[%d] %g vs %g", j, g.Lon[j], other.Lon[j])
	}
	return nil
}

// sameLonsRotated reports whether other's longitudes are g's modulo 360,
// possibly starting at another column: the same points written in another
// longitude convention.
func (g *Grid) sameLonsRotated(other *Grid, tol float64) bool {
	n := g.NLon()
	s := -1
	for j := range g.Lon {
		if math.Abs(LonDiff(g.Lon[j], other.Lon[0])) <= tol {
			s = j
			break
		}
	}
	if s < 0 {
		return false
	}
	for j := range other.Lon {
		if math.Abs(LonDiff(g.Lon[(j+s)%n], other.Lon[j])) > tol {
			return false
		}
	}
	return true
}
