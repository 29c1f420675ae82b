package label

import (
	"math"

	"github.com/squall-climate/squall/stages/grid"
)

// TCFootprint marks in out (flat, grid order) the pixels of one storm at
// one time step:
//
//   - the pixels whose 10 m wind is at least thr and that are connected
//     (grid.Components on the band of rows within maxR: 8-neighbours,
//     across the date line on a global grid) to the storm's wind maximum
//     through such pixels, all within maxR metres of the centre; and
//   - every pixel at most as far from the centre as the wind maximum (the
//     eye and eyewall, where the wind may be below thr).
//
// This is the gale-wind area around the centre, capped at maxR so that a
// storm embedded in a windy environment does not claim it all. Returns the
// number of pixels marked (including ones already set).
func TCFootprint(g *grid.Grid, wind []float64, c Candidate, thr, maxR float64, out []bool) int {
	n, m := g.NLat(), g.NLon()
	// Rows within maxR of the centre latitude (one degree of latitude is
	// R*pi/180 metres on the sphere).
	dlatDeg := maxR / grid.EarthRadius * 180 / math.Pi
	i0, i1 := n, -1
	for i, lat := range g.Lat {
		if math.Abs(lat-c.Lat) <= dlatDeg+g.DLat() {
			i0 = min(i0, i)
			i1 = max(i1, i)
		}
	}
	if i1 < 0 {
		return 0
	}
	rows := i1 - i0 + 1
	dist := make([]float64, rows*m)
	for i := i0; i <= i1; i++ {
		for j := 0; j < m; j++ {
			dist[(i-i0)*m+j] = grid.Distance(c.Lat, c.Lon, g.Lat[i], g.Lon[j])
		}
	}
	rEye := 0.0
	seed := -1
	if c.MaxWindK >= 0 {
		si, sj := g.RowCol(c.MaxWindK)
		if si >= i0 && si <= i1 {
			rEye = math.Min(dist[(si-i0)*m+sj], maxR)
			if w := wind[c.MaxWindK]; w >= thr && dist[(si-i0)*m+sj] <= maxR {
				seed = (si-i0)*m + sj
			}
		}
	}
	in := make([]bool, rows*m)
	count := 0
	mark := func(l int) {
		if !in[l] {
			in[l] = true
			out[(l/m+i0)*m+l%m] = true
			count++
		}
	}
	for l, d := range dist {
		if d <= rEye {
			mark(l)
		}
	}
	if seed >= 0 {
		// Connected gale-wind pixels within the cap: components of the row
		// band (a grid of its own, periodic like g), the one holding the
		// wind maximum.
		band, err := grid.New(g.Lat[i0:i1+1], g.Lon)
		if err != nil {
			return count // a one-row band: the disc above is all there is
		}
		gale := make([]bool, rows*m)
		for l, d := range dist {
			gale[l] = d <= maxR && wind[i0*m+l] >= thr
		}
		lab, err := band.Components(gale)
		if err != nil {
			return count
		}
		for _, l := range lab.Pixels(lab.Labels[seed]) {
			mark(int(l))
		}
	}
	return count
}
