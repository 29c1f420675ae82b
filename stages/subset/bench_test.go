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
	"github.com/squall-climate/squall/stages/shard"
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
	var oursCPU, baseCPU float64
	var bytes int64
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t0, c0 := time.Now(), cpuSeconds()
		fields, err := runSubset(b, files, year, benchChannels, nil, defaults())
		if err != nil {
			b.Fatal(err)
		}
		runNormalize(b, fields, stats, year, "float32")
		ours += time.Since(t0)
		oursCPU += cpuSeconds() - c0
		t1, c1 := time.Now(), cpuSeconds()
		bytes = baselineIO(b, p, b.TempDir())
		base += time.Since(t1)
		baseCPU += cpuSeconds() - c1
	}
	n := float64(b.N)
	b.ReportMetric(float64(bytes)/1e6/(ours.Seconds()/n), "MB/s")
	b.ReportMetric(float64(bytes)/1e6/(base.Seconds()/n), "library-MB/s")
	b.ReportMetric(base.Seconds()/ours.Seconds(), "ratio")
	// CPU seconds are steadier than wall time on a shared machine; the CPU
	// ratio says how much work we add to the library's, whatever the load.
	b.ReportMetric(float64(bytes)/1e6/(oursCPU/n), "MB/cpu-s")
	b.ReportMetric(float64(bytes)/1e6/(baseCPU/n), "library-MB/cpu-s")
	b.ReportMetric(baseCPU/oursCPU, "cpu-ratio")
	b.ReportMetric(float64(bytes)/1e6, "MB-read")
	b.ReportMetric(0, "ns/op")
}

// cpuSeconds is the user plus system CPU time of the process so far.
func cpuSeconds() float64 {
	var r syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &r); err != nil {
		return 0
	}
	return float64(r.Utime.Nano()+r.Stime.Nano()) / 1e9
}

func mustAtoi(s string) int {
	n, err := strconv.Atoi(s)
	if err != nil {
		panic(err)
	}
	return n
}

// TestMemoryChild is the child process of BenchmarkPeakMemory. With
// SQUALL_MEM_KIND=fit it runs fit-stats over the fields.nc files listed in
// SQUALL_MEM_FILES; with shard, shard over the normalized.nc files; with
// block, subset + normalize of the one raw file listed (what one block's
// instances do, each in its own process in a real run).
func TestMemoryChild(t *testing.T) {
	list := os.Getenv("SQUALL_MEM_FILES")
	if list == "" {
		t.Skip("child process of BenchmarkPeakMemory")
	}
	testWorkers = 0 // the production default
	files := strings.Split(list, ",")
	years := func(f string) string { return filepath.Base(filepath.Dir(f)) }
	switch os.Getenv("SQUALL_MEM_KIND") {
	case "block":
		year := strings.TrimSuffix(strings.TrimPrefix(filepath.Base(files[0]), "fields_"), ".nc")
		out, err := runSubset(t, files[:1], year, benchChannels, nil, defaults())
		if err != nil {
			t.Fatal(err)
		}
		runNormalize(t, out, os.Getenv("SQUALL_MEM_STATS"), year, "float16")
	case "fit":
		job := &pipeline.Job{Stage: "fit", Kind: "fit-stats", OutDir: t.TempDir(), Settings: pipeline.Values{}}
		for _, s := range (normalize.FitKind{}).Settings() {
			job.Settings[s.Name] = s.Default
		}
		for _, f := range files {
			y := mustAtoi(years(f))
			job.Campaign.Split.Train = append(job.Campaign.Split.Train, pipeline.Period{First: y, Last: y})
			job.Inputs = append(job.Inputs, pipeline.Input{From: "subset", Scenario: "control", Block: years(f), Files: []string{f}})
		}
		if err := (normalize.FitKind{}).Run(context.Background(), job); err != nil {
			t.Fatal(err)
		}
	case "shard":
		job := &pipeline.Job{Stage: "shard", Kind: "shard", OutDir: t.TempDir(), Settings: pipeline.Values{}}
		for _, s := range (shard.Kind{}).Settings() {
			job.Settings[s.Name] = s.Default
		}
		// Shards smaller than a year, so that 1 and 8 years write shards
		// of the same size (the output's chunk cache grows with the shard).
		job.Settings["samples_per_shard"] = 16
		for _, f := range files {
			y := mustAtoi(years(f))
			job.Campaign.Split.Train = append(job.Campaign.Split.Train, pipeline.Period{First: y, Last: y})
			job.Inputs = append(job.Inputs, pipeline.Input{From: "norm", Scenario: "control", Block: years(f), Files: []string{f}})
		}
		if err := (shard.Kind{}).Run(context.Background(), job); err != nil {
			t.Fatal(err)
		}
	}
	fmt.Printf("peak-rss-kB %s\n", vmHWM())
}

// vmHWM is the process's peak resident size in kB (Linux /proc). The
// child measures itself: the rusage maxrss a parent gets for a child
// started by clone+exec can be the parent's own, because the child ran in
// the parent's address space until exec.
func vmHWM() string {
	b, _ := os.ReadFile("/proc/self/status")
	for _, l := range strings.Split(string(b), "\n") {
		if f := strings.Fields(l); len(f) >= 2 && f[0] == "VmHWM:" {
			return f[1]
		}
	}
	return "0"
}

// BenchmarkPeakMemory reports the peak resident memory of child
// processes, as the engine runs instances: fit-stats and shard (the
// whole-campaign kinds) over 1 and over 8 years of the generator's demo
// grid (SQUALL_BENCH_DAYS days a year, default 10), with their ratios
// (streaming by time step keeps them near 1), and subset + normalize of
// one block:
//
//	go test ./stages/subset -run XXX -bench PeakMemory -benchtime 1x
func BenchmarkPeakMemory(b *testing.B) {
	testWorkers = 0
	defer func() { testWorkers = 2 }()
	days := envInt("SQUALL_BENCH_DAYS", 10)
	raws := generate(b, "demo", days, 8)
	// Prepare fields.nc and normalized.nc of every year in this process.
	root := b.TempDir()
	var fields, normed []string
	for _, r := range raws {
		year := strings.TrimSuffix(strings.TrimPrefix(filepath.Base(r), "fields_"), ".nc")
		out, err := runSubset(b, []string{r}, year, benchChannels, nil, defaults())
		if err != nil {
			b.Fatal(err)
		}
		dir := filepath.Join(root, year)
		os.MkdirAll(dir, 0o755)
		f := filepath.Join(dir, normalize.FieldsFile)
		if err := os.Rename(out, f); err != nil {
			b.Fatal(err)
		}
		fields = append(fields, f)
	}
	stats := fitOnFields(b, fields)
	for _, f := range fields {
		n := runNormalize(b, f, stats, filepath.Base(filepath.Dir(f)), "float16")
		dst := filepath.Join(filepath.Dir(f), normalize.NormalizedFile)
		if err := os.Rename(n, dst); err != nil {
			b.Fatal(err)
		}
		normed = append(normed, dst)
	}
	exe, err := os.Executable()
	if err != nil {
		b.Fatal(err)
	}
	peak := func(kind string, fs []string) float64 {
		cmd := exec.Command(exe, "-test.run=^TestMemoryChild$", "-test.count=1")
		cmd.Env = append(os.Environ(), "SQUALL_MEM_KIND="+kind, "SQUALL_MEM_FILES="+strings.Join(fs, ","), "SQUALL_MEM_STATS="+stats)
		out, err := cmd.CombinedOutput()
		if err != nil {
			b.Fatalf("child: %v\n%s", err, out)
		}
		for _, l := range strings.Split(string(out), "\n") {
			if f := strings.Fields(l); len(f) == 2 && f[0] == "peak-rss-kB" {
				kb, _ := strconv.ParseFloat(f[1], 64)
				return kb / 1024
			}
		}
		b.Fatalf("child printed no peak: %s", out)
		return 0
	}
	for i := 0; i < b.N; i++ {
		f1, f8 := peak("fit", fields[:1]), peak("fit", fields)
		s1, s8 := peak("shard", normed[:1]), peak("shard", normed)
		blk := peak("block", raws[:1])
		b.ReportMetric(f1, "fit-MB-1y")
		b.ReportMetric(f8, "fit-MB-8y")
		b.ReportMetric(f8/f1, "fit-ratio")
		b.ReportMetric(s1, "shard-MB-1y")
		b.ReportMetric(s8, "shard-MB-8y")
		b.ReportMetric(s8/s1, "shard-ratio")
		b.ReportMetric(blk, "block-MB")
	}
	b.ReportMetric(0, "ns/op")
}

// fitOnFields runs fit-stats over fields files in per-year directories.
func fitOnFields(tb testing.TB, fields []string) string {
	tb.Helper()
	out := tb.TempDir()
	job := &pipeline.Job{Stage: "fit", Kind: "fit-stats", OutDir: out, Settings: pipeline.Values{}}
	for _, s := range (normalize.FitKind{}).Settings() {
		job.Settings[s.Name] = s.Default
	}
	for _, f := range fields {
		year := filepath.Base(filepath.Dir(f))
		y := mustAtoi(year)
		job.Campaign.Split.Train = append(job.Campaign.Split.Train, pipeline.Period{First: y, Last: y})
		job.Inputs = append(job.Inputs, pipeline.Input{From: "subset", Scenario: "control", Block: year, Files: []string{f}})
	}
	if err := (normalize.FitKind{}).Run(context.Background(), job); err != nil {
		tb.Fatal(err)
	}
	return filepath.Join(out, normalize.StatsFile)
}
