package ncio

import (
	"fmt"
	"math"
	"strings"
)

// LonConvention says which longitude range a grid uses.
type LonConvention int

const (
	// LonEither: every longitude is within 0..180, so both conventions
	// hold (a regional grid east of Greenwich).
	LonEither LonConvention = iota
	// Lon0To360: some longitude is above 180 (and none is negative).
	Lon0To360
	// LonMinus180To180: some longitude is negative.
	LonMinus180To180
)

func (c LonConvention) String() string {
	switch c {
	case Lon0To360:
		return "0..360"
	case LonMinus180To180:
		return "-180..180"
	}
	return "0..180 (either)"
}

// Grid is a regular or irregular latitude-longitude grid described by two
// 1-D coordinate variables.
type Grid struct {
	LatVar, LonVar string    // coordinate variable names
	LatDim, LonDim string    // their dimensions (usually the same names)
	Lat, Lon       []float64 // degrees north and east, in file order
	// LatDescending is true when latitudes run north to south.
	LatDescending bool
	// Lon is the longitude convention of the file.
	LonConv LonConvention
	// Global is true when the longitudes are evenly spaced and cover the
	// full circle, so the grid is periodic in longitude.
	Global bool
}

// NY and NX return the number of latitudes and longitudes.
func (g Grid) NY() int { return len(g.Lat) }

// NX returns the number of longitudes.
func (g Grid) NX() int { return len(g.Lon) }

// WrapLon maps any longitude into the grid's convention (0..360 or
// -180..180; LonEither uses -180..180).
func (g Grid) WrapLon(x float64) float64 {
	if g.LonConv == Lon0To360 {
		x = math.Mod(x, 360)
		if x < 0 {
			x += 360
		}
		return x
	}
	x = math.Mod(x+180, 360)
	if x < 0 {
		x += 360
	}
	return x - 180
}

var latUnits = map[string]bool{"degrees_north": true, "degree_north": true, "degree_n": true, "degrees_n": true, "degreen": true, "degreesn": true}
var lonUnits = map[string]bool{"degrees_east": true, "degree_east": true, "degree_e": true, "degrees_e": true, "degreee": true, "degreese": true}

// coordKind classifies a 1-D variable as "lat", "lon" or "".
func coordKind(v *Var) string {
	if len(v.dims) != 1 {
		return ""
	}
	sn := v.StandardName()
	units := strings.ToLower(v.Units())
	axis := strings.ToUpper(v.AttrString("axis"))
	name := strings.ToLower(v.name)
	switch {
	case sn == "latitude", latUnits[units]:
		return "lat"
	case sn == "longitude", lonUnits[units]:
		return "lon"
	case sn != "" || (units != "" && !strings.HasPrefix(units, "degree")):
		// Another standard name (grid_latitude, projection_y_coordinate)
		// or units like metres: not geographic coordinates.
		return ""
	case axis == "Y", name == "lat", name == "latitude", name == "lats", name == "nav_lat":
		return "lat"
	case axis == "X", name == "lon", name == "longitude", name == "lons", name == "nav_lon":
		return "lon"
	}
	return ""
}

// Grid finds the latitude and longitude coordinates of the file: 1-D
// variables with standard_name latitude/longitude, units degrees_north/
// degrees_east, axis Y/X, or the names lat/lon/latitude/longitude, in
// that order of trust. Coordinate variables (named like their dimension)
// win over other 1-D variables.
func (f *File) Grid() (Grid, error) {
	return f.findGrid(nil)
}

// GridOf finds the latitude and longitude coordinates among the
// dimensions of v.
func (f *File) GridOf(v *Var) (Grid, error) {
	return f.findGrid(v.dims)
}

func (f *File) findGrid(onDims []string) (Grid, error) {
	allowed := func(dim string) bool {
		if onDims == nil {
			return true
		}
		for _, d := range onDims {
			if d == dim {
				return true
			}
		}
		return false
	}
	pick := func(kind string) *Var {
		var other *Var
		for _, v := range f.vars {
			if coordKind(v) != kind || !allowed(v.dims[0]) {
				continue
			}
			if v.name == v.dims[0] {
				return v
			}
			if other == nil {
				other = v
			}
		}
		return other
	}
	lat, lon := pick("lat"), pick("lon")
	scope := ""
	if onDims != nil {
		scope = fmt.Sprintf(" among dimensions (%s)", strings.Join(onDims, ", "))
	}
	if lat == nil || lon == nil {
		missing := "latitude"
		if lat != nil {
			missing = "longitude"
		}
		return Grid{}, &Error{Op: "find grid", Path: f.path, Err: fmt.Errorf("no %s coordinate%s: %w", missing, scope, ErrNotFound),
			Hint: "expected a 1-D variable with standard_name latitude/longitude or units degrees_north/degrees_east; the file has " + f.describeVars()}
	}
	g := Grid{LatVar: lat.name, LonVar: lon.name, LatDim: lat.dims[0], LonDim: lon.dims[0]}
	var err error
	if g.Lat, err = lat.ReadFloat64(nil, nil); err != nil {
		return Grid{}, err
	}
	if g.Lon, err = lon.ReadFloat64(nil, nil); err != nil {
		return Grid{}, err
	}
	bad := func(v string, e error) error {
		return &Error{Op: "check grid", Path: f.path, Var: v, Err: e}
	}
	for _, x := range g.Lat {
		if math.IsNaN(x) || x < -90-1e-6 || x > 90+1e-6 {
			return Grid{}, bad(lat.name, fmt.Errorf("latitude %v outside -90..90", x))
		}
	}
	dir, ok := monotonic(g.Lat)
	if !ok {
		return Grid{}, bad(lat.name, fmt.Errorf("latitudes are not strictly monotonic"))
	}
	g.LatDescending = dir < 0
	if dir, ok := monotonic(g.Lon); !ok || dir < 0 {
		return Grid{}, bad(lon.name, fmt.Errorf("longitudes are not strictly increasing"))
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range g.Lon {
		if math.IsNaN(x) {
			return Grid{}, bad(lon.name, fmt.Errorf("longitude is a fill value"))
		}
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	// A repeated cyclic column (0..360 inclusive, or 30..390 as in some
	// climatologies) spans exactly 360 degrees and is accepted.
	if lo < -360 || hi > 720 || hi-lo > 360+1e-6 {
		return Grid{}, bad(lon.name, fmt.Errorf("longitudes %v..%v span more than 360 degrees", lo, hi))
	}
	switch {
	case lo < 0:
		g.LonConv = LonMinus180To180
	case hi > 180:
		g.LonConv = Lon0To360
	}
	g.Global = isGlobal(g.Lon)
	return g, nil
}

// monotonic returns +1 or -1 for strictly increasing or decreasing values
// (a single value counts as increasing).
func monotonic(xs []float64) (int, bool) {
	if len(xs) < 2 {
		return 1, true
	}
	dir := 1
	if xs[1] < xs[0] {
		dir = -1
	}
	for i := 1; i < len(xs); i++ {
		d := xs[i] - xs[i-1]
		if d == 0 || (d > 0) != (dir > 0) {
			return 0, false
		}
	}
	return dir, true
}

// isGlobal: evenly spaced (to 1e-3 of the step) and n*step = 360 (to 1e-3
// of the step).
func isGlobal(lon []float64) bool {
	n := len(lon)
	if n < 2 {
		return false
	}
	step := (lon[n-1] - lon[0]) / float64(n-1)
	const tol = 1e-3 // fraction of a step; float32 coordinates are rounded
	for i := 1; i < n; i++ {
		if math.Abs(lon[i]-lon[i-1]-step) > tol*step {
			return false
		}
	}
	return math.Abs(float64(n)*step-360) <= tol*step
}
