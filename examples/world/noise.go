package world

import "math"

// Smooth random fields that move in time: sums of plane waves in
// (longitude, latitude) degrees, each drifting zonally and slowly changing
// phase. A plane wave cos(kx lon + ky lat + phase - rate t) separates into
// a column factor and a row factor, so a field costs a few multiplications
// per point and wave, and its derivatives are exact.

type wave struct {
	kx, ky float64 // rad per degree of longitude and latitude
	amp    float64
	phase  float64 // rad
	rate   float64 // rad per hour (zonal drift plus evolution)
}

type waveSet []wave

// newWaveSet draws n waves with wavelengths in [minLen, maxLen] degrees and
// an rms of one, drifting east at drift degrees of longitude per hour and
// changing shape over about period hours.
func newWaveSet(r *rng, n int, minLen, maxLen, drift, period float64) waveSet {
	ws := make(waveSet, n)
	var sum float64
	for i := range ws {
		l := r.uniform(minLen, maxLen)
		dir := r.uniform(0, 2*math.Pi)
		k := 2 * math.Pi / l
		kx, ky := k*math.Cos(dir), k*math.Sin(dir)
		a := 0.5 + r.float()
		ws[i] = wave{kx: kx, ky: ky, amp: a, phase: r.uniform(0, 2*math.Pi),
			rate: kx*drift + r.uniform(-1, 1)*2*math.Pi/period}
		sum += a * a / 2
	}
	norm := 1 / math.Sqrt(sum)
	for i := range ws {
		ws[i].amp *= norm
	}
	return ws
}

// waveGrid evaluates a waveSet on a grid.
type waveGrid struct {
	set        waveSet
	cosA, sinA []float64 // [wave*nlon + j]
	lats       []float64
	nlon       int
	cosB, sinB []float64 // [wave*nlat + i], for the current time
}

func newWaveGrid(set waveSet, lats, lons []float64) *waveGrid {
	g := &waveGrid{set: set, lats: lats, nlon: len(lons)}
	g.cosA = make([]float64, len(set)*len(lons))
	g.sinA = make([]float64, len(set)*len(lons))
	for m, w := range set {
		for j, lon := range lons {
			g.cosA[m*len(lons)+j] = math.Cos(w.kx * lon)
			g.sinA[m*len(lons)+j] = math.Sin(w.kx * lon)
		}
	}
	g.cosB = make([]float64, len(set)*len(lats))
	g.sinB = make([]float64, len(set)*len(lats))
	return g
}

// setTime prepares the row factors for hour t.
func (g *waveGrid) setTime(t float64) {
	n := len(g.lats)
	for m, w := range g.set {
		for i, lat := range g.lats {
			b := w.ky*lat + w.phase - w.rate*t
			g.cosB[m*n+i] = math.Cos(b)
			g.sinB[m*n+i] = math.Sin(b)
		}
	}
}

// at returns the value and its derivatives per degree of longitude and of
// latitude at grid point (i, j).
func (g *waveGrid) at(i, j int) (v, dlon, dlat float64) {
	n := len(g.lats)
	for m, w := range g.set {
		ca, sa := g.cosA[m*g.nlon+j], g.sinA[m*g.nlon+j]
		cb, sb := g.cosB[m*n+i], g.sinB[m*n+i]
		c := ca*cb - sa*sb
		s := sa*cb + ca*sb
		v += w.amp * c
		dlon -= w.amp * w.kx * s
		dlat -= w.amp * w.ky * s
	}
	return v, dlon, dlat
}

// noiseField blends a mid-latitude wave set (drifting east) and a tropical
// one (drifting west) across 18-32N, as weather moves in those belts.
type noiseField struct {
	mid, trop           *waveGrid
	scaleMid, scaleTrop float64
}

// newNoiseField makes a field with rms scaleMid in mid-latitudes and
// scaleTrop in the tropics.
func newNoiseField(r *rng, lats, lons []float64, nwaves int, scaleMid, scaleTrop float64) *noiseField {
	// Drifts: 8 m/s east at 40N and 5 m/s west at 15N, in degrees of
	// longitude per hour; wavelengths 18-55 and 15-40 degrees (chosen).
	east := 8 * 3600 / (earthRadius * deg * math.Cos(40*deg))
	west := -5 * 3600 / (earthRadius * deg * math.Cos(15*deg))
	return &noiseField{
		mid:       newWaveGrid(newWaveSet(r, nwaves, 18, 55, east, 96), lats, lons),
		trop:      newWaveGrid(newWaveSet(r, nwaves, 15, 40, west, 120), lats, lons),
		scaleMid:  scaleMid,
		scaleTrop: scaleTrop,
	}
}

func (f *noiseField) setTime(t float64) { f.mid.setTime(t); f.trop.setTime(t) }

func blendWeight(lat float64) (w, dw float64) {
	x := (lat - 18) / 14
	if x <= 0 || x >= 1 {
		return smoothstep(x), 0
	}
	return smoothstep(x), 6 * x * (1 - x) / 14
}

// at returns the blended field and its derivatives per degree.
func (f *noiseField) at(i, j int) (v, dlon, dlat float64) {
	w, dw := blendWeight(f.mid.lats[i])
	vm, xm, ym := f.mid.at(i, j)
	vt, xt, yt := f.trop.at(i, j)
	a, b := w*f.scaleMid, (1-w)*f.scaleTrop
	v = a*vm + b*vt
	dlon = a*xm + b*xt
	dlat = a*ym + b*yt + dw*(f.scaleMid*vm-f.scaleTrop*vt)
	return v, dlon, dlat
}
