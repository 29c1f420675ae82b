package trends

import (
	"fmt"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
)

// region is a named area with a membership test for points.
type region struct {
	name     string
	whole    bool // the implicit whole-domain region: everything is in
	box      *grid.Box
	polygons []*grid.Polygon
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
			reg := region{name: r.Name}
			for k, rings := range r.Polygons {
				p, err := grid.NewPolygon(rings)
				if err != nil {
					return nil, fmt.Errorf("region %q, polygon %d: %w", r.Name, k+1, err)
				}
				reg.polygons = append(reg.polygons, p)
			}
			out = append(out, reg)
		default:
			return nil, fmt.Errorf("region %q has neither a box nor polygons", r.Name)
		}
	}
	return out, nil
}

// contains reports whether the point (degrees) lies in the region:
// grid.InBox for boxes (antimeridian-crossing when LonMin > LonMax) and
// grid.Polygon.Contains for GeoJSON polygons (rings unwrapped across the
// antimeridian, holes excluded, rings around a pole closed through it).
func (r *region) contains(lat, lon float64) bool {
	switch {
	case r.whole:
		return true
	case r.box != nil:
		return grid.InBox(lat, lon, *r.box)
	}
	for _, p := range r.polygons {
		if p.Contains(lat, lon) {
			return true
		}
	}
	return false
}
