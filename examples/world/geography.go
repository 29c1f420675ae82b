package world

import (
	"encoding/json"
	"math"
)

// The invented world around the Halcyon Basin, an ocean between two
// continents. Positions are degrees north and degrees east.
//
//	Orvania        continent along the western edge, with the Greyspine
//	               Range (up to 2.4 km) a few degrees inland
//	Kessary        continent across the north-east, low hills
//	Isle of Maren  a large island in the mid-latitudes
//	Serrat Islands a tropical archipelago of five small islands
const (
	Orvania       = "Orvania"
	Kessary       = "Kessary"
	IsleOfMaren   = "Isle of Maren"
	SerratIslands = "Serrat Islands"
)

// Landmasses lists the names of the world's land, in a fixed order.
var Landmasses = []string{Orvania, Kessary, IsleOfMaren, SerratIslands}

// orvaniaCoast is the longitude of Orvania's east coast at latitude lat.
func orvaniaCoast(lat float64) float64 {
	return 63 + 2.5*math.Sin(lat/5.5) + 1.5*math.Sin(lat/2.3+1)
}

// kessaryCoast is the latitude of Kessary's south coast at longitude lon.
func kessaryCoast(lon float64) float64 {
	return 47 - 0.12*(lon-85) + 1.5*math.Sin(lon/3.1)
}

var serratIslands = [...]struct{ lat, lon, radius float64 }{
	{18.5, 74.0, 1.1},
	{20.2, 78.6, 0.8},
	{21.4, 83.2, 1.3},
	{19.0, 87.3, 0.7},
	{17.1, 91.6, 0.9},
}

// landness is positive over land and negative over the sea; its magnitude
// is roughly the distance to the coast in degrees. It also returns the
// index in Landmasses of the nearest land (-1 when far from every coast
// does not matter: the index is always of the largest landness).
func landness(lat, lon float64) (float64, int) {
	best, which := math.Inf(-1), -1
	try := func(v float64, k int) {
		if v > best {
			best, which = v, k
		}
	}
	// Orvania: west of its coast, north of a southern cape near 9N.
	try(math.Min(orvaniaCoast(lat)-lon, lat-(9+2*math.Sin(lon/4))), 0)
	// Kessary: north of its coast, east of a western cape near 78E.
	try(math.Min(lat-kessaryCoast(lon), lon-78), 1)
	// Isle of Maren: an ellipse 4 x 2.2 degrees with a ragged shore.
	dl, dp := (lon-107)/4.0, (lat-33.5)/2.2
	try(2.2*(1-math.Sqrt(dl*dl+dp*dp))+0.25*math.Sin(3*math.Atan2(dp, dl)), 2)
	// Serrat Islands: small round islands.
	for _, s := range serratIslands {
		dl := (lon - s.lon) * math.Cos(s.lat*math.Pi/180)
		try(s.radius-math.Hypot(lat-s.lat, dl), 3)
	}
	return best, which
}

// IsLand reports whether a point is on land.
func IsLand(lat, lon float64) bool { v, _ := landness(lat, lon); return v > 0 }

// LandmassAt names the land at a point, or "" over the sea.
func LandmassAt(lat, lon float64) string {
	v, k := landness(lat, lon)
	if v <= 0 {
		return ""
	}
	return Landmasses[k]
}

// surfaceAltitude is the height of the ground in m (0 over the sea).
func surfaceAltitude(lat, lon float64) float64 {
	v, k := landness(lat, lon)
	if v <= 0 {
		return 0
	}
	rise := math.Min(1, v/1.5) // the land rises over the first 1.5 degrees inland
	z := 120 * rise
	switch k {
	case 0: // Greyspine Range, 6 degrees west of the coast, 20-48N
		ridge := orvaniaCoast(lat) - 6
		d := (lon - ridge) / 2.2
		along := smoothstep((lat-17)/6) * smoothstep((50-lat)/6)
		z += 2300 * math.Exp(-d*d) * along * rise
	case 1: // Ashfold Hills of Kessary
		d := (lat - kessaryCoast(lon) - 5) / 2.5
		z += 700 * math.Exp(-d*d) * rise
	case 2: // a central peak on Maren
		z += 500 * rise
	}
	return z
}

// landFraction is the fraction of the cell of size res centred at
// (lat, lon) that is land, from a sub x sub sample of points.
func landFraction(lat, lon, res float64) float64 {
	const sub = 6
	n := 0
	for a := 0; a < sub; a++ {
		for b := 0; b < sub; b++ {
			la := lat + res*((float64(a)+0.5)/sub-0.5)
			lo := lon + res*((float64(b)+0.5)/sub-0.5)
			if IsLand(la, lo) {
				n++
			}
		}
	}
	return float64(n) / (sub * sub)
}

// Region is a named area of the world for regional statistics.
type Region struct {
	Name  string       // short identifier, lower case
	Title string       // for people
	Ring  [][2]float64 // exterior ring, [lon, lat], counterclockwise, closed
}

// Regions are the named areas written to regions.geojson.
var Regions = []Region{
	{"orvania_coast", "Orvania east coast and its shelf", [][2]float64{{57, 8}, {70, 8}, {70, 46}, {61, 51}, {57, 46}, {57, 8}}},
	{"serrat_sea", "Serrat Sea around the Serrat Islands", [][2]float64{{68, 12}, {96, 12}, {96, 26}, {68, 26}, {68, 12}}},
	{"maren", "Isle of Maren and its waters", [][2]float64{{98, 28}, {117, 28}, {117, 40}, {98, 40}, {98, 28}}},
	{"kessary_shore", "Kessary south shore", [][2]float64{{78, 39}, {131, 34}, {131, 54}, {78, 54}, {78, 39}}},
	{"halcyon_basin", "Open Halcyon Basin", [][2]float64{{66, 5}, {131, 5}, {131, 36}, {96, 44}, {66, 44}, {66, 5}}},
}

// RegionsAt lists the names of the regions containing a point.
func RegionsAt(lat, lon float64) []string {
	var names []string
	for _, r := range Regions {
		if inRing(r.Ring, lon, lat) {
			names = append(names, r.Name)
		}
	}
	return names
}

// inRing is the even-odd point-in-polygon test.
func inRing(ring [][2]float64, x, y float64) bool {
	in := false
	for i, j := 0, len(ring)-1; i < len(ring); j, i = i, i+1 {
		xi, yi, xj, yj := ring[i][0], ring[i][1], ring[j][0], ring[j][1]
		if (yi > y) != (yj > y) && x < (xj-xi)*(y-yi)/(yj-yi)+xi {
			in = !in
		}
	}
	return in
}

// RegionsGeoJSON encodes Regions as an RFC 7946 FeatureCollection of
// Polygons with properties name and title. The world lies between 40E and
// 140E, so no ring crosses the antimeridian and the longitudes are valid in
// both the 0..360 and the -180..180 conventions.
func RegionsGeoJSON() ([]byte, error) {
	type geometry struct {
		Type        string         `json:"type"`
		Coordinates [][][2]float64 `json:"coordinates"`
	}
	type feature struct {
		Type       string            `json:"type"`
		Properties map[string]string `json:"properties"`
		Geometry   geometry          `json:"geometry"`
	}
	type collection struct {
		Type     string    `json:"type"`
		Features []feature `json:"features"`
	}
	c := collection{Type: "FeatureCollection"}
	for _, r := range Regions {
		c.Features = append(c.Features, feature{
			Type:       "Feature",
			Properties: map[string]string{"name": r.Name, "title": r.Title},
			Geometry:   geometry{Type: "Polygon", Coordinates: [][][2]float64{r.Ring}},
		})
	}
	b, err := json.MarshalIndent(c, "", " ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

func smoothstep(x float64) float64 {
	if x <= 0 {
		return 0
	}
	if x >= 1 {
		return 1
	}
	return x * x * (3 - 2*x)
}
