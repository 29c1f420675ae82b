package climatology

import (
	"context"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/label"
	"github.com/squall-climate/squall/stages/ncio"
)

const (
	nlat, nlon = 3, 4
	seed       = 20240117 // fixed seed for the synthetic IVT
)

// writeYear writes a fields.nc for one year: 6-hourly IVT for the first
// ten days of January and of February, random per cell (seeded).
func writeYear(t *testing.T, dir string, year int, rng *rand.Rand) string {
	t.Helper()
	path := filepath.Join(dir, label.FieldsFile)
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	var hours []float64
	for _, day0 := range []int{0, 31} { // 1 January, 1 February (noleap)
		for s := range 40 {
			hours = append(hours, float64(24*day0+6*s))
		}
	}
	w.DefTime(hours, "hours since "+strconv.Itoa(year)+"-01-01 00:00:00", "noleap")
	w.DefLat([]float64{30, 31, 32})
	w.DefLon([]float64{200, 201, 202, 203})
	w.DefVar(ncio.VarSpec{Name: "ivt", Type: ncio.Float, Dims: []string{"time", "lat", "lon"}, Fill: float32(1e20),
		Attrs: []ncio.Attr{{Name: "units", Value: "kg m-1 s-1"}, {Name: "quantity", Value: "ivt"}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	buf := make([]float32, nlat*nlon)
	for s := range hours {
		for i := range buf {
			u := rng.Float64()
			buf[i] = float32(40 + 600*u*u*float64(1+i%3)) // skewed, cell-dependent
		}
		if err := w.WriteFloat32("ivt", []int{s, 0, 0}, []int{1, nlat, nlon}, buf); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

func campaign() pipeline.CampaignInfo {
	return pipeline.CampaignInfo{
		Name: "test",
		Scenarios: []pipeline.ScenarioInfo{
			{Name: "control", FirstYear: 1980, LastYear: 1982, Blocks: []string{"1980", "1981", "1982"}},
			{Name: "warm", FirstYear: 1980, LastYear: 1980, Blocks: []string{"1980"}},
		},
		Split: pipeline.Split{Train: []pipeline.Period{{First: 1980, Last: 1981}}, Test: []pipeline.Period{{First: 1982, Last: 1982}}},
	}
}

func inputs(t *testing.T) ([]pipeline.Input, []string) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 1))
	var ins []pipeline.Input
	var train []string
	for _, sb := range []struct {
		sc   string
		year int
	}{{"control", 1980}, {"control", 1981}, {"control", 1982}, {"warm", 1980}} {
		dir := filepath.Join(t.TempDir(), sb.sc, strconv.Itoa(sb.year))
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		final := writeYear(t, dir, sb.year, rng)
		ins = append(ins, pipeline.Input{From: "fields", Kind: "subset", Scenario: sb.sc, Block: strconv.Itoa(sb.year), Dir: dir, Files: []string{final}})
		if sb.sc == "control" && sb.year <= 1981 {
			train = append(train, final)
		}
	}
	return ins, train
}

func defaults() pipeline.Values {
	v := pipeline.Values{}
	for _, s := range (Kind{}).Settings() {
		v[s.Name] = s.Default
	}
	return v
}

func run(t *testing.T, ins []pipeline.Input, over map[string]any) (string, error) {
	v := defaults()
	for k, x := range over {
		v[k] = x
	}
	out := t.TempDir()
	job := &pipeline.Job{Stage: "clim", Kind: KindName, Settings: v, Inputs: ins, OutDir: out, Campaign: campaign()}
	return out, Kind{}.Run(context.Background(), job)
}

func readVar(t *testing.T, path, name string) []float64 {
	f, err := ncio.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	v, err := f.Var(name)
	if err != nil {
		t.Fatal(err)
	}
	x, err := v.ReadFloat64(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	return x
}

// TestClimatologyAgainstNumpy compares the per-cell monthly percentile
// with numpy.percentile (default linear method) over the same training
// files read by python3-netcdf4 (Debian, /usr/bin/python3). The histogram
// places values within a 5 kg m-1 s-1 bin, so the tolerance is one bin.
func TestClimatologyAgainstNumpy(t *testing.T) {
	const py = "/usr/bin/python3"
	ins, train := inputs(t)
	out, err := run(t, ins, nil)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(out, OutputFile)
	got := readVar(t, path, label.ClimThresholdVar)
	samples := readVar(t, path, label.ClimSamplesVar)
	n := nlat * nlon
	// January and February have 2 years x 40 steps; other months none.
	for m := range 12 {
		want := 0.0
		if m < 2 {
			want = 80
		}
		for i := range n {
			if samples[m*n+i] != want {
				t.Fatalf("month %d cell %d: %g samples, want %g (the test year and the other scenario must be ignored)", m+1, i, samples[m*n+i], want)
			}
			if m >= 2 && !math.IsNaN(got[m*n+i]) {
				t.Fatalf("month %d cell %d: threshold %g without samples, want missing", m+1, i, got[m*n+i])
			}
		}
	}
	script := `
import sys, netCDF4, numpy as np
files = sys.argv[1:]
for month in (1, 2):
    vals = []
    for f in files:
        d = netCDF4.Dataset(f)
        t = netCDF4.num2date(d["time"][:], d["time"].units, d["time"].calendar)
        sel = np.array([x.month == month for x in t])
        vals.append(np.asarray(d["ivt"][:], dtype=np.float64)[sel])
    v = np.concatenate(vals)
    print(" ".join(repr(float(x)) for x in np.percentile(v, 85, axis=0).ravel()))
`
	cmd := exec.Command(py, append([]string{"-c", script}, train...)...)
	outp, err := cmd.CombinedOutput()
	if err != nil {
		t.Skipf("reference python3-netcdf4/numpy unavailable (%v: %s)", err, outp)
	}
	lines := strings.Split(strings.TrimSpace(string(outp)), "\n")
	width, _ := label.HistogramRange(label.QIVT)
	worst := 0.0
	for m, line := range lines {
		for i, f := range strings.Fields(line) {
			want, _ := strconv.ParseFloat(f, 64)
			d := math.Abs(got[m*n+i] - want)
			worst = math.Max(worst, d)
			if d > width {
				t.Errorf("month %d cell %d: %.3f, numpy %.3f (off by %.3f > bin width %g)", m+1, i, got[m*n+i], want, d, width)
			}
		}
	}

	t.Logf("largest difference from numpy over %d cell-months: %.3f kg m-1 s-1", len(lines)*n, worst)

	// min_samples above the 80 values: every cell missing.
	out2, err := run(t, ins, map[string]any{"min_samples": 100})
	if err != nil {
		t.Fatal(err)
	}
	for k, x := range readVar(t, filepath.Join(out2, OutputFile), label.ClimThresholdVar) {
		if !math.IsNaN(x) {
			t.Fatalf("value %d = %g with min_samples 100, want missing", k, x)
		}
	}
}

func TestClimatologyBadInput(t *testing.T) {
	ins, _ := inputs(t)
	c := campaign()
	if err := (Kind{}).CheckStage("clim", defaults(), &pipeline.CampaignInfo{Scenarios: c.Scenarios}); err == nil || !strings.Contains(err.Error(), "no training years") {
		t.Errorf("no training years: %v", err)
	}
	v := defaults()
	v["reference_scenario"] = "hot"
	if err := (Kind{}).CheckStage("clim", v, &c); err == nil || !strings.Contains(err.Error(), `"hot" is not a scenario`) {
		t.Errorf("unknown scenario: %v", err)
	}
	// Only test-year inputs: nothing to compute from.
	if _, err := run(t, ins[2:3], nil); err == nil || !strings.Contains(err.Error(), "training year") {
		t.Errorf("no training input: %v", err)
	}
}
