package subset

import (
	"math"

	"github.com/squall-climate/squall/stages/grid"
)

// windSpeed sets dst = sqrt(u^2 + v^2); NaN where either is missing.
func windSpeed(dst, u, v []float32) {
	for i := range dst {
		a, b := float64(u[i]), float64(v[i])
		dst[i] = float32(math.Sqrt(a*a + b*b))
	}
}

// vorticity computes the relative vorticity (s-1) on the sphere,
//
//	zeta = 1/(R cos phi) * [ dv/dlambda - d(u cos phi)/dphi ]
//
// (the vertical component of the curl of the horizontal wind in spherical
// coordinates, derived; the metric term u tan(phi)/R is inside the
// d(u cos phi)/dphi form), with centred differences over
// the actual coordinate spacing, so Gaussian latitudes are handled. R is
// grid.EarthRadius. Longitudes wrap when periodic; the first and last rows
// and, on a regional window, the first and last columns have no centred
// neighbours and get NaN, as do points next to a missing value.
// u, v and dst are (lat, lon) row-major with the window's shape.
func vorticity(dst, u, v []float32, lat, lon []float64, periodic bool) {
	ny, nx := len(lat), len(lon)
	const rad = math.Pi / 180
	R := grid.EarthRadius
	cosPhi := make([]float64, ny)
	for i, y := range lat {
		cosPhi[i] = math.Cos(y * rad)
	}
	nan := float32(math.NaN())
	for i := 0; i < ny; i++ {
		for j := 0; j < nx; j++ {
			k := i*nx + j
			dst[k] = nan
			if i == 0 || i == ny-1 || cosPhi[i] < 1e-12 {
				continue
			}
			jw, je := j-1, j+1
			if jw < 0 || je >= nx {
				if !periodic {
					continue
				}
				jw, je = (jw+nx)%nx, je%nx
			}
			dlam := mod360(lon[je]-lon[jw]) * rad
			dphi := (lat[i+1] - lat[i-1]) * rad
			dvdl := (float64(v[i*nx+je]) - float64(v[i*nx+jw])) / dlam
			ducdp := (float64(u[(i+1)*nx+j])*cosPhi[i+1] - float64(u[(i-1)*nx+j])*cosPhi[i-1]) / dphi
			dst[k] = float32((dvdl - ducdp) / (R * cosPhi[i]))
		}
	}
}
