package world

import (
	"fmt"
	"math"
)

// Planted tropical cyclones. Tracks are integrated hourly, independent of
// the grid and the output time step, so the same seed gives the same
// storms at any resolution.

const (
	// TCWindThreshold is the planted 10 m wind (m/s) whose outer radius
	// bounds a cyclone's truth pixels: 34 kt, the NWS tropical-storm
	// threshold (34 kt = 17.49 m/s with 1 kt = 1852/3600 m/s).
	TCWindThreshold = 34 * 1852.0 / 3600
	// TCMaxRadius caps the truth radius (m).
	TCMaxRadius = 500e3
	// surfaceWindFactor turns gradient-level wind into 10 m wind (chosen,
	// in the range of common practice, 0.7-0.9).
	surfaceWindFactor = 0.8
	// landDecayHours is the e-folding time of the pressure deficit over
	// land (chosen; inland decay takes a day or so).
	landDecayHours = 15.0
	// cycloneTaperInner/Outer: the profile is tapered to zero between these
	// radii (m) so a storm has a finite footprint.
	cycloneTaperInner = 700e3
	cycloneTaperOuter = 1600e3
	// warmCorePerPa is the 300 hPa warm-core amplitude per Pa of deficit
	// (0.16 K per hPa, chosen so the published 3 K warm-core sum is met by
	// mature storms and missed by weak ones).
	warmCorePerPa = 0.16 / 100
)

// cyclonePlan is one planted storm over its life, with hourly points.
type cyclonePlan struct {
	id          string
	genesis     float64 // hours since the season start (may be negative)
	peakDeficit float64 // Pa
	rmax0       float64 // m
	b           float64
	points      []cyclonePoint // hourly from genesis
}

type cyclonePoint struct {
	hour     float64
	lat, lon float64
	dp       float64 // pressure deficit, Pa
	rmax     float64 // m
	ue, vn   float64 // translation, m/s
	land     bool
}

// holland returns the Holland profile of the storm at a point with ambient
// pressure pn.
func (p cyclonePoint) holland(b, pn float64) Holland {
	return Holland{CentralPressure: pn - p.dp, AmbientPressure: pn, Rmax: p.rmax, B: b,
		AirDensity: airDensity, Coriolis: 2 * omega * math.Sin(math.Abs(p.lat)*deg)}
}

// at returns the storm state at hour t, or false when it is not alive.
func (c *cyclonePlan) at(t float64) (cyclonePoint, bool) {
	k := int(math.Round(t - c.genesis))
	if k < 0 || k >= len(c.points) {
		return cyclonePoint{}, false
	}
	return c.points[k], true
}

// planCyclones draws the storms of one season.
func planCyclones(seed uint64, sc Scenario, yearIndex, year int, hours float64) []*cyclonePlan {
	n := sc.Cyclones.Count(yearIndex)
	if n == 0 {
		return nil
	}
	r := newRNG(seed, sc.Name, fmt.Sprint(year), "cyclones")
	// Stratified draws keep each season's spread of times and strengths
	// the same, so that the trend across years is the planted one, not
	// sampling noise. A shuffle decouples strength from time.
	rank := stratified(r, n)
	lo, hi := -24.0, math.Max(hours-48, -23)
	factor := sc.CycloneIntensity * (1 + sc.CycloneIntensityTrend*float64(yearIndex))
	var out []*cyclonePlan
	for k := 0; k < n; k++ {
		sr := newRNG(seed, sc.Name, fmt.Sprint(year), "cyclone", fmt.Sprint(k))
		genesis := math.Round(lo + (hi-lo)*(float64(k)+sr.float())/float64(n))
		// Peak deficit 20-75 hPa before the scenario factor (chosen: from
		// strong tropical storms to category 3-4 Holland winds); the
		// season's mean is exactly 47.5 hPa times the factor.
		dp := (20 + 55*rank[k]) * 100 * factor
		c := &cyclonePlan{
			id:          fmt.Sprintf("%s-%d-tc%02d", sc.Name, year, k+1),
			genesis:     genesis,
			peakDeficit: dp,
			rmax0:       sr.uniform(55e3, 100e3),
			b:           sr.uniform(1.3, 2.0),
		}
		c.integrate(sr)
		out = append(out, c)
	}
	return out
}

// stratified returns n numbers in (0, 1), one in each of the n equal
// slices, in random order, with mean exactly 1/2: each season gets the same
// spread of strengths, so yearly means follow the planted trend exactly.
func stratified(r *rng, n int) []float64 {
	u := make([]float64, n)
	var mean float64
	for i := range u {
		u[i] = r.float()
		mean += u[i] / float64(n)
	}
	out := make([]float64, n)
	for i := range out {
		out[i] = (float64(i) + 0.5 + 0.5*(u[i]-mean)) / float64(n)
	}
	for i := n - 1; i > 0; i-- {
		j := int(r.next() % uint64(i+1))
		out[i], out[j] = out[j], out[i]
	}
	return out
}

// integrate moves the storm hourly: west-north-west in the trades, turning
// clockwise to the north-east (recurving) around a latitude drawn per
// storm, faster after recurvature; it intensifies to a peak and decays,
// faster over land and over cool northern water.
func (c *cyclonePlan) integrate(r *rng) {
	lat := r.uniform(8, 15)
	lon := r.uniform(70, 125)
	life := r.uniform(5, 9) * 24
	turnLat := r.uniform(19, 27)
	h0, h1 := r.uniform(285, 305), r.uniform(400, 425) // headings, deg clockwise from north
	s0, s1 := r.uniform(4.5, 6.5), r.uniform(8, 12)    // speeds, m/s
	peakAt := r.uniform(0.4, 0.6)
	wobbleP, wobbleA := r.uniform(30, 60), r.uniform(0, 2*math.Pi)
	landHours := 0.0
	for k := 0; ; k++ {
		t := float64(k)
		tau := t / life
		if tau > 1 || lat > worldLatMax-2 || lon < worldLonMin+1 || lon > worldLonMax-1 {
			break
		}
		var g float64
		if tau < peakAt {
			g = 0.25 + 0.75*smoothstep(tau/peakAt)
		} else {
			g = 1 - 0.6*smoothstep((tau-peakAt)/(1-peakAt))
		}
		g *= math.Exp(-math.Max(0, lat-30) / 8)
		land := IsLand(lat, lon)
		if land {
			landHours++
		}
		g *= math.Exp(-landHours / landDecayHours)
		if landHours > 0 && g < 0.12 {
			break // dissipated inland
		}
		turn := smoothstep((lat - turnLat + 4) / 8)
		head := (h0 + (h1-h0)*turn + 8*math.Sin(2*math.Pi*t/wobbleP+wobbleA)) * deg
		speed := s0 + (s1-s0)*turn
		ue, vn := speed*math.Sin(head), speed*math.Cos(head)
		c.points = append(c.points, cyclonePoint{
			hour: c.genesis + t, lat: lat, lon: lon,
			dp:   c.peakDeficit * g,
			rmax: c.rmax0 * (1 + 0.04*math.Max(0, lat-20)),
			ue:   ue, vn: vn, land: land,
		})
		lat += vn * 3600 / (earthRadius * deg)
		lon += ue * 3600 / (earthRadius * deg * math.Cos(lat*deg))
	}
}

// cycloneSurface describes what the truth needs from a storm at one time:
// its planted 10 m wind maximum and the radius of the truth pixels.
func cycloneSurface(p cyclonePoint, b float64) (v10max, radius float64) {
	h := p.holland(b, 101000)
	_, vg := h.MaxGradientWind()
	radius = h.RadiusOfGradientWind(TCWindThreshold/surfaceWindFactor, TCMaxRadius)
	return surfaceWindFactor * vg, radius
}
