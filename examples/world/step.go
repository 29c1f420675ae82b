package world

import (
	"math"
	"strconv"
	"sync"
)

// FillValue marks values below the ground in pressure-level files written
// with BelowSurface "fill" (1e20, the common climate-model choice).
const FillValue = float32(1e20)

// season is one scenario-year: the planted events and the random weather.
type season struct {
	opt        *Options
	sc         Scenario
	year       int
	yearIndex  int
	g          *grid
	cyclones   []*cyclonePlan
	rivers     []*riverPlan
	psi        *noiseField // eddy stream function, m2/s
	tnoise     *noiseField // temperature, K
	qnoise     *noiseField // relative moisture perturbation
	levels     []float64   // pressure levels (pressure mode)
	levelIndex []int       // their index in FixedLevels
	rows       []*rowTable // background per latitude
	hybA       []float64
	hybB       []float64
	steps      int
}

func newSeason(o *Options, g *grid, sc Scenario, yearIndex int) *season {
	year := sc.FirstYear + yearIndex
	hours := float64(o.Days * 24)
	s := &season{opt: o, sc: sc, year: year, yearIndex: yearIndex, g: g,
		cyclones: planCyclones(o.Seed, sc, yearIndex, year, hours),
		rivers:   planRivers(o.Seed, sc, yearIndex, year, hours),
		steps:    o.Days * 24 / o.StepHours,
	}
	r := newRNG(o.Seed, sc.Name, strconv.Itoa(year), "weather")
	// Amplitudes (chosen): a stream function of 2e6 m2/s gives eddy winds
	// of about 3.5 m/s near the ground and SLP swings of a few hPa in
	// mid-latitudes, half that in the tropics; temperature 1.2 K (0.6 K in
	// the tropics); moisture +-22 %.
	s.psi = newNoiseField(r, g.lats, g.lons, 20, 2e6, 1e6)
	s.tnoise = newNoiseField(r, g.lats, g.lons, 16, 1.2, 0.6)
	s.qnoise = newNoiseField(r, g.lats, g.lons, 16, 0.22, 0.22)
	if o.Vertical == "hybrid" {
		s.hybA, s.hybB = HybridCoefficients()
	} else {
		s.levels = PressureLevels
		for _, p := range s.levels {
			s.levelIndex = append(s.levelIndex, fixedIndex(p))
		}
	}
	for _, lat := range g.lats {
		s.rows = append(s.rows, newRowTable(lat, sc.WarmingK))
	}
	return s
}

// nlev is the number of levels written.
func (s *season) nlev() int {
	if s.hybA != nil {
		return len(s.hybA)
	}
	return len(s.levels)
}

// fields holds one time step, in file order.
type fields struct {
	hour                   float64 // since the season start
	slp, ps, u10, v10, iwv []float32
	ua, va, ta, hus        []float32 // [lev*npoints + point]
	ivt                    []float64 // 1000-300 hPa IVT, for the truth
	mask                   []uint8
	owner                  []int16 // truth: index into cyclones or rivers, -1 none
	riverOwner             []int16 // index into active rivers, -1 none
	riverWeight            []float64
	cyclones               []activeCyclone
	rivers                 []*riverState
}

func newFields(n, nlev int) *fields {
	return &fields{
		slp: make([]float32, n), ps: make([]float32, n), u10: make([]float32, n), v10: make([]float32, n), iwv: make([]float32, n),
		ua: make([]float32, n*nlev), va: make([]float32, n*nlev), ta: make([]float32, n*nlev), hus: make([]float32, n*nlev),
		ivt: make([]float64, n), mask: make([]uint8, n), owner: make([]int16, n), riverOwner: make([]int16, n), riverWeight: make([]float64, n),
	}
}

// activeCyclone is a storm at one time with what the field needs.
type activeCyclone struct {
	plan   *cyclonePlan
	p      cyclonePoint
	h      Holland
	cosLat float64
	sign   float64 // +1 counterclockwise (north), -1 south
	warm   float64 // warm-core amplitude at 300 hPa, K
	warmR  float64 // warm-core radius, m
	moist  float64
	v10max float64 // planted symmetric 10 m wind maximum, m/s
	radius float64 // truth radius, m (0: below the threshold)
	vgmax  float64
}

// compute fills f with hour t of the season. Rows are shared among
// workers; every value depends only on its own point, so the result does
// not depend on the number of workers.
func (s *season) compute(f *fields, t float64, workers int) {
	f.hour = t
	s.psi.setTime(t)
	s.tnoise.setTime(t)
	s.qnoise.setTime(t)
	f.cyclones = f.cyclones[:0]
	for _, c := range s.cyclones {
		p, ok := c.at(t)
		if !ok {
			continue
		}
		a := activeCyclone{plan: c, p: p, h: p.holland(c.b, 101000), cosLat: math.Cos(p.lat * deg), sign: 1}
		if p.lat < 0 {
			a.sign = -1
		}
		a.v10max, a.radius = cycloneSurface(p, c.b)
		a.vgmax = a.v10max / surfaceWindFactor
		a.warm = warmCorePerPa * p.dp
		a.warmR = math.Max(250e3, 2.5*p.rmax)
		a.moist = 0.25 * math.Min(1, p.dp/5000)
		f.cyclones = append(f.cyclones, a)
	}
	f.rivers = f.rivers[:0]
	for _, r := range s.rivers {
		if st, ok := r.at(t); ok {
			f.rivers = append(f.rivers, st)
		}
	}
	nlat := len(s.g.lats)
	if workers < 1 {
		workers = 1
	}
	var wg sync.WaitGroup
	rows := make(chan int, nlat)
	for i := 0; i < nlat; i++ {
		rows <- i
	}
	close(rows)
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range rows {
				s.computeRow(f, i)
			}
		}()
	}
	wg.Wait()
	s.truth(f)
}

func (s *season) computeRow(f *fields, i int) {
	g := s.g
	nlon := len(g.lons)
	n := g.points()
	nlev := s.nlev()
	lat := g.lats[i]
	fcor := 2 * omega * math.Sin(lat*deg)
	cosLat := math.Cos(lat * deg)
	warming := s.sc.WarmingK
	ts := surfaceTemperature(lat) + warming
	for j, lon := range g.lons {
		k := i*nlon + j
		c := column{lat: lat, lon: lon}
		psi, dlon, dlat := s.psi.at(i, j)
		c.eu = -dlat / (earthRadius * deg)
		c.ev = dlon / (earthRadius * deg * cosLat)
		c.tn, _, _ = s.tnoise.at(i, j)
		c.qn, _, _ = s.qnoise.at(i, j)
		c.slp = backgroundSLP(lat, lon) + airDensity*fcor*psi
		c.row = s.rows[i]
		var u10, v10 float64
		for q := range f.cyclones {
			a := &f.cyclones[q]
			dx := (lon - a.p.lon) * deg * earthRadius * 0.5 * (cosLat + a.cosLat)
			dy := (lat - a.p.lat) * deg * earthRadius
			r := math.Hypot(dx, dy)
			if r >= cycloneTaperOuter {
				continue
			}
			tap := 1 - smoothstep((r-cycloneTaperInner)/(cycloneTaperOuter-cycloneTaperInner))
			if r < 1 {
				c.slp -= a.p.dp
				c.tcWarm += a.warm
				c.tcMoist += a.moist
				continue
			}
			c.slp -= (a.p.dp - (a.h.Pressure(r) - a.h.CentralPressure)) * tap
			vg := a.h.GradientWind(r) * tap
			te, tn := -a.sign*dy/r, a.sign*dx/r // tangential, cyclonic
			re, rn := -dx/r, -dy/r              // inward
			c.tcTe += vg * te
			c.tcTn += vg * tn
			c.tcRe += vg * re
			c.tcRn += vg * rn
			// 10 m: reduced, turned 20 deg inward, plus half the motion
			// scaled by the local strength (the usual right-of-track
			// asymmetry).
			v := surfaceWindFactor * vg
			const ci, si = 0.9396926207859084, 0.3420201433256687 // cos, sin 20 deg
			u10 += v*(ci*te+si*re) + 0.5*a.p.ue*vg/a.vgmax
			v10 += v*(ci*tn+si*rn) + 0.5*a.p.vn*vg/a.vgmax
			x := r / a.warmR
			c.tcWarm += a.warm * math.Exp(-x*x)
			y := r / 350e3
			c.tcMoist += a.moist * math.Exp(-y*y)
		}
		f.riverOwner[k] = -1
		f.riverWeight[k] = 0
		for q, rs := range f.rivers {
			w, te, tn := rs.weight(lat, lon)
			if w <= 0 {
				continue
			}
			if w > f.riverWeight[k] {
				f.riverWeight[k] = w
				f.riverOwner[k] = int16(q)
			}
			c.arW += w
			c.arQ += w * rs.plan.moisture
			c.arT += w * riverWarmK
			c.arU += w * rs.plan.jet * te
			c.arV += w * rs.plan.jet * tn
		}
		if c.arW > 1 {
			c.arW = 1
		}
		// Surface pressure: hypsometric reduction over the ground with the
		// mean temperature of the layer.
		z := g.alt[k]
		c.ps = c.slp * math.Exp(-gravity*z/(rDry*(ts-0.0065*z/2)))
		keep := 1 - 0.8*c.arW*riverWindShape.at(math.Log(c.ps))
		u10 += 0.8*keep*(backgroundWind(lat, c.ps)+c.eu) + 0.55*c.arU
		v10 += 0.8*keep*c.ev + 0.55*c.arV
		f.slp[k], f.ps[k] = float32(c.slp), float32(c.ps)
		f.u10[k], f.v10[k] = float32(u10), float32(v10)
		// Levels.
		for l := 0; l < nlev; l++ {
			var tt, qq, uu, vv, p float64
			if s.hybA != nil {
				p = s.hybA[l]*p0 + s.hybB[l]*c.ps
				tt, qq, uu, vv = c.at(p, warming)
			} else {
				p = s.levels[l]
				tt, qq, uu, vv = c.atFixed(s.levelIndex[l])
			}
			o := l*n + k
			if s.hybA == nil && p > c.ps && s.opt.BelowSurface == "fill" {
				f.ta[o], f.hus[o], f.ua[o], f.va[o] = FillValue, FillValue, FillValue, FillValue
			} else {
				f.ta[o], f.hus[o], f.ua[o], f.va[o] = float32(tt), float32(qq), float32(uu), float32(vv)
			}
		}
		// IVT over 1000-300 hPa by the trapezoid rule on IVTLevels.
		var iu, iv, qu0, qv0, pPrev float64
		for l, p := range IVTLevels {
			_, qq, uu, vv := c.atFixed(ivtIndex[l])
			if l > 0 {
				iu += 0.5 * (qu0 + qq*uu) * (pPrev - p)
				iv += 0.5 * (qv0 + qq*vv) * (pPrev - p)
			}
			qu0, qv0, pPrev = qq*uu, qq*vv, p
		}
		f.ivt[k] = math.Hypot(iu, iv) / gravity
		// IWV from the ground to 100 hPa by the trapezoid rule over the
		// surface and the FixedLevels above it.
		_, qPrev, _, _ := c.at(c.ps, warming)
		pPrev = c.ps
		var iwv float64
		for l, p := range FixedLevels {
			if p >= c.ps {
				continue
			}
			_, qq, _, _ := c.atFixed(l)
			iwv += 0.5 * (qPrev + qq) * (pPrev - p)
			qPrev, pPrev = qq, p
		}
		f.iwv[k] = float32(iwv / gravity)
	}
}

var ivtIndex = func() []int {
	var ix []int
	for _, p := range IVTLevels {
		ix = append(ix, fixedIndex(p))
	}
	return ix
}()

// truth fills the class mask: cyclone pixels within a storm's truth
// radius, river pixels where a plume is present and IVT reaches the
// threshold; a cyclone pixel stays a cyclone pixel where both apply. owner
// records which storm (index into f.cyclones) or plume (into f.rivers)
// each classed pixel belongs to.
func (s *season) truth(f *fields) {
	g := s.g
	nlon := len(g.lons)
	for i, lat := range g.lats {
		cosLat := math.Cos(lat * deg)
		for j, lon := range g.lons {
			k := i*nlon + j
			f.mask[k], f.owner[k] = 0, -1
			best := math.Inf(1)
			for q := range f.cyclones {
				a := &f.cyclones[q]
				if a.radius <= 0 {
					continue
				}
				dx := (lon - a.p.lon) * deg * earthRadius * 0.5 * (cosLat + a.cosLat)
				dy := (lat - a.p.lat) * deg * earthRadius
				if r := math.Hypot(dx, dy); r <= a.radius && r < best {
					best = r
					f.mask[k], f.owner[k] = 1, int16(q)
				}
			}
			if f.mask[k] == 0 && f.riverWeight[k] >= riverMinWeight && f.ivt[k] >= ARThreshold {
				f.mask[k], f.owner[k] = 2, f.riverOwner[k]
			}
		}
	}
}
