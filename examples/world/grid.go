package world

import "math"

// grid is the output grid in file order, with the static fields.
type grid struct {
	lats, lons []float64
	res        float64
	land       []float64 // land area fraction per point
	alt        []float64 // surface altitude, m
	regions    []uint32  // bit k set: point inside Regions[k]
}

func newGrid(o *Options) *grid {
	g := &grid{res: o.Resolution}
	nlat := int(math.Round((o.LatMax-o.LatMin)/o.Resolution)) + 1
	nlon := int(math.Round((o.LonMax-o.LonMin)/o.Resolution)) + 1
	for i := 0; i < nlat; i++ {
		// Multiples of the spacing from LatMin, rounded to 1e-9 degree so
		// that the coordinates print cleanly.
		g.lats = append(g.lats, math.Round((o.LatMin+float64(i)*o.Resolution)*1e9)/1e9)
	}
	if o.LatDescending {
		for i, j := 0, nlat-1; i < j; i, j = i+1, j-1 {
			g.lats[i], g.lats[j] = g.lats[j], g.lats[i]
		}
	}
	for j := 0; j < nlon; j++ {
		g.lons = append(g.lons, math.Round((o.LonMin+float64(j)*o.Resolution)*1e9)/1e9)
	}
	n := nlat * nlon
	g.land = make([]float64, n)
	g.alt = make([]float64, n)
	g.regions = make([]uint32, n)
	for i, lat := range g.lats {
		for j, lon := range g.lons {
			k := i*nlon + j
			g.land[k] = landFraction(lat, lon, o.Resolution)
			g.alt[k] = surfaceAltitude(lat, lon)
			for r, reg := range Regions {
				if inRing(reg.Ring, lon, lat) {
					g.regions[k] |= 1 << r
				}
			}
		}
	}
	return g
}

func (g *grid) points() int { return len(g.lats) * len(g.lons) }

func (g *grid) contains(lat, lon float64) bool {
	a, b := g.lats[0], g.lats[len(g.lats)-1]
	if a > b {
		a, b = b, a
	}
	return lat >= a && lat <= b && lon >= g.lons[0] && lon <= g.lons[len(g.lons)-1]
}
