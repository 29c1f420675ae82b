package label

import (
	"github.com/squall-climate/squall/stages/grid"
)

// TEMPORARY until stages/grid exports object shape: brute-force farthest
// pair of pixel centres.
func objectLength(g *grid.Grid, _ *grid.Component, pix []int32) float64 {
	best := 0.0
	for a := range pix {
		ia, ja := g.RowCol(int(pix[a]))
		for b := a + 1; b < len(pix); b++ {
			ib, jb := g.RowCol(int(pix[b]))
			if d := grid.Distance(g.Lat[ia], g.Lon[ja], g.Lat[ib], g.Lon[jb]); d > best {
				best = d
			}
		}
	}
	return best
}

// TEMPORARY until stages/grid exports relative vorticity.
var vorticityFromWinds func(g *grid.Grid, u, v []float64) []float64
