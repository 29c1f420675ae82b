package trends

import (
	"fmt"
	"math"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
)

// region is a named area with a membership test for points.
type region struct {
	name     string
	whole    bool // the implicit whole-domain region: everything is in
	box      *grid.Box
	polygons [][][][2]float64
}

// buildRegions turns the campaign's regions into membership tests, with the
// implicit whole-domain region first (when wholeName is not empty).
func buildRegions(c *pipeline.CampaignInfo, wholeName string) ([]region, error) {
	var out []region
	if wholeName != "" {
		out = append(out, region{name: wholeName, whole: true})
	}
	seen := map[string]bool{wholeName: wholeName != ""}
	for _, r := range c.Regions {
		if seen[r.Name] {
			return nil, fmt.Errorf("region %q appears twice (or clashes with the setting whole_domain_region = %q); rename one", r.Name, wholeName)
		}
		seen[r.Name] = true
		switch {
		case r.Box != nil:
			b := grid.Box(*r.Box)
			out = append(out, region{name: r.Name, box: &b})
		case len(r.Polygons) > 0:
			out = append(out, region{name: r.Name, polygons: r.Polygons})
		default:
			return nil, fmt.Errorf("region %q has neither a box nor polygons", r.Name)
		}
	}
	return out, nil
}

// contains reports whether the point (degrees) lies in the region. Polygon
// holes (rings after the first) are excluded.
func (r *region) contains(lat, lon float64) bool {
	switch {
	case r.whole:
		return true
	case r.box != nil:
		return grid.InBox(lat, lon, *r.box)
	}
	for _, poly := range r.polygons {
		if len(poly) == 0 || !inRing(lat, lon, poly[0]) {
			continue
		}
		inHole := false
		for _, hole := range poly[1:] {
			if inRing(lat, lon, hole) {
				inHole = true
				break
			}
		}
		if !inHole {
			return true
		}
	}
	return false
}

// inRing is an even-odd crossing test on the ring unwrapped in longitude:
// each vertex follows the previous one by the shorter way round
// (grid.LonDiff), so a ring crossing the antimeridian, in either longitude
// convention, becomes one continuous polygon; the point's longitude is then
// shifted by whole turns into the ring's span. Edges are straight lines in
// (lon, lat), the GeoJSON (RFC 7946) reading of a polygon, not great
// circles; rings that enclose a pole are outside what this handles.
func inRing(lat, lon float64, ring [][2]float64) bool {
	n := len(ring)
	if n < 3 {
		return false
	}
	xs := make([]float64, n)
	xs[0] = ring[0][0]
	minX := xs[0]
	for i := 1; i < n; i++ {
		xs[i] = xs[i-1] + grid.LonDiff(ring[i-1][0], ring[i][0])
		minX = math.Min(minX, xs[i])
	}
	px := minX + math.Mod(math.Mod(lon-minX, 360)+360, 360)
	in := false
	for i, j := 0, n-1; i < n; j, i = i, i+1 {
		yi, yj := ring[i][1], ring[j][1]
		if (yi > lat) == (yj > lat) {
			continue
		}
		x := xs[j] + (lat-yj)*(xs[i]-xs[j])/(yi-yj)
		if x > px {
			in = !in
		}
	}
	return in
}
