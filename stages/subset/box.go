package subset

import (
	"fmt"
	"math"
	"slices"
)

// box is a latitude-longitude box in degrees; lonMin > lonMax (in the
// modulo-360 sense) crosses 0 or 180 degrees.
type box struct {
	latMin, latMax, lonMin, lonMax float64
}

// whole reports whether the box keeps every longitude.
func (b box) wholeLon() bool { return b.lonMax-b.lonMin >= 360-1e-9 }

// span is a run of contiguous source columns [start, start+n).
type span struct{ start, n int }

// window says which part of the source grid is read and which part of
// that is written: rows [row0, row0+nrow) of the source, columns in
// source-index spans (the order in which they are laid side by side),
// and the offsets of the output box inside the read window (a halo of
// one cell around the box when a derived field needs neighbours).
type window struct {
	row0, nrow int
	cols       []span
	ncol       int
	// outRow0, outNRow, outCol0, outNCol locate the output box in the window.
	outRow0, outNRow int
	outCol0, outNCol int
	// periodic is true when the window holds every longitude of a global
	// grid in source order, so neighbours wrap around.
	periodic bool
	// lat and lon of the window's rows and columns (lon made monotonic).
	lat, lon []float64
}

// selectWindow finds the rows and columns of the box in a grid with
// coordinates lat (either order) and lon (increasing, 0..360 or
// -180..180), plus a halo of `halo` cells where the source has them.
func selectWindow(lat, lon []float64, global bool, b box, halo int) (*window, error) {
	// Rows: latitudes inside [latMin, latMax], contiguous because monotonic.
	r0, r1 := -1, -1
	for i, y := range lat {
		if y >= b.latMin-1e-9 && y <= b.latMax+1e-9 {
			if r0 < 0 {
				r0 = i
			}
			r1 = i + 1
		}
	}
	if r0 < 0 {
		return nil, fmt.Errorf("no latitude of the grid (%g..%g) lies in the box %g..%g (settings lat_min, lat_max)",
			lat[0], lat[len(lat)-1], b.latMin, b.latMax)
	}
	// Columns: eastward distance from lonMin within the box's width.
	nx := len(lon)
	var in []int
	if b.wholeLon() {
		for j := range lon {
			in = append(in, j)
		}
	} else {
		width := mod360(b.lonMax - b.lonMin)
		for j, x := range lon {
			if mod360(x-b.lonMin) <= width+1e-9 {
				in = append(in, j)
			}
		}
		// Eastward order from the box's western edge.
		slices.SortStableFunc(in, func(a, c int) int {
			da, dc := mod360(lon[a]-b.lonMin), mod360(lon[c]-b.lonMin)
			switch {
			case da < dc:
				return -1
			case da > dc:
				return 1
			}
			return 0
		})
	}
	if len(in) == 0 {
		return nil, fmt.Errorf("no longitude of the grid (%g..%g) lies in the box %g..%g (settings lon_min, lon_max)",
			lon[0], lon[nx-1], b.lonMin, b.lonMax)
	}
	w := &window{outNRow: r1 - r0, outNCol: len(in)}
	allCols := len(in) == nx
	// Halo rows: as many as exist, up to halo.
	top := min(halo, r0)
	bottom := min(halo, len(lat)-r1)
	w.row0, w.nrow, w.outRow0 = r0-top, r1-r0+top+bottom, top
	cols := in
	if allCols && global {
		// Neighbours wrap; no halo columns needed.
		w.periodic = true
		cols = in
	} else if halo > 0 {
		var left, right []int
		first, last := in[0], in[len(in)-1]
		for h := 1; h <= halo; h++ {
			j := first - h
			if j < 0 {
				if !global {
					break
				}
				j += nx
			}
			if slices.Contains(in, j) || slices.Contains(left, j) {
				break
			}
			left = append([]int{j}, left...)
		}
		for h := 1; h <= halo; h++ {
			j := last + h
			if j >= nx {
				if !global {
					break
				}
				j -= nx
			}
			if slices.Contains(in, j) || slices.Contains(left, j) || slices.Contains(right, j) {
				break
			}
			right = append(right, j)
		}
		w.outCol0 = len(left)
		cols = append(append(left, in...), right...)
	}
	w.ncol = len(cols)
	// Group consecutive source columns into spans.
	for _, j := range cols {
		if k := len(w.cols); k > 0 && w.cols[k-1].start+w.cols[k-1].n == j {
			w.cols[k-1].n++
			continue
		}
		w.cols = append(w.cols, span{j, 1})
	}
	w.lat = append([]float64(nil), lat[w.row0:w.row0+w.nrow]...)
	w.lon = make([]float64, len(cols))
	for i, j := range cols {
		w.lon[i] = lon[j]
	}
	monotonicLon(w.lon)
	return w, nil
}

// monotonicLon rewrites longitudes that wrap (350, 355, 0, 5) as an
// increasing sequence (-10, -5, 0, 5), preferring values within
// -180..360 as CF files do.
func monotonicLon(lon []float64) {
	for i := 1; i < len(lon); i++ {
		for lon[i] <= lon[i-1] {
			lon[i] += 360
		}
	}
	if lon[len(lon)-1] > 360+1e-9 {
		for i := range lon {
			lon[i] -= 360
		}
	}
}

func mod360(x float64) float64 {
	x = math.Mod(x, 360)
	if x < 0 {
		x += 360
	}
	return x
}

// crop copies the output box out of a window-sized field.
func (w *window) crop(dst, src []float32) {
	for i := 0; i < w.outNRow; i++ {
		s := (w.outRow0+i)*w.ncol + w.outCol0
		copy(dst[i*w.outNCol:(i+1)*w.outNCol], src[s:s+w.outNCol])
	}
}

// outLat and outLon are the coordinates of the output box.
func (w *window) outLat() []float64 { return w.lat[w.outRow0 : w.outRow0+w.outNRow] }
func (w *window) outLon() []float64 { return w.lon[w.outCol0 : w.outCol0+w.outNCol] }
