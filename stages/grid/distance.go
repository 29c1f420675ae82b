package grid

import "math"

const (
	deg2rad = math.Pi / 180
	rad2deg = 180 / math.Pi
)

// CentralAngle is the angle in radians subtended at the centre of the
// sphere by two points (degrees), from the special case of Vincenty's
// formula for a sphere:
//
//	dlon = lon2 - lon1
//	y = sqrt((cos lat2 sin dlon)^2 + (cos lat1 sin lat2 - sin lat1 cos lat2 cos dlon)^2)
//	x = sin lat1 sin lat2 + cos lat1 cos lat2 cos dlon
//	angle = atan2(y, x)
//
// Unlike the spherical law of cosines (acos of x) it keeps full relative
// precision for nearby points, and unlike the haversine form it stays
// accurate for nearly antipodal points.
func CentralAngle(lat1, lon1, lat2, lon2 float64) float64 {
	p1, p2 := lat1*deg2rad, lat2*deg2rad
	dl := (lon2 - lon1) * deg2rad
	s1, c1 := math.Sincos(p1)
	s2, c2 := math.Sincos(p2)
	sd, cd := math.Sincos(dl)
	a := c2 * sd
	b := c1*s2 - s1*c2*cd
	return math.Atan2(math.Hypot(a, b), s1*s2+c1*c2*cd)
}

// Distance is the great-circle distance in metres between two points
// (degrees) on the sphere of radius EarthRadius: R times CentralAngle.
func Distance(lat1, lon1, lat2, lon2 float64) float64 {
	return EarthRadius * CentralAngle(lat1, lon1, lat2, lon2)
}

// InitialBearing is the direction in degrees clockwise from north, in
// [0, 360), in which the great circle from point 1 to point 2 leaves point 1:
//
//	bearing = atan2(sin dlon cos lat2, cos lat1 sin lat2 - sin lat1 cos lat2 cos dlon)
//
// It is 0 for coincident points and meaningless at a pole.
func InitialBearing(lat1, lon1, lat2, lon2 float64) float64 {
	p1, p2 := lat1*deg2rad, lat2*deg2rad
	dl := (lon2 - lon1) * deg2rad
	s1, c1 := math.Sincos(p1)
	s2, c2 := math.Sincos(p2)
	sd, cd := math.Sincos(dl)
	b := math.Atan2(sd*c2, c1*s2-s1*c2*cd) * rad2deg
	return wrap360(b)
}

// Destination is the point reached from (lat, lon) by travelling dist
// metres along the great circle leaving in direction bearing (degrees
// clockwise from north). With d = dist/R and t = bearing:
//
//	lat2 = asin(sin lat cos d + cos lat sin d cos t)
//	lon2 = lon + atan2(sin t sin d cos lat, cos d - sin lat sin lat2)
//
// lon2 is returned in [-180, 180).
func Destination(lat, lon, bearing, dist float64) (lat2, lon2 float64) {
	p := lat * deg2rad
	t := bearing * deg2rad
	d := dist / EarthRadius
	sp, cp := math.Sincos(p)
	st, ct := math.Sincos(t)
	sd, cd := math.Sincos(d)
	s2 := sp*cd + cp*sd*ct
	s2 = math.Max(-1, math.Min(1, s2))
	p2 := math.Asin(s2)
	l2 := lon*deg2rad + math.Atan2(st*sd*cp, cd-sp*s2)
	return p2 * rad2deg, NormalizeLon180(l2 * rad2deg)
}

// Midpoint is the point halfway along the shorter great-circle arc between
// two points: the normalised sum of their unit vectors. It is undefined
// for antipodal points (the result is then one of the poles' longitudes,
// arbitrary). lon is in [-180, 180].
func Midpoint(lat1, lon1, lat2, lon2 float64) (lat, lon float64) {
	a := unitVector(lat1, lon1)
	b := unitVector(lat2, lon2)
	return vectorLatLon(a[0]+b[0], a[1]+b[1], a[2]+b[2])
}

// unitVector is the point's position on the unit sphere:
// (cos lat cos lon, cos lat sin lon, sin lat).
func unitVector(lat, lon float64) [3]float64 {
	sp, cp := math.Sincos(lat * deg2rad)
	sl, cl := math.Sincos(lon * deg2rad)
	return [3]float64{cp * cl, cp * sl, sp}
}

// vectorLatLon is the latitude and longitude (degrees) of the direction of
// (x, y, z): lat = atan2(z, hypot(x, y)), lon = atan2(y, x).
func vectorLatLon(x, y, z float64) (lat, lon float64) {
	return math.Atan2(z, math.Hypot(x, y)) * rad2deg, math.Atan2(y, x) * rad2deg
}

// wrap360 maps an angle in degrees to [0, 360).
func wrap360(x float64) float64 {
	x = math.Mod(x, 360)
	if x < 0 {
		x += 360
	}
	if x >= 360 { // -tiny + 360 rounds to 360
		x = 0
	}
	return x
}

// NormalizeLon360 maps a longitude in degrees to [0, 360).
func NormalizeLon360(lon float64) float64 { return wrap360(lon) }

// NormalizeLon180 maps a longitude in degrees to [-180, 180).
func NormalizeLon180(lon float64) float64 {
	return wrap360(lon+180) - 180
}

// LonDiff is the signed eastward difference b - a in degrees, in
// [-180, 180): the shorter way round.
func LonDiff(a, b float64) float64 { return NormalizeLon180(b - a) }

// Box is a latitude-longitude box in degrees. It has the fields of
// pipeline.Box in the same order, so a campaign region's box converts
// directly: grid.Box(*region.Box). (grid does not import pipeline, so that
// the geometry builds and tests on its own.)
type Box struct {
	LatMin float64
	LatMax float64
	LonMin float64
	LonMax float64
}

// InBox reports whether the point lies in the box, edges included.
// Longitudes of the point and the box may use either convention; a box
// whose LonMin is greater than LonMax crosses the antimeridian (170 to -170
// is 20 degrees wide), and a box at least 360 degrees wide (such as -180 to
// 180 or 0 to 360) holds every longitude. The rule: the point is in when
// (lon - LonMin) mod 360 <= (LonMax - LonMin) mod 360.
func InBox(lat, lon float64, b Box) bool {
	if !(lat >= b.LatMin && lat <= b.LatMax) {
		return false
	}
	w := b.LonMax - b.LonMin
	if w >= 360 {
		return true
	}
	if w < 0 {
		w += 360
	}
	// Compare in [0, 360) relative to the western edge; w itself is not
	// wrapped so that a box whose width is exactly 0 (LonMin = LonMax) is a
	// meridian, not the globe.
	return wrap360(lon-b.LonMin) <= w
}

// BoxMask returns, in (lat, lon) order, whether each cell centre lies in the
// box (InBox).
func (g *Grid) BoxMask(b Box) []bool {
	m := make([]bool, g.Len())
	n := g.NLon()
	for i, lat := range g.Lat {
		for j, lon := range g.Lon {
			m[i*n+j] = InBox(lat, lon, b)
		}
	}
	return m
}
