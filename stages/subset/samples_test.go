package subset

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// interpTol is the largest difference (K) accepted between our hybrid to
// pressure interpolation and numpy's on vinth2p.nc: float32 storage of
// ~250 K values rounds by up to 1.5e-5 K, and the two compute ln p in
// different orders (common practice for such comparisons).
const interpTol = 1e-4

// TestVinth2pAgainstNumpy interpolates the real CAM temperature of
// Debian's libncarg-data vinth2p.nc (18 hybrid levels, hyam/hybm, PS, no
// P0 variable: 100000 Pa assumed) to 850, 500 and 200 hPa and compares
// with an independent numpy computation (np.interp on ln p per column,
// NaN outside the column) on the same file.
func TestVinth2pAgainstNumpy(t *testing.T) {
	src := sample(t, "vinth2p.nc")
	levels := []float64{85000, 50000, 20000}
	var chans []pipeline.Channel
	for _, l := range levels {
		chans = append(chans, pipeline.Channel{Name: "t" + strings.TrimSuffix(formatValue(l/100), ".0"), Variable: "T", LevelPa: l})
	}
	// Block 49: time is "days since 0049-09-01", values 107 and 108, so
	// both steps fall in December of year 49 (standard calendar).
	out, err := runSubset(t, []string{src}, "49", chans, nil, defaults())
	if err != nil {
		t.Fatal(err)
	}
	script := `
import sys, json, numpy as np, netCDF4
f = netCDF4.Dataset(sys.argv[1])
T = np.ma.filled(f['T'][:].astype('f8'), np.nan)
ps = np.ma.filled(f['PS'][:].astype('f8'), np.nan)
a = f['hyam'][:].astype('f8'); b = f['hybm'][:].astype('f8')
p0 = 100000.0
p = a[None, :, None, None]*p0 + b[None, :, None, None]*ps[:, None, :, :]
lp = np.log(p)
res = {}
for target in [85000.0, 50000.0, 20000.0]:
    out = np.full((T.shape[0], T.shape[2], T.shape[3]), np.nan)
    for n in range(T.shape[0]):
        for j in range(T.shape[2]):
            for i in range(T.shape[3]):
                out[n, j, i] = np.interp(np.log(target), lp[n, :, j, i], T[n, :, j, i], left=np.nan, right=np.nan)
    res[str(int(target))] = [None if np.isnan(x) else float(x) for x in out.ravel()]
print(json.dumps(res))
`
	var ref map[string][]*float64
	if err := json.Unmarshal([]byte(runPython(t, script, src)), &ref); err != nil {
		t.Fatal(err)
	}
	for i, l := range levels {
		got, shape := readVar(t, out, chans[i].Name)
		if shape[0] != 2 || shape[1] != 64 || shape[2] != 128 {
			t.Fatalf("shape %v", shape)
		}
		want := ref[formatValue(l)]
		fills, worst := 0, 0.0
		for k, w := range want {
			switch {
			case w == nil && !math.IsNaN(got[k]):
				t.Fatalf("%s: point %d is %v, numpy says below the surface (fill)", chans[i].Name, k, got[k])
			case w != nil && math.IsNaN(got[k]):
				t.Fatalf("%s: point %d is fill, numpy %v", chans[i].Name, k, *w)
			case w == nil:
				fills++
			default:
				worst = math.Max(worst, math.Abs(got[k]-*w))
			}
		}
		if worst > interpTol {
			t.Errorf("%s: largest difference from numpy %.3g K > %g", chans[i].Name, worst, interpTol)
		}
		t.Logf("%s: max |diff| %.2g K, %d fill points", chans[i].Name, worst, fills)
		if l == 85000 && fills == 0 {
			t.Errorf("850 hPa has no below-surface points; the Tibetan plateau and Antarctica should be fill (real data)")
		}
	}
	h := ncdump(t, out)
	for _, want := range []string{"float t850(time, lat, lon)", "t850:level_pa = 85000.", `time:units = "days since 0049-09-01 00:00:00"`, `:Conventions = "CF-1.13"`, "t850:_FillValue"} {
		if !strings.Contains(h, want) {
			t.Errorf("ncdump -h lacks %q:\n%s", want, h)
		}
	}
}

// TestUV300WindSpeed derives wind speed from the real 300 hPa winds of
// Debian's uv300.nc, whose U and V declare _FillValue -999. The sample's
// time axis is "month" (not a CF time unit) and its data hold no fill
// value, so U and V are copied into a file with a CF time axis, and every
// 97th point of U and every 89th of V is set to the sample's fill value
// -999; numpy computes hypot on that copy with netCDF4's masking.
func TestUV300WindSpeed(t *testing.T) {
	src := sample(t, "uv300.nc")
	f, err := ncio.Open(src)
	if err != nil {
		t.Fatal(err)
	}
	g, err := f.Grid()
	if err != nil {
		t.Fatal(err)
	}
	raw := map[string][]float32{}
	for _, n := range []string{"U", "V"} {
		v, _ := f.Var(n)
		raw[n], err = v.ReadFloat32(nil, nil) // fills become NaN
		if err != nil {
			t.Fatal(err)
		}
	}
	f.Close()
	ny, nx := g.NY(), g.NX()
	copyPath := filepath.Join(t.TempDir(), "uv300_cf_2000.nc")
	val := func(name string) func(ti, k, j, i int) float32 {
		return func(ti, k, j, i int) float32 {
			n := (ti*ny+j)*nx + i
			x := raw[name][n]
			if x != x || (name == "U" && n%97 == 0) || (name == "V" && n%89 == 0) {
				return -999 // the sample's declared fill value
			}
			return x
		}
	}
	writeRaw(t, copyPath, rawFile{times: []float64{15, 196}, timeUnits: "days since 2000-01-01", calendar: "standard",
		lat: g.Lat, lon: g.Lon,
		vars: []rawVar{{name: "U", std: "eastward_wind", units: "m/s", fill: -999, value: val("U")},
			{name: "V", std: "northward_wind", units: "m/s", fill: -999, value: val("V")}}})
	out, err := runSubset(t, []string{copyPath}, "2000", []pipeline.Channel{{Name: "wspd300", Derived: "wind_speed"}}, nil, defaults())
	if err != nil {
		t.Fatal(err)
	}
	got, _ := readVar(t, out, "wspd300")
	script := `
import sys, json, numpy as np, netCDF4
f = netCDF4.Dataset(sys.argv[1])
s = np.ma.filled(np.hypot(f['U'][:].astype('f8'), f['V'][:].astype('f8')), np.nan)
print(json.dumps([None if np.isnan(x) else float(x) for x in s.ravel()]))
`
	var want []*float64
	if err := json.Unmarshal([]byte(runPython(t, script, copyPath)), &want); err != nil {
		t.Fatal(err)
	}
	fills := 0
	for k, w := range want {
		if w == nil {
			fills++
			if !math.IsNaN(got[k]) {
				t.Fatalf("point %d: %v where U or V is fill", k, got[k])
			}
			continue
		}
		// float32 rounding of speeds up to ~70 m/s: 4e-6 (derived).
		if math.Abs(got[k]-*w) > 1e-5 {
			t.Fatalf("point %d: %v, numpy %v", k, got[k], *w)
		}
	}
	if fills == 0 {
		t.Fatal("the copy has fill values; numpy saw none")
	}
	t.Logf("%d of %d points are fill in the copy of uv300.nc", fills, len(want))
}
