package normalize

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

const fieldsFill = float32(9.969209968386869e36)

// writeFields writes a fields.nc as the subset stage does: two channels
// on a 5-degree global grid, 8 time steps, some fill values.
func writeFields(t *testing.T, path string, year int, seed uint64) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 99)) // fixed seed
	lat, lon := seq(-87.5, 5, 36), seq(2.5, 5, 72)
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	nt := 8
	w.DefTime(seq(float64((year-1990)*365), 1, nt), "days since 1990-01-01", "noleap")
	w.DefLat(lat)
	w.DefLon(lon)
	for _, c := range []struct{ name, q, units string }{{"slp", "air_pressure_at_mean_sea_level", "Pa"}, {"t850", "air_temperature", "K"}} {
		attrs := []ncio.Attr{{Name: "standard_name", Value: c.q}, {Name: "long_name", Value: c.name}, {Name: "units", Value: c.units}, {Name: "quantity", Value: c.q}}
		if c.name == "t850" {
			attrs = append(attrs, ncio.Attr{Name: "level_pa", Value: 85000.0})
		}
		w.DefVar(ncio.VarSpec{Name: c.name, Type: ncio.Float, Dims: []string{"time", "lat", "lon"}, Fill: fieldsFill,
			Chunks: []int{1, 36, 72}, Deflate: 1, Shuffle: true, Attrs: attrs})
	}
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	n := nt * 36 * 72
	slp, t850 := make([]float32, n), make([]float32, n)
	for i := range slp {
		j := (i / 72) % 36
		slp[i] = float32(101325 + 1085.5*rng.NormFloat64() - 2000*math.Cos(lat[j]*math.Pi/90))
		t850[i] = float32(280 + 20*math.Cos(lat[j]*math.Pi/180) + 3*rng.NormFloat64())
		if i%53 == 0 {
			t850[i] = fieldsFill // below ground
		}
	}
	w.WriteFloat32("slp", nil, nil, slp)
	w.WriteFloat32("t850", nil, nil, t850)
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func applyDefaults(kv ...any) pipeline.Values {
	v := pipeline.Values{}
	for _, s := range (Kind{}).Settings() {
		v[s.Name] = s.Default
	}
	for i := 0; i+1 < len(kv); i += 2 {
		v[kv[i].(string)] = kv[i+1]
	}
	return v
}

func runApply(t *testing.T, fields, stats string, settings pipeline.Values) (string, string) {
	t.Helper()
	out := t.TempDir()
	var log strings.Builder
	job := &pipeline.Job{Stage: "norm", Kind: "normalize", Scenario: "control", Block: "1991", Settings: settings, OutDir: out, Log: &log,
		Inputs: []pipeline.Input{{From: "subset", Kind: "subset", Scenario: "control", Block: "1991", Files: []string{fields}},
			{From: "fit", Kind: "fit-stats", Files: []string{stats}}}}
	if err := (Kind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	return filepath.Join(out, NormalizedFile), log.String()
}

func pythonJSON(t *testing.T, script string, v any, args ...string) {
	t.Helper()
	const py = "/usr/bin/python3" // Debian's, with numpy and netCDF4
	if _, err := os.Stat(py); err != nil {
		t.Skip("/usr/bin/python3 missing (install Debian python3-netcdf4)")
	}
	if err := exec.Command(py, "-c", "import netCDF4, numpy").Run(); err != nil {
		t.Skip("/usr/bin/python3 cannot import netCDF4/numpy (install Debian python3-netcdf4)")
	}
	cmd := exec.Command(py, append([]string{"-c", script}, args...)...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("python: %v\n%s", err, stderr.String())
	}
	if err := json.Unmarshal(out, v); err != nil {
		t.Fatalf("python output: %v\n%s", err, out)
	}
}

// TestFitAndApplyAgainstNumpy: fit on 1990 (training), apply to 1991;
// numpy (Debian python3-numpy/netCDF4) recomputes everything from the
// files: means and sample stds (and cell-area weighted ones), quantile
// brackets, and the normalised arrays in float32 and float16, which must
// be bit-identical.
func TestFitAndApplyAgainstNumpy(t *testing.T) {
	dir := t.TempDir()
	f90, f91 := filepath.Join(dir, "1990", FieldsFile), filepath.Join(dir, "1991", FieldsFile)
	os.MkdirAll(filepath.Dir(f90), 0o755)
	os.MkdirAll(filepath.Dir(f91), 0o755)
	writeFields(t, f90, 1990, 1)
	writeFields(t, f91, 1991, 2)
	split := pipeline.Split{Train: []pipeline.Period{{First: 1990, Last: 1990}}, Test: []pipeline.Period{{First: 1991, Last: 1991}}}
	for _, weighting := range []string{"none", "cell_area"} {
		st, err := runFit(t, map[string]string{"1990": f90, "1991": f91}, split, fitDefaults("weighting", weighting))
		if err != nil {
			t.Fatal(err)
		}
		if len(st.Years) != 1 || st.Years[0] != 1990 || len(st.Blocks) != 1 {
			t.Fatalf("fitted on %v %v; want 1990 only", st.Years, st.Blocks)
		}
		script := `
import sys, json, numpy as np, netCDF4
f = netCDF4.Dataset(sys.argv[1]); weighting = sys.argv[2]; levels = json.loads(sys.argv[3])
lat = f['lat'][:].astype('f8'); d = np.radians(5.0)
# CF-1.13 section 7.2 cell area up to the constant R^2 dlon: sin(lat2) - sin(lat1)
wrow = np.sin(np.radians(lat) + d/2) - np.sin(np.radians(lat) - d/2)
out = {}
for name in ['slp', 't850']:
    x = f[name][:].astype('f8')
    w = np.broadcast_to(wrow[None, :, None], x.shape) if weighting == 'cell_area' else np.ones(x.shape)
    m = ~np.ma.getmaskarray(x); xs = np.ma.getdata(x)[m]; ws = w[m]
    mean = np.average(xs, weights=ws)
    W = ws.sum(); W2 = (ws**2).sum()
    std = np.sqrt((ws*(xs-mean)**2).sum() / (W - W2/W))
    qs = []
    if weighting == 'none':
        for q in levels:
            qs.append([float(np.quantile(xs, max(q-0.002, 0))), float(np.quantile(xs, min(q+0.002, 1)))])
    out[name] = {'mean': float(mean), 'std': float(std), 'min': float(xs.min()), 'max': float(xs.max()), 'n': int(m.sum()), 'q': qs}
print(json.dumps(out))
`
		levels, _ := json.Marshal(st.QuantileLevels)
		var ref map[string]struct {
			Mean, Std, Min, Max float64
			N                   int64
			Q                   [][2]float64
		}
		pythonJSON(t, script, &ref, f90, weighting, string(levels))
		const relTol = 1e-12 // both sum float32 data in float64 (derived: n*eps)
		for _, c := range st.Channels {
			r := ref[c.Name]
			if math.Abs(c.Mean-r.Mean) > relTol*math.Abs(r.Mean) || math.Abs(c.Std-r.Std) > 1e-10*r.Std ||
				c.Min != r.Min || c.Max != r.Max || c.Count != r.N {
				t.Errorf("%s %s: ours %+v, numpy %+v", weighting, c.Name, c, r)
			}
			for i, b := range r.Q {
				if q := c.Quantiles[i]; q < b[0] || q > b[1] {
					t.Errorf("%s q=%v: %v outside numpy's [q-0.002, q+0.002] = %v", c.Name, st.QuantileLevels[i], q, b)
				}
			}
		}
	}
	// Apply the unweighted fit to the test year.
	statsDir := t.TempDir()
	st, err := runFit(t, map[string]string{"1990": f90}, split, fitDefaults())
	if err != nil {
		t.Fatal(err)
	}
	statsPath := filepath.Join(statsDir, StatsFile)
	WriteStats(statsPath, st)
	n32, _ := runApply(t, f91, statsPath, applyDefaults())
	n16, log16 := runApply(t, f91, statsPath, applyDefaults("precision", "float16"))
	if !strings.Contains(log16, "max relative error") {
		t.Errorf("half-precision error not logged: %s", log16)
	}
	script := `
import sys, json, numpy as np, netCDF4
src = netCDF4.Dataset(sys.argv[1]); st = json.load(open(sys.argv[2]))
a = netCDF4.Dataset(sys.argv[3]); b = netCDF4.Dataset(sys.argv[4]); b.set_auto_maskandscale(False)
res = {}
for c in st['channels']:
    x = src[c['name']][:].astype('f8')
    y = ((x - c['mean']) / c['std'])
    want32 = np.ma.filled(y.astype('f4'), np.nan)
    got32 = np.ma.filled(a[c['name']][:], np.nan)
    same32 = bool(np.array_equal(want32, got32, equal_nan=True))
    want16 = np.ma.filled(y, np.nan).astype('f2').view('u2')
    got16 = b[c['name']][:].view('u2')
    same16 = bool(np.array_equal(want16, got16))
    h = got16.view('f2').astype('f8'); e = np.nanmax(np.abs(h - np.ma.filled(y, np.nan)))
    res[c['name']] = {'same32': same32, 'same16': same16, 'maxerr': float(e), 'attr': float(b[c['name']].half_precision_max_abs_error)}
print(json.dumps(res))
`
	var got map[string]struct {
		Same32, Same16 bool
		Maxerr, Attr   float64
	}
	pythonJSON(t, script, &got, f91, statsPath, n32, n16)
	for name, g := range got {
		if !g.Same32 || !g.Same16 {
			t.Errorf("%s: float32 identical %v, float16 bits identical %v", name, g.Same32, g.Same16)
		}
		if g.Maxerr != g.Attr {
			t.Errorf("%s: recorded half-precision error %v, numpy %v", name, g.Attr, g.Maxerr)
		}
		t.Logf("%s: half precision adds at most %.3g (normalised units)", name, g.Maxerr)
	}
	for _, p := range []string{n32, n16} {
		out, err := exec.Command("ncdump", "-h", p).CombinedOutput()
		if err != nil {
			t.Fatalf("ncdump -h %s: %v\n%s", p, err, out)
		}
		if !strings.Contains(string(out), "normalization_scale") || !strings.Contains(string(out), "stats_training_years = 1990") {
			t.Errorf("ncdump -h:\n%s", out)
		}
	}
}
