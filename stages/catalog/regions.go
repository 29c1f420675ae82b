package catalog

import (
	"fmt"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
)

// RegionMasks turns the campaign's regions into cell masks on g: a cell
// belongs to a region when its centre lies inside (grid.InBox for boxes,
// grid.Polygon for GeoJSON polygons, antimeridian-safe both).
func RegionMasks(g *grid.Grid, regions []pipeline.Region) ([]RegionMask, error) {
	var out []RegionMask
	for _, r := range regions {
		switch {
		case r.Box != nil:
			out = append(out, RegionMask{Name: r.Name, In: g.BoxMask(grid.Box(*r.Box))})
		case len(r.Polygons) > 0:
			var polys []*grid.Polygon
			for i, rings := range r.Polygons {
				p, err := grid.NewPolygon(rings)
				if err != nil {
					return nil, fmt.Errorf("region %q polygon %d: %w", r.Name, i, err)
				}
				polys = append(polys, p)
			}
			out = append(out, RegionMask{Name: r.Name, In: g.PolygonMask(polys...)})
		default:
			return nil, fmt.Errorf("region %q has neither a box nor polygons", r.Name)
		}
	}
	return out, nil
}
