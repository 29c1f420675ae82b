package catalog

import (
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"
	"time"

	"github.com/squall-climate/squall/stages/grid"
)

// benchMask writes a 0.5-degree global mask of 40 six-hourly steps with
// 30 moving cyclone disks and 12 drifting river bands (seeded).
func benchMask(b *testing.B) (string, *grid.Grid, int) {
	b.Helper()
	g, err := grid.Global(0.5, 0.5)
	if err != nil {
		b.Fatal(err)
	}
	const steps = 40
	rng := rand.New(rand.NewPCG(7, 7)) // fixed seed
	type blob struct{ lat, lon, dlat, dlon, r float64 }
	var tcs, ars []blob
	for range 30 {
		tcs = append(tcs, blob{rng.Float64()*50 - 25, rng.Float64() * 360, rng.Float64() - 0.3, -1 - rng.Float64(), 2 + 2*rng.Float64()})
	}
	for range 12 {
		ars = append(ars, blob{30 + rng.Float64()*25, rng.Float64() * 360, 0.2, 1.5, 3})
	}
	tf := testFile{g: g}
	for s := range steps {
		tf.times = append(tf.times, float64(6*s))
		m := make([]byte, g.Len())
		for i, lat := range g.Lat {
			for j, lon := range g.Lon {
				k := g.Index(i, j)
				for _, a := range ars {
					la, lo := a.lat+a.dlat*float64(s), a.lon+a.dlon*float64(s)
					if math.Abs(lat-la-0.3*grid.LonDiff(lo, lon)) < a.r && math.Abs(grid.LonDiff(lo, lon)) < 25 {
						m[k] = AtmosphericRiver
					}
				}
				for _, c := range tcs {
					la, lo := c.lat+c.dlat*float64(s), c.lon+c.dlon*float64(s)
					if math.Abs(lat-la) < c.r && math.Abs(grid.LonDiff(lo, lon)) < c.r {
						m[k] = TropicalCyclone
					}
				}
			}
		}
		tf.mask = append(tf.mask, m)
	}
	path := filepath.Join(b.TempDir(), MaskName)
	tf.write(b, path)
	return path, g, steps
}

// BenchmarkCatalog measures component labelling and linking of both
// classes on the bench mask, as pixels per second, and the ratio of that
// time to reading the masks alone through the netCDF library
// (x_read_time: 1 means labelling costs nothing beyond the read).
//
//	go test -run - -bench Catalog ./stages/catalog
func BenchmarkCatalog(b *testing.B) {
	path, g, steps := benchMask(b)
	buf := make([]byte, g.Len())
	read := func(build bool) time.Duration {
		start := time.Now()
		mf, err := OpenMask(path)
		if err != nil {
			b.Fatal(err)
		}
		defer mf.Close()
		bl, _ := NewBuilder(g, nil, nil)
		bl.LinkKmPer6h = [3]float64{0, 400, 0}
		for i := range mf.NSteps() {
			if err := mf.Read(i, buf); err != nil {
				b.Fatal(err)
			}
			if build {
				if err := bl.Step(i, Time{Hours: float64(6 * i)}, buf, Fields{}); err != nil {
					b.Fatal(err)
				}
			}
		}
		if build && len(bl.Events(Filter{})) == 0 {
			b.Fatal("no events")
		}
		return time.Since(start)
	}
	var tRead, tAll time.Duration
	b.ResetTimer()
	for b.Loop() {
		tRead += read(false)
		tAll += read(true)
	}
	px := float64(g.Len() * steps * b.N)
	b.ReportMetric(px/tAll.Seconds(), "pixels/s")
	b.ReportMetric(px/tRead.Seconds(), "read_pixels/s")
	b.ReportMetric(tAll.Seconds()/tRead.Seconds(), "x_read_time")
}
