package label

import (
	"math"
	"path/filepath"
	"testing"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// testChannel is one channel of a test fields.nc: data per step in the
// given units.
type testChannel struct {
	name, quantity, units string
	level                 float64 // Pa, 0 for single level
	data                  [][]float64
}

// writeFields writes a fields.nc in the shared layout (dims time, lat,
// lon; float32 channels with quantity and level_pa) with ncio.
func writeFields(t testing.TB, path string, g *grid.Grid, hours []float64, calendar string, chans []testChannel) {
	t.Helper()
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefTime(hours, "hours since 1990-01-01 00:00:00", calendar)
	w.DefLat(g.Lat)
	w.DefLon(g.Lon)
	for _, c := range chans {
		attrs := []ncio.Attr{{Name: "long_name", Value: c.name}, {Name: "units", Value: c.units}, {Name: "quantity", Value: c.quantity}}
		if c.level > 0 {
			attrs = append(attrs, ncio.Attr{Name: "level_pa", Value: c.level})
		}
		w.DefVar(ncio.VarSpec{Name: c.name, Type: ncio.Float, Dims: []string{"time", "lat", "lon"}, Fill: float32(1e20), Attrs: attrs})
	}
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	n := g.Len()
	buf := make([]float32, n)
	for _, c := range chans {
		for s, d := range c.data {
			for i, x := range d {
				if math.IsNaN(x) {
					buf[i] = 1e20
				} else {
					buf[i] = float32(x)
				}
			}
			if err := w.WriteFloat32(c.name, []int{s, 0, 0}, []int{1, g.NLat(), g.NLon()}, buf); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// scene is a synthetic block: moving Holland storms and an AR band on a
// regional grid, 6-hourly.
type scene struct {
	g      *grid.Grid
	hours  []float64
	storms [][]holland // per step
	// river: IVT band along the great circle from (lat0, lon0) to
	// (lat1, lon1), IVT peak inside half-width halfW metres, per step
	// (nil: none).
	river    []*band
	ivtBack  float64
	withTemp bool
}

type band struct {
	lat0, lon0, lat1, lon1 float64
	halfW, peak            float64
	in                     []bool // cached inside(g)
}

// inside returns, per grid point, whether it lies within halfW of the
// band's axis (computed once; the test grids do not change).
func (b *band) inside(g *grid.Grid) []bool {
	if b.in == nil {
		b.in = make([]bool, g.Len())
		for k := range b.in {
			i, j := g.RowCol(k)
			b.in[k] = b.distance(g.Lat[i], g.Lon[j]) <= b.halfW
		}
	}
	return b.in
}

// distance is the great-circle distance from a point to the band's axis,
// the straight line in latitude-longitude from (lat0, lon0) to (lat1,
// lon1), sampled at 400 points (fine enough for test geometry).
func (b *band) distance(lat, lon float64) float64 {
	best := math.Inf(1)
	const n = 400
	for k := 0; k <= n; k++ {
		f := float64(k) / n
		la := b.lat0 + f*(b.lat1-b.lat0)
		lo := b.lon0 + f*(b.lon1-b.lon0)
		best = math.Min(best, grid.Distance(la, lo, lat, lon))
	}
	return best
}

func (sc *scene) channels() []testChannel {
	nt := len(sc.hours)
	mk := func(name, q, units string, level float64) testChannel {
		return testChannel{name: name, quantity: q, units: units, level: level, data: make([][]float64, nt)}
	}
	slp := mk("psl", QSLP, "hPa", 0) // hPa: exercises unit conversion
	vo := mk("vo850", QVort, "s-1", 85000)
	ws := mk("ws10", QWind, "m s-1", 0)
	t850, t700 := mk("ta850", QTemp, "K", 85000), mk("ta700", QTemp, "K", 70000)
	t500, t300 := mk("ta500", QTemp, "degC", 50000), mk("ta300", QTemp, "K", 30000)
	w850, w300 := mk("ws850", QWind, "m s-1", 85000), mk("ws300", QWind, "m s-1", 30000)
	ivt := mk("ivt", QIVT, "kg m-1 s-1", 0)
	for s := range nt {
		w := world{g: sc.g, storm: sc.storms[s]}
		f := w.step(1)
		slp.data[s] = scaled(f.SLP, 0.01, 0)
		vo.data[s], ws.data[s] = f.Vort850, f.Wind10
		t850.data[s], t700.data[s] = f.T850, f.T700
		t500.data[s], t300.data[s] = scaled(f.T500, 1, -273.15), f.T300
		w850.data[s], w300.data[s] = f.Wind850, f.Wind300
		iv := make([]float64, sc.g.Len())
		for k := range iv {
			iv[k] = sc.ivtBack
			if b := sc.river[s]; b != nil && b.inside(sc.g)[k] {
				iv[k] = b.peak
			}
		}
		ivt.data[s] = iv
	}
	out := []testChannel{slp, vo, ws, w850, w300, ivt}
	if sc.withTemp {
		out = append(out, t850, t700, t500, t300)
	}
	return out
}

func scaled(x []float64, a, b float64) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = v*a + b
	}
	return out
}

// stormScene: one storm moving from 15N 150E north-westward 20 km/h for
// 3.5 days (15 steps); a river band in the second half.
func stormScene(t testing.TB) *scene {
	g := mustGrid(t, 0, 1, 51, 100, 1, 81) // 0..50N, 100..180E
	sc := &scene{g: g, ivtBack: 80, withTemp: true}
	lat, lon := 15.0, 150.0
	river := &band{lat0: 30, lon0: 110, lat1: 45, lon1: 160, halfW: 250e3, peak: 400}
	for s := range 15 {
		sc.hours = append(sc.hours, float64(6*s))
		h := holland{lat: lat, lon: lon, pc: 95500, dp: 5500, rmax: 60e3, b: 1.4, rho: 1.15}
		sc.storms = append(sc.storms, []holland{h})
		lat, lon = grid.Destination(lat, lon, 315, 120e3)
		var b *band
		if s >= 7 {
			b = river
		}
		sc.river = append(sc.river, b)
	}
	return sc
}

func writeScene(t testing.TB, dir string, sc *scene) string {
	p := filepath.Join(dir, FieldsFile)
	writeFields(t, p, sc.g, sc.hours, "noleap", sc.channels())
	return p
}
