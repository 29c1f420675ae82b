package label

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"testing"
	"time"

	invented "github.com/squall-climate/squall/examples/world"
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/subset"
)

// benchDir holds the generated bench input; TestMain removes it.
var benchDir string

func TestMain(m *testing.M) {
	code := m.Run()
	if benchDir != "" {
		os.RemoveAll(benchDir)
	}
	os.Exit(code)
}

// benchInput generates (once per process) an invented world and cuts the
// label channels of its first block with the subset kind. The preset is
// LABEL_BENCH_PRESET ("bench" for the generator's bench input, about
// 3.4 GB of raw fields; default "small": the tiny preset at 0.5 degrees,
// 3-hourly, 6 days, one scenario-year).
var benchInput = sync.OnceValues(func() (string, error) {
	preset := os.Getenv("LABEL_BENCH_PRESET")
	if preset == "" {
		preset = "small"
	}
	name := preset
	if preset == "small" {
		name = "tiny"
	}
	o, err := invented.Preset(name)
	if err != nil {
		return "", err
	}
	if preset == "small" {
		o.Resolution, o.StepHours, o.Days = 0.5, 3, 6
		o.Scenarios = o.Scenarios[:1]
		o.Scenarios[0].LastYear = o.Scenarios[0].FirstYear
	}
	dir, err := os.MkdirTemp("", "label-bench-")
	if err != nil {
		return "", err
	}
	benchDir = dir
	o.Dir = filepath.Join(dir, "world")
	if _, err := invented.Generate(context.Background(), o); err != nil {
		return "", err
	}
	sc := o.Scenarios[0]
	year := strconv.Itoa(sc.FirstYear)
	sv := pipeline.Values{}
	for _, s := range (subset.Kind{}).Settings() {
		sv[s.Name] = s.Default
	}
	out := filepath.Join(dir, "subset")
	if err := os.MkdirAll(out, 0o755); err != nil {
		return "", err
	}
	job := &pipeline.Job{Stage: "fields", Kind: "subset", Scenario: sc.Name, Block: year, Settings: sv, OutDir: out,
		Inputs:   []pipeline.Input{{From: sc.Name, Kind: "scenario", Scenario: sc.Name, Block: year, Files: []string{filepath.Join(o.Dir, sc.Name, "fields_"+year+".nc")}}},
		Campaign: pipeline.CampaignInfo{Name: "bench", Channels: worldChannels()}}
	if err := (subset.Kind{}).Run(context.Background(), job); err != nil {
		return "", err
	}
	return filepath.Join(out, subset.FieldsFile), nil
})

// BenchmarkLabel runs the label kind (default settings, both classes) on
// the bench input and reports time steps labelled per second, grid points
// per second, and the ratio of the label time to reading every channel of
// the same file once with the netCDF library (x_read; the label stage
// reads the 10 m wind twice, so 2 is about the floor for pure I/O).
//
//	go test ./stages/label -run '^$' -bench Label -benchtime 3x
//	LABEL_BENCH_PRESET=bench go test ./stages/label -run '^$' -bench Label -benchtime 1x
func BenchmarkLabel(b *testing.B) {
	fp, err := benchInput()
	if err != nil {
		b.Fatal(err)
	}
	fl, err := OpenFields(fp)
	if err != nil {
		b.Fatal(err)
	}
	steps, points := fl.Time.Len(), fl.Grid.Len()
	// Raw read: every channel, every step, once.
	t0 := time.Now()
	buf := make([]float64, points)
	for _, c := range fl.Channels {
		for s := range steps {
			if _, err := fl.Read(c, s, buf); err != nil {
				b.Fatal(err)
			}
		}
	}
	read := time.Since(t0)
	fl.Close()
	b.ResetTimer()
	for b.Loop() {
		dir := b.TempDir()
		job := &pipeline.Job{Stage: "labels", Kind: KindName, Settings: DefaultValues(), OutDir: dir,
			Inputs: []pipeline.Input{{From: "fields", Kind: "subset", Files: []string{fp}}}}
		if err := (Kind{}).Run(context.Background(), job); err != nil {
			b.Fatal(err)
		}
	}
	per := b.Elapsed().Seconds() / float64(b.N)
	b.ReportMetric(float64(steps)/per, "steps/s")
	b.ReportMetric(float64(steps*points)/per/1e6, "Mpoints/s")
	b.ReportMetric(per/read.Seconds(), "x_read")
	b.Logf("input %dx%d points, %d steps, %d channels; raw read %.3f s, label %.3f s", fl.Grid.NLat(), fl.Grid.NLon(), steps, len(fl.Channels), read.Seconds(), per)
}

// smoothField is a seeded sum of plane waves on the grid, scaled to an
// IVT-like range, so thresholding it gives blobs and filaments of many
// sizes.
func smoothField(g *grid.Grid, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	type wave struct{ kx, ky, ph, a float64 }
	var ws []wave
	for range 24 {
		ws = append(ws, wave{float64(1 + rng.IntN(12)), float64(1 + rng.IntN(8)), rng.Float64() * 2 * math.Pi, 0.5 + rng.Float64()})
	}
	f := make([]float64, g.Len())
	for k := range f {
		i, j := g.RowCol(k)
		la, lo := g.Lat[i]*math.Pi/180, g.Lon[j]*math.Pi/180
		var s float64
		for _, w := range ws {
			s += w.a * math.Sin(w.kx*lo+w.ky*la*2+w.ph)
		}
		f[k] = 150 + 40*s
	}
	return f
}

// BenchmarkDetectAR is AR detection (threshold, 8-connected components
// across the date line, spherical shape of every object, rules) on a
// 0.25 degree global field: grid points per second.
func BenchmarkDetectAR(b *testing.B) {
	g, err := grid.Global(0.25, 0.25)
	if err != nil {
		b.Fatal(err)
	}
	f := smoothField(g, 1)
	thr := make([]float64, g.Len())
	for k := range thr {
		thr[k] = 250
	}
	c, _ := ParseConfig(DefaultValues())
	mask := make([]bool, g.Len())
	var objs []ARObject
	for b.Loop() {
		clear(mask)
		objs, err = DetectAR(g, f, thr, &c.ARConf, 0, mask)
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(g.Len())*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mpoints/s")
	b.Logf("%s: %d objects", fmt.Sprint(g.NLat(), "x", g.NLon()), len(objs))
}

// BenchmarkFindCandidates is the per-step TC search (SLP minima in 7x7
// windows plus the criteria) on a 0.25 degree global field with planted
// storms: grid points per second.
func BenchmarkFindCandidates(b *testing.B) {
	g, err := grid.Global(0.25, 0.25)
	if err != nil {
		b.Fatal(err)
	}
	w := world{g: g}
	for k := range 6 {
		w.storm = append(w.storm, holland{lat: 12 + 3*float64(k), lon: 120 + 25*float64(k), pc: 96000, dp: 5000, rmax: 40e3, b: 1.5, rho: 1.15})
	}
	f := w.step(1)
	noise := smoothField(g, 2)
	for k := range f.SLP {
		f.SLP[k] += noise[k] // many shallow minima, as in real data
	}
	c, _ := ParseConfig(DefaultValues())
	thr := WindThreshold(g)
	var n int
	for b.Loop() {
		cs, err := FindCandidates(g, f, &c.TCConf, thr, 0, 0)
		if err != nil {
			b.Fatal(err)
		}
		n = len(cs)
	}
	b.ReportMetric(float64(g.Len())*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mpoints/s")
	b.Logf("%d candidates", n)
}
