package subset

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// Reference tools (see the brief): Debian's /usr/bin/python3 with numpy and
// netCDF4, ncdump from netcdf-bin, sample files from libncarg-data.
const (
	refPython = "/usr/bin/python3"
	sampleDir = "/usr/share/ncarg/data/cdf"
)

func sample(t testing.TB, name string) string {
	t.Helper()
	p := filepath.Join(sampleDir, name)
	if _, err := os.Stat(p); err != nil {
		t.Skipf("sample file %s missing (install Debian package libncarg-data)", p)
	}
	return p
}

func runPython(t testing.TB, script string, args ...string) string {
	t.Helper()
	if _, err := os.Stat(refPython); err != nil {
		t.Skipf("%s missing (install Debian python3-numpy python3-netcdf4)", refPython)
	}
	if out, err := exec.Command(refPython, "-c", "import netCDF4, numpy").CombinedOutput(); err != nil {
		t.Skipf("%s cannot import netCDF4/numpy (install Debian python3-netcdf4): %v %s", refPython, err, out)
	}
	cmd := exec.Command(refPython, append([]string{"-c", script}, args...)...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference python failed: %v\n%s", err, stderr.String())
	}
	return string(out)
}

func ncdump(t testing.TB, path string) string {
	t.Helper()
	bin, err := exec.LookPath("ncdump")
	if err != nil {
		t.Skip("ncdump missing (install Debian netcdf-bin)")
	}
	out, err := exec.Command(bin, "-h", path).CombinedOutput()
	if err != nil {
		t.Fatalf("ncdump -h %s: %v\n%s", path, err, out)
	}
	return string(out)
}

// rawVar is a variable of a synthetic raw file.
type rawVar struct {
	name, std, units string
	levels           bool
	fill             float32 // 0: no _FillValue attribute
	value            func(t, k, j, i int) float32
}

// rawFile describes a synthetic CF raw file.
type rawFile struct {
	times     []float64
	timeUnits string
	calendar  string // "" writes no calendar attribute
	lat, lon  []float64
	plev      []float64 // in levUnits
	levUnits  string
	vars      []rawVar
	land      []float32 // land_area_fraction in percent, or nil
}

func writeRaw(t testing.TB, path string, rf rawFile) {
	t.Helper()
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefDim("time", len(rf.times))
	w.DefVar(ncio.VarSpec{Name: "time", Type: ncio.Double, Dims: []string{"time"}, Attrs: timeAttrs(rf)})
	if rf.plev != nil {
		w.DefCoord("plev", rf.plev, ncio.Attr{Name: "standard_name", Value: "air_pressure"},
			ncio.Attr{Name: "units", Value: rf.levUnits}, ncio.Attr{Name: "positive", Value: "down"})
	}
	w.DefLat(rf.lat)
	w.DefLon(rf.lon)
	ny, nx, nk := len(rf.lat), len(rf.lon), len(rf.plev)
	for _, v := range rf.vars {
		dims := []string{"time", "lat", "lon"}
		if v.levels {
			dims = []string{"time", "plev", "lat", "lon"}
		}
		attrs := []ncio.Attr{}
		if v.std != "" {
			attrs = append(attrs, ncio.Attr{Name: "standard_name", Value: v.std})
		}
		if v.units != "" {
			attrs = append(attrs, ncio.Attr{Name: "units", Value: v.units})
		}
		spec := ncio.VarSpec{Name: v.name, Type: ncio.Float, Dims: dims, Attrs: attrs}
		if v.fill != 0 {
			spec.Fill = v.fill
		}
		w.DefVar(spec)
	}
	if rf.land != nil {
		w.DefVar(ncio.VarSpec{Name: "sftlf", Type: ncio.Float, Dims: []string{"lat", "lon"},
			Attrs: []ncio.Attr{{Name: "standard_name", Value: "land_area_fraction"}, {Name: "units", Value: "%"}}})
	}
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	w.WriteFloat64("time", nil, nil, rf.times)
	for _, v := range rf.vars {
		kk := 1
		if v.levels {
			kk = nk
		}
		buf := make([]float32, len(rf.times)*kk*ny*nx)
		n := 0
		for ti := range rf.times {
			for k := 0; k < kk; k++ {
				for j := 0; j < ny; j++ {
					for i := 0; i < nx; i++ {
						buf[n] = v.value(ti, k, j, i)
						n++
					}
				}
			}
		}
		if err := w.WriteFloat32(v.name, nil, nil, buf); err != nil {
			t.Fatal(err)
		}
	}
	if rf.land != nil {
		if err := w.WriteFloat32("sftlf", nil, nil, rf.land); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func timeAttrs(rf rawFile) []ncio.Attr {
	a := []ncio.Attr{{Name: "standard_name", Value: "time"}, {Name: "units", Value: rf.timeUnits}}
	if rf.calendar != "" {
		a = append(a, ncio.Attr{Name: "calendar", Value: rf.calendar})
	}
	return a
}

func seq(first, step float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = first + float64(i)*step
	}
	return out
}

// Tests run two compute goroutines so that the concurrent path is
// exercised even on one CPU.
func init() { testWorkers = 2 }

// defaults returns the kind's default settings, overridden by kv pairs.
func defaults(kv ...any) pipeline.Values {
	v := pipeline.Values{}
	for _, s := range (Kind{}).Settings() {
		v[s.Name] = s.Default
	}
	for i := 0; i+1 < len(kv); i += 2 {
		v[kv[i].(string)] = kv[i+1]
	}
	return v
}

// runSubset runs one instance and returns the path of fields.nc.
func runSubset(t testing.TB, files []string, block string, channels []pipeline.Channel, mapping map[string]string, settings pipeline.Values) (string, error) {
	t.Helper()
	out := t.TempDir()
	job := &pipeline.Job{Stage: "subset", Kind: "subset", Scenario: "control", Block: block,
		Settings: settings, OutDir: out,
		Inputs:   []pipeline.Input{{From: "control", Kind: "scenario", Scenario: "control", Block: block, Files: files}},
		Campaign: pipeline.CampaignInfo{Name: "test", Channels: channels, Variables: mapping}}
	var log strings.Builder
	job.Log = &log
	err := Kind{}.Run(context.Background(), job)
	if testing.Verbose() && log.Len() > 0 {
		t.Log(log.String())
	}
	return filepath.Join(out, FieldsFile), err
}

// readVar reads a whole variable of fields.nc as float64 (fill -> NaN).
func readVar(t testing.TB, path, name string) ([]float64, []int) {
	t.Helper()
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
	return x, v.Shape()
}
