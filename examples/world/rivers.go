package world

import (
	"fmt"
	"math"
)

// Planted atmospheric rivers: a curved axis from the subtropics towards
// the north-east, a Gaussian cross-section, moist warm air and a low-level
// jet along the axis, drifting with the westerlies and waxing and waning
// over a few days.

const (
	// ARThreshold is the IVT (kg m-1 s-1) that bounds a river's truth
	// pixels: the AMS Glossary lateral boundary (Ralph et al. 2018).
	ARThreshold = 250.0
	// riverMinWeight is the plume weight a pixel needs to belong to a
	// planted river at all, so that background IVT above the threshold
	// far from any plume is not called a river.
	riverMinWeight  = 0.05
	riverAxisPoints = 41
	// riverWarmK is the warmth of plume air at its core (chosen).
	riverWarmK = 4.0
)

type riverPlan struct {
	id         string
	start      float64 // hours since season start
	life       float64 // hours
	lat, lon   float64 // origin at start
	dlat, dlon float64 // drift, degrees per hour
	bearing    float64 // deg clockwise from north at the origin
	bend       float64 // change of bearing along the axis, deg
	length     float64 // m
	sigma      float64 // cross-axis Gaussian width, m
	moisture   float64 // specific-humidity anomaly at the core, kg/kg
	jet        float64 // low-level jet at the core, m/s
}

// riverState is a plume at one time: its axis and amplitude.
type riverState struct {
	plan   *riverPlan
	amp    float64                     // 0..1, life cycle
	axis   [riverAxisPoints][2]float64 // lat, lon
	bbox   [4]float64                  // latmin, latmax, lonmin, lonmax including 4 sigma
	cosLat float64
}

func planRivers(seed uint64, sc Scenario, yearIndex, year int, hours float64) []*riverPlan {
	n := sc.Rivers.Count(yearIndex)
	if n == 0 {
		return nil
	}
	r := newRNG(seed, sc.Name, fmt.Sprint(year), "rivers")
	rank := stratified(r, n)
	lo, hi := -12.0, math.Max(hours-36, -11)
	factor := sc.RiverMoisture * (1 + sc.RiverMoistureTrend*float64(yearIndex))
	var out []*riverPlan
	for k := 0; k < n; k++ {
		sr := newRNG(seed, sc.Name, fmt.Sprint(year), "river", fmt.Sprint(k))
		// Stratified strength: 4.5-7.5 g/kg before the scenario factor
		// (chosen so core IVT spans roughly the AR scale's weak to strong
		// classes).
		strength := 4.5e-3 + 3e-3*rank[k]
		p := &riverPlan{
			id:       fmt.Sprintf("%s-%d-ar%02d", sc.Name, year, k+1),
			start:    math.Round(lo + (hi-lo)*(float64(k)+sr.float())/float64(n)),
			life:     math.Round(sr.uniform(48, 96)),
			lat:      sr.uniform(17, 27),
			lon:      sr.uniform(62, 112),
			dlat:     sr.uniform(0.5, 2.5) * 3600 / (earthRadius * deg),
			dlon:     sr.uniform(3, 8) * 3600 / (earthRadius * deg * math.Cos(30*deg)),
			bearing:  sr.uniform(30, 62),
			bend:     sr.uniform(-25, 15),
			length:   sr.uniform(2200e3, 4800e3),
			sigma:    sr.uniform(110e3, 180e3),
			moisture: strength * factor,
			jet:      sr.uniform(18, 26),
		}
		out = append(out, p)
	}
	return out
}

// at returns the plume at hour t, or false when it is not alive.
func (p *riverPlan) at(t float64) (*riverState, bool) {
	tau := (t - p.start) / p.life
	if tau < 0 || tau > 1 {
		return nil, false
	}
	s := &riverState{plan: p, amp: smoothstep(tau/0.25) * smoothstep((1-tau)/0.25)}
	lat := p.lat + p.dlat*(t-p.start)
	lon := p.lon + p.dlon*(t-p.start)
	step := p.length / (riverAxisPoints - 1)
	s.bbox = [4]float64{lat, lat, lon, lon}
	for k := 0; k < riverAxisPoints; k++ {
		s.axis[k] = [2]float64{lat, lon}
		s.bbox[0], s.bbox[1] = math.Min(s.bbox[0], lat), math.Max(s.bbox[1], lat)
		s.bbox[2], s.bbox[3] = math.Min(s.bbox[2], lon), math.Max(s.bbox[3], lon)
		b := (p.bearing + p.bend*float64(k)/(riverAxisPoints-1)) * deg
		lat, lon = destination(lat, lon, b, step)
	}
	m := 4 * p.sigma / (earthRadius * deg)
	s.bbox[0] -= m
	s.bbox[1] += m
	s.cosLat = math.Cos((s.bbox[0] + s.bbox[1]) / 2 * deg)
	s.bbox[2] -= m / math.Max(0.2, math.Cos(s.bbox[1]*deg))
	s.bbox[3] += m / math.Max(0.2, math.Cos(s.bbox[1]*deg))
	return s, true
}

// along is the plume's strength along its axis (s from 0 at the origin to
// 1 at the front): rising over the first fifth, strongest past the middle,
// fading over the last quarter.
func along(s float64) float64 {
	return smoothstep(s/0.2) * smoothstep((1-s)/0.25) * (0.8 + 0.2*s)
}

// weight returns the plume weight at a point (0..1 times the life-cycle
// amplitude) and the unit vector along the axis (east, north).
func (s *riverState) weight(lat, lon float64) (w, te, tn float64) {
	if lat < s.bbox[0] || lat > s.bbox[1] || lon < s.bbox[2] || lon > s.bbox[3] {
		return 0, 0, 0
	}
	// Nearest point of the axis polyline in a local plane (metres).
	c := math.Cos(lat * deg)
	best := math.Inf(1)
	var bs float64
	for k := 0; k < riverAxisPoints-1; k++ {
		ax := (s.axis[k][1] - lon) * c * deg * earthRadius
		ay := (s.axis[k][0] - lat) * deg * earthRadius
		bx := (s.axis[k+1][1] - lon) * c * deg * earthRadius
		by := (s.axis[k+1][0] - lat) * deg * earthRadius
		dx, dy := bx-ax, by-ay
		l2 := dx*dx + dy*dy
		u := 0.0
		if l2 > 0 {
			u = clamp01(-(ax*dx + ay*dy) / l2)
		}
		px, py := ax+u*dx, ay+u*dy
		if d2 := px*px + py*py; d2 < best {
			best = d2
			bs = (float64(k) + u) / (riverAxisPoints - 1)
			l := math.Sqrt(l2)
			te, tn = dx/l, dy/l
		}
	}
	sig := s.plan.sigma
	w = s.amp * along(bs) * math.Exp(-best/(2*sig*sig))
	return w, te, tn
}

// core returns the axis point where the plume is near its strongest
// (along() peaks near s = 0.75), the river's position for the catalog.
func (s *riverState) core() (lat, lon float64) {
	k := int(math.Round(0.7 * (riverAxisPoints - 1)))
	return s.axis[k][0], s.axis[k][1]
}

// landfall reports the first axis point, from the origin on, that lies on
// land where the plume is at least half its core strength.
func (s *riverState) landfall() (lat, lon float64, ok bool) {
	if s.amp < 0.5 {
		return 0, 0, false
	}
	for k := 0; k < riverAxisPoints; k++ {
		sk := float64(k) / (riverAxisPoints - 1)
		if s.amp*along(sk) >= 0.5 && IsLand(s.axis[k][0], s.axis[k][1]) {
			return s.axis[k][0], s.axis[k][1], true
		}
	}
	return 0, 0, false
}

// destination moves from (lat, lon) along a great circle with initial
// bearing b (rad) over distance d (m).
func destination(lat, lon, b, d float64) (float64, float64) {
	p1, l1 := lat*deg, lon*deg
	a := d / earthRadius
	p2 := math.Asin(math.Sin(p1)*math.Cos(a) + math.Cos(p1)*math.Sin(a)*math.Cos(b))
	l2 := l1 + math.Atan2(math.Sin(b)*math.Sin(a)*math.Cos(p1), math.Cos(a)-math.Sin(p1)*math.Sin(p2))
	return p2 / deg, l2 / deg
}
