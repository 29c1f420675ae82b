package label

import (
	"math"

	"github.com/squall-climate/squall/stages/grid"
)

// TCStep holds the fields of one time step that the tropical-cyclone
// criteria read, flat in the grid's (lat, lon) order, in SI units, NaN for
// missing values. A nil slice means the field is not available; the
// criterion that needs it must then be switched off (CheckTCInputs says
// which).
type TCStep struct {
	SLP     []float64 // air_pressure_at_mean_sea_level, Pa
	Vort850 []float64 // relative vorticity at 850 hPa, s-1
	Wind10  []float64 // 10 m wind speed, m s-1
	T850    []float64 // air_temperature at 850 hPa, K
	T700    []float64
	T500    []float64
	T300    []float64
	Wind850 []float64 // wind speed at 850 hPa, m s-1
	Wind300 []float64 // wind speed at 300 hPa, m s-1
}

// Candidate is a storm centre at one time step: an SLP local minimum that
// passed every switched-on per-step criterion. Values that could not be
// computed (their field is absent) are NaN.
type Candidate struct {
	Step      int     // time index in the block
	Hours     float64 // time in hours since the block's reference
	Row, Col  int     // grid indices of the SLP minimum
	Lat, Lon  float64 // degrees
	SLP       float64 // Pa, at the minimum
	MaxWind   float64 // m s-1, largest 10 m wind in the box
	MaxWindK  int     // flat index of that wind maximum (-1 if none)
	Vorticity float64 // s-1, 850 hPa vorticity of largest hemisphere-signed value in the box
	WarmCore  float64 // K, summed 700/500/300 hPa anomaly at the warm-core centre
	Track     int     // id of the kept track it belongs to; 0 for none
}

// WindThreshold is the 10 m wind threshold (m s-1) for a grid, after
// Walsh et al. (2007): 17.5 m s-1 at zero spacing (observations), about
// 10 m s-1 at 300 km, joined by a straight line in the spacing d and held
// at 10 m s-1 beyond 300 km:
//
//	V(d) = 17.5 - 7.5 * min(d, 300 km) / 300 km
//
// d is the side of a square of the area of an equatorial cell,
// R * sqrt(dlat * dlon) with the spacings in radians. The straight line is
// our interpolation between the two published values.
func WindThreshold(g *grid.Grid) float64 {
	d := GridSpacing(g)
	return 17.5 - 7.5*math.Min(d, 300e3)/300e3
}

// GridSpacing is R * sqrt(dlat * dlon) in metres, spacings in radians:
// the side of a square with the area of an equatorial cell.
func GridSpacing(g *grid.Grid) float64 {
	return grid.EarthRadius * math.Sqrt(g.DLat()*g.DLon()) * math.Pi / 180
}

// Radius is the half-width r in grid points of the search box on g, a
// box of 2r+1 cells: the larger of (BoxPoints-1)/2 and the least r whose
// 2r+1 rows of R*dlat metres span BoxWidth, r = ceil((W/(R dlat) - 1)/2).
func (c *TCConfig) Radius(g *grid.Grid) int {
	r := (c.BoxPoints - 1) / 2
	if c.BoxWidth > 0 {
		row := grid.EarthRadius * g.DLat() * math.Pi / 180
		r = max(r, int(math.Ceil((c.BoxWidth/row-1)/2-1e-9)))
	}
	return r
}

// box lists the flat indices of the (2r+1)x(2r+1) box centred on (i, j):
// wrapped in longitude on a periodic grid, clipped at the grid edges
// otherwise. complete is false when the box was clipped.
func box(g *grid.Grid, i, j, r int, out []int) (ks []int, complete bool) {
	ks = out[:0]
	complete = true
	n, m := g.NLat(), g.NLon()
	for di := -r; di <= r; di++ {
		ii := i + di
		if ii < 0 || ii >= n {
			complete = false
			continue
		}
		for dj := -r; dj <= r; dj++ {
			jj := j + dj
			if g.Periodic() {
				jj = ((jj % m) + m) % m
			} else if jj < 0 || jj >= m {
				complete = false
				continue
			}
			ks = append(ks, ii*m+jj)
		}
	}
	return ks, complete
}

// FindCandidates returns the storm centres of one time step in row-major
// order of their SLP minimum. A centre is a point whose SLP is the lowest
// in its box (grid.LocalMinima: ties go to the first in row-major order)
// and whose box lies wholly inside the grid and holds no missing SLP, so
// that a minimum at an edge, where the true centre may lie outside, is
// never taken. It must then
// pass every criterion switched on in c:
//
//   - vorticity: max over the box of s*zeta850 >= VorticityMin, with s = +1
//     in the northern hemisphere (lat >= 0) and -1 in the southern;
//   - max_wind: max over the box of the 10 m wind >= windMin;
//   - warm_core: at the warm-core centre, the point of highest
//     (T500+T300)/2 within one grid point of the SLP minimum, the sum of
//     T_L - mean_box(T_L) over L = 700, 500, 300 hPa >= WarmCoreMin, and the
//     300 hPa anomaly larger than the 850 hPa one;
//   - wind_profile: the box-mean wind speed at 850 hPa exceeds that at 300.
//
// Genesis latitude is a track rule (see Stitch). windMin is the resolved
// wind threshold (WindThreshold when the setting is 0).
func FindCandidates(g *grid.Grid, f *TCStep, c *TCConfig, windMin float64, step int, hours float64) ([]Candidate, error) {
	r := c.Radius(g)
	minima, err := g.LocalMinima(f.SLP, r)
	if err != nil {
		return nil, err
	}
	buf := make([]int, 0, (2*r+1)*(2*r+1))
	var out []Candidate
	for _, k := range minima {
		p := f.SLP[k]
		i, j := g.RowCol(k)
		ks, complete := box(g, i, j, r, buf)
		buf = ks
		if !complete || hasNaN(f.SLP, ks) {
			continue
		}
		if c.MinSLPDepth > 0 && boxMean(f.SLP, ks)-p < c.MinSLPDepth {
			continue
		}
		cand := Candidate{
			Step: step, Hours: hours, Row: i, Col: j, Lat: g.Lat[i], Lon: g.Lon[j], SLP: p,
			MaxWind: math.NaN(), MaxWindK: -1, Vorticity: math.NaN(), WarmCore: math.NaN(),
		}
		if f.Vort850 != nil {
			s := 1.0
			if cand.Lat < 0 {
				s = -1
			}
			best := math.Inf(-1)
			for _, q := range ks {
				if v := f.Vort850[q]; !math.IsNaN(v) && s*v > best {
					best = s * v
				}
			}
			if !math.IsInf(best, -1) {
				cand.Vorticity = s * best
			}
			if c.Has(CritVorticity) && !(best >= c.VorticityMin) {
				continue
			}
		}
		if f.Wind10 != nil {
			cand.MaxWind, cand.MaxWindK = boxMax(f.Wind10, ks)
			if c.Has(CritMaxWind) && !(cand.MaxWind >= windMin) {
				continue
			}
		}
		if f.T700 != nil && f.T500 != nil && f.T300 != nil && f.T850 != nil {
			inner, _ := box(g, i, j, 1, nil)
			sum, a300, a850 := warmCore(f, inner, ks)
			cand.WarmCore = sum
			if c.Has(CritWarmCore) && !(sum >= c.WarmCoreMin && a300 > a850) {
				continue
			}
		}
		if c.Has(CritWindProfile) && f.Wind850 != nil && f.Wind300 != nil {
			if !(boxMean(f.Wind850, ks) > boxMean(f.Wind300, ks)) {
				continue
			}
		}
		out = append(out, cand)
	}
	return out, nil
}

// hasNaN reports whether the box holds a missing value.
func hasNaN(f []float64, ks []int) bool {
	for _, q := range ks {
		if math.IsNaN(f[q]) {
			return true
		}
	}
	return false
}

// boxMean is the mean of the box's non-missing values (NaN if none).
func boxMean(f []float64, ks []int) float64 {
	var s float64
	n := 0
	for _, q := range ks {
		if v := f[q]; !math.IsNaN(v) {
			s += v
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return s / float64(n)
}

// boxMax is the largest non-missing value in the box and its index.
func boxMax(f []float64, ks []int) (float64, int) {
	best, at := math.NaN(), -1
	for _, q := range ks {
		if v := f[q]; !math.IsNaN(v) && (at < 0 || v > best) {
			best, at = v, q
		}
	}
	return best, at
}

// warmCore returns the summed 700/500/300 hPa anomaly and the 300 and 850
// hPa anomalies at the warm-core centre: the point of highest mean 500/300
// hPa temperature among inner (the 3x3 points around the SLP minimum, which
// allows for a tilted core), each anomaly against the mean over the box ks.
func warmCore(f *TCStep, inner, ks []int) (sum, a300, a850 float64) {
	at := -1
	best := math.Inf(-1)
	for _, q := range inner {
		v := (f.T500[q] + f.T300[q]) / 2
		if !math.IsNaN(v) && v > best {
			best, at = v, q
		}
	}
	if at < 0 {
		return math.NaN(), math.NaN(), math.NaN()
	}
	a700 := f.T700[at] - boxMean(f.T700, ks)
	a500 := f.T500[at] - boxMean(f.T500, ks)
	a300 = f.T300[at] - boxMean(f.T300, ks)
	a850 = f.T850[at] - boxMean(f.T850, ks)
	return a700 + a500 + a300, a300, a850
}
