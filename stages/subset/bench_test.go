package subset

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/squall-climate/squall/examples/world"
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
	"github.com/squall-climate/squall/stages/normalize"
)

// benchChannels are the channels of a typical TC/AR campaign over the
// generator's files (pressure levels 1000..200 hPa).
var benchChannels = []pipeline.Channel{
	{Name: "slp", StandardName: "air_pressure_at_mean_sea_level"},
	{Name: "u850", StandardName: "eastward_wind", LevelPa: 85000},
	{Name: "v850", StandardName: "northward_wind", LevelPa: 85000},
	{Name: "t500", StandardName: "air_temperature", LevelPa: 50000},
	{Name: "q850", StandardName: "specific_humidity", LevelPa: 85000},
	{Name: "wspd10", Derived: "wind_speed"},
	{Name: "vort850", Derived: "relative_vorticity"},
	{Name: "iwv", Derived: "iwv"},
	{Name: "ivt", Derived: "ivt"},
}

// generate writes a world with the given preset, days and years of the
// control scenario and returns the fields files in year order.
func generate(tb testing.TB, preset string, days, years int) []string {
	tb.Helper()
	o, err := world.Preset(preset)
	if err != nil {
		tb.Fatal(err)
	}
	o.Days = days
	o.Scenarios = o.Scenarios[:1]
	o.Scenarios[0].LastYear = o.Scenarios[0].FirstYear + years - 1
	o.Dir = tb.TempDir()
	sum, err := world.Generate(context.Background(), o)
	if err != nil {
		tb.Fatal(err)
	}
	var out []string
	for _, f := range sum.Files {
		if f.Kind == "fields" {
			out = append(out, f.Path)
		}
	}
	return out
}

func envInt(name string, def int) int {
	if v, err := strconv.Atoi(os.Getenv(name)); err == nil && v > 0 {
		return v
	}
	return def
}

// fitOn runs subset and fit-stats for one file and returns stats.json.
func fitOn(tb testing.TB, raw string, year string) string {
	tb.Helper()
	fields, err := runSubset(tb, []string{raw}, year, benchChannels, nil, defaults())
	if err != nil {
		tb.Fatal(err)
	}
	y, _ := strconv.Atoi(year)
	out := tb.TempDir()
	job := &pipeline.Job{Stage: "fit", Kind: "fit-stats", OutDir: out, Settings: pipeline.Values{},
		Campaign: pipeline.CampaignInfo{Split: pipeline.Split{Train: []pipeline.Period{{First: y, Last: y}}}},
		Inputs:   []pipeline.Input{{From: "subset", Scenario: "control", Block: year, Files: []string{fields}}}}
	for _, s := range (normalize.FitKind{}).Settings() {
		job.Settings[s.Name] = s.Default
	}
	if err := (normalize.FitKind{}).Run(context.Background(), job); err != nil {
		tb.Fatal(err)
	}
	return filepath.Join(out, normalize.StatsFile)
}

func runNormalize(tb testing.TB, fields, stats, block string, precision string) string {
	tb.Helper()
	out := tb.TempDir()
	job := &pipeline.Job{Stage: "norm", Kind: "normalize", Scenario: "control", Block: block, OutDir: out, Settings: pipeline.Values{},
		Inputs: []pipeline.Input{{From: "subset", Files: []string{fields}}, {From: "fit", Files: []string{stats}}}}
	for _, s := range (normalize.Kind{}).Settings() {
		job.Settings[s.Name] = s.Default
	}
	job.Settings["precision"] = precision
	if err := (normalize.Kind{}).Run(context.Background(), job); err != nil {
		tb.Fatal(err)
	}
	return filepath.Join(out, normalize.NormalizedFile)
}

// baselineIO does with the netCDF library alone (through ncio, one
// goroutine) the I/O that subset + normalize do: read every slab subset
// reads, write as many float channels of the output shape (one step per
// chunk, deflate 1 + shuffle), read them back and write them again.
func baselineIO(tb testing.TB, p *planned, dir string) (readBytes int64) {
	tb.Helper()
	ny, nx := len(p.lat), len(p.lon)
	nc := len(p.channels)
	plane := p.win.nrow * p.win.ncol
	write := func(path string, fill func(c, t int, buf []float32)) {
		w, err := ncio.Create(path)
		if err != nil {
			tb.Fatal(err)
		}
		w.DefDim("time", len(p.keep))
		w.DefDim("lat", ny)
		w.DefDim("lon", nx)
		for c := 0; c < nc; c++ {
			w.DefVar(ncio.VarSpec{Name: fmt.Sprintf("c%d", c), Type: ncio.Float, Dims: []string{"time", "lat", "lon"},
				Deflate: 1, Shuffle: true, Chunks: []int{1, ny, nx}})
		}
		if err := w.EndDef(); err != nil {
			tb.Fatal(err)
		}
		buf := make([]float32, ny*nx)
		for t := range p.keep {
			for c := 0; c < nc; c++ {
				fill(c, t, buf)
				if err := w.WriteFloat32(fmt.Sprintf("c%d", c), []int{t, 0, 0}, []int{1, ny, nx}, buf); err != nil {
					tb.Fatal(err)
				}
			}
		}
		if err := w.Close(); err != nil {
			tb.Fatal(err)
		}
	}
	// subset: read the same slabs, write the channels.
	first := filepath.Join(dir, "base1.nc")
	var last []float32
	write(first, func(c, t int, buf []float32) {
		if c == 0 {
			for _, s := range p.sources {
				st := s.steps[p.keep[t]]
				lead, cnt := []int{st.t}, []int{1}
				if s.lv != nil {
					lead, cnt = []int{st.t, s.k0}, []int{1, s.nk}
				}
				sl, err := p.readWindow(st.v, lead, cnt)
				if err != nil {
					tb.Fatal(err)
				}
				readBytes += int64(len(sl) * plane * 4)
				last = sl[0]
			}
		}
		copy(buf, last)
	})
	// normalize: read the channels back, write them again.
	f, err := ncio.Open(first)
	if err != nil {
		tb.Fatal(err)
	}
	defer f.Close()
	write(filepath.Join(dir, "base2.nc"), func(c, t int, buf []float32) {
		v, _ := f.Var(fmt.Sprintf("c%d", c))
		if err := v.ReadFloat32Into(buf, []int{t, 0, 0}, []int{1, ny, nx}); err != nil {
			tb.Fatal(err)
		}
	})
	return readBytes
}

// BenchmarkSubsetNormalize measures subset + normalize on one year of the
// generator's bench grid (0.5 deg, 109 x 163, 3-hourly; SQUALL_BENCH_DAYS
// days, default 8) against the netCDF library alone doing the same reads
// and writes (baselineIO), and reports MB/s of raw input read and the
// ratio (ours / library; 1 means as fast as the I/O alone):
//
//	go test ./stages/subset -run XXX -bench SubsetNormalize -benchtime 3x
func BenchmarkSubsetNormalize(b *testing.B) {
	testWorkers = 0 // the production default
	defer func() { testWorkers = 2 }()
	days := envInt("SQUALL_BENCH_DAYS", 8)
	files := generate(b, "bench", days, 1)
	year := strings.TrimSuffix(strings.TrimPrefix(filepath.Base(files[0]), "fields_"), ".nc")
	stats := fitOn(b, files[0], year)
	o, _ := readOptions(defaults())
	p, err := plan(benchChannels, nil, files, mustAtoi(year), "", o)
	if err != nil {
		b.Fatal(err)
	}
	defer p.close()
	var ours, base time.Duration
	var bytes int64
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t0 := time.Now()
		fields, err := runSubset(b, files, year, benchChannels, nil, defaults())
		if err != nil {
			b.Fatal(err)
		}
		runNormalize(b, fields, stats, year, "float32")
		ours += time.Since(t0)
		t1 := time.Now()
		bytes = baselineIO(b, p, b.TempDir())
		base += time.Since(t1)
	}
	n := float64(b.N)
	b.ReportMetric(float64(bytes)/1e6/(ours.Seconds()/n), "MB/s")
	b.ReportMetric(float64(bytes)/1e6/(base.Seconds()/n), "library-MB/s")
	b.ReportMetric(base.Seconds()/ours.Seconds(), "ratio")
	b.ReportMetric(float64(bytes)/1e6, "MB-read")
	b.ReportMetric(0, "ns/op")
}

func mustAtoi(s string) int {
	n, err := strconv.Atoi(s)
	if err != nil {
		panic(err)
	}
	return n
}

// TestMemoryChild is the child process of BenchmarkPeakMemory: it runs
// subset for each raw file listed in SQUALL_MEM_FILES, fit-stats over all
// of them and normalize for each, one after the other in one process.
func TestMemoryChild(t *testing.T) {
	list := os.Getenv("SQUALL_MEM_FILES")
	if list == "" {
		t.Skip("child process of BenchmarkPeakMemory")
	}
	testWorkers = 0 // the production default
	files := strings.Split(list, ",")
	var fields []string
	job := &pipeline.Job{Stage: "fit", Kind: "fit-stats", OutDir: t.TempDir(), Settings: pipeline.Values{}}
	for _, s := range (normalize.FitKind{}).Settings() {
		job.Settings[s.Name] = s.Default
	}
	for _, f := range files {
		year := strings.TrimSuffix(strings.TrimPrefix(filepath.Base(f), "fields_"), ".nc")
		out, err := runSubset(t, []string{f}, year, benchChannels, nil, defaults())
		if err != nil {
			t.Fatal(err)
		}
		fields = append(fields, out)
		y := mustAtoi(year)
		job.Campaign.Split.Train = append(job.Campaign.Split.Train, pipeline.Period{First: y, Last: y})
		job.Inputs = append(job.Inputs, pipeline.Input{From: "subset", Scenario: "control", Block: year, Files: []string{out}})
	}
	if err := (normalize.FitKind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	for i, f := range fields {
		runNormalize(t, f, filepath.Join(job.OutDir, normalize.StatsFile), job.Inputs[i].Block, "float16")
	}
}

// BenchmarkPeakMemory reports the peak resident memory of a child process
// running subset + fit-stats + normalize over 1 and over 8 years of the
// generator's demo grid (SQUALL_BENCH_DAYS days a year, default 10), and
// their ratio; streaming by time step keeps it near 1:
//
//	go test ./stages/subset -run XXX -bench PeakMemory -benchtime 1x
func BenchmarkPeakMemory(b *testing.B) {
	days := envInt("SQUALL_BENCH_DAYS", 10)
	files := generate(b, "demo", days, 8)
	exe, err := os.Executable()
	if err != nil {
		b.Fatal(err)
	}
	peak := func(fs []string) float64 {
		cmd := exec.Command(exe, "-test.run=^TestMemoryChild$", "-test.count=1")
		cmd.Env = append(os.Environ(), "SQUALL_MEM_FILES="+strings.Join(fs, ","))
		if out, err := cmd.CombinedOutput(); err != nil {
			b.Fatalf("child: %v\n%s", err, out)
		}
		ru := cmd.ProcessState.SysUsage().(*syscall.Rusage)
		return float64(ru.Maxrss) / 1024 // kB -> MB (Linux reports kB)
	}
	var one, eight float64
	for i := 0; i < b.N; i++ {
		one, eight = peak(files[:1]), peak(files)
	}
	b.ReportMetric(one, "MB-1-year")
	b.ReportMetric(eight, "MB-8-years")
	b.ReportMetric(eight/one, "ratio")
	b.ReportMetric(0, "ns/op")
}
