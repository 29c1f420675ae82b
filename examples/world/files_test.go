package world

import (
	"context"
	"encoding/csv"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/squall-climate/squall/stages/ncio"
)

// CF standard names and canonical-compatible units of the fields, from the
// CF-1.13 standard name table as listed in reference-values.md.
var wantFields = map[string][2]string{
	"psl":                {"air_pressure_at_mean_sea_level", "Pa"},
	"ps":                 {"surface_air_pressure", "Pa"},
	"uas":                {"eastward_wind", "m s-1"},
	"vas":                {"northward_wind", "m s-1"},
	"ua":                 {"eastward_wind", "m s-1"},
	"va":                 {"northward_wind", "m s-1"},
	"ta":                 {"air_temperature", "K"},
	"hus":                {"specific_humidity", "kg kg-1"},
	"prw":                {"atmosphere_mass_content_of_water_vapor", "kg m-2"},
	"land_area_fraction": {"land_area_fraction", "1"},
}

func TestFilesOpenInNcdump(t *testing.T) {
	if _, err := exec.LookPath("ncdump"); err != nil {
		t.Skip("skipping: ncdump not found (install Debian netcdf-bin)")
	}
	_, sum := smallWorld(t)
	for _, p := range append(filesOf(sum, "fields"), filesOf(sum, "truth")...) {
		out, err := exec.Command("ncdump", "-h", p).CombinedOutput()
		if err != nil {
			t.Fatalf("ncdump -h %s: %v\n%s", p, err, out)
		}
		h := string(out)
		want := []string{`:Conventions = "CF-1.13"`, `time:calendar = "noleap"`, `time:units = "days since 1850-01-01 00:00:00"`, `lat:units = "degrees_north"`, `lon:units = "degrees_east"`}
		if strings.Contains(p, "fields_") {
			for name, sn := range wantFields {
				want = append(want, name+`:standard_name = "`+sn[0]+`"`, name+`:units = "`+sn[1]+`"`)
			}
			want = append(want, `uas:coordinates = "height"`, `plev:standard_name = "air_pressure"`, `plev:positive = "down"`)
		} else {
			// CF-1.13 flags: flag_values of the variable's own type.
			want = append(want, "byte class_mask(time, lat, lon)", "class_mask:flag_values = 0b, 1b, 2b",
				`class_mask:flag_meanings = "background tropical_cyclone atmospheric_river"`)
		}
		for _, w := range want {
			if !strings.Contains(h, w) {
				t.Errorf("%s: ncdump -h lacks %q", filepath.Base(p), w)
			}
		}
	}
}

func TestFilesOpenInPython(t *testing.T) {
	o, sum := smallWorld(t)
	files := append(filesOf(sum, "fields"), filesOf(sum, "truth")...)
	rep := python(t, files...)
	var tcPix, arPix int
	for _, y := range sum.Years {
		tcPix += y.TCPixels
		arPix += y.ARPixels
	}
	var maskTC, maskAR int
	for _, p := range files {
		r, ok := rep[p]
		if !ok {
			t.Fatalf("no report for %s", p)
		}
		if c := r.Global["Conventions"]; c != "CF-1.13" {
			t.Errorf("%s: Conventions = %v", p, c)
		}
		if cal := r.Vars["time"]["calendar"]; cal != "noleap" {
			t.Errorf("%s: calendar = %v", p, cal)
		}
		// Dates decoded by cftime (through netCDF4.num2date) against ours.
		year := int(r.Global["year"].(float64))
		steps := o.Days * 24 / o.StepHours
		if len(r.Dates) != steps {
			t.Fatalf("%s: %d times, want %d", p, len(r.Dates), steps)
		}
		for st, d := range r.Dates {
			if want := noleapDate(year, o.SeasonStart, float64(st*o.StepHours)); d != want {
				t.Errorf("%s step %d: cftime date %s, ours %s", p, st, d, want)
			}
		}
		if strings.Contains(p, "fields_") {
			for name, sn := range wantFields {
				v := r.Vars[name]
				if v == nil || v["standard_name"] != sn[0] || v["units"] != sn[1] {
					t.Errorf("%s: %s attributes %v, want standard_name %s units %s", p, name, v, sn[0], sn[1])
				}
			}
			if h := r.Vars["height"]; h["standard_name"] != "height" || h["units"] != "m" {
				t.Errorf("%s: height coordinate %v", p, h)
			}
			// IWV from the levels (1000-200 hPa) and prw (ground to 100 hPa)
			// integrate the same profile over slightly different limits
			// (derived): within 10 % of each other.
			if r.IWVMedianRatio == nil || math.Abs(*r.IWVMedianRatio-1) > 0.1 {
				t.Errorf("%s: median IWV(levels)/prw = %v, want 1 +- 0.1", p, r.IWVMedianRatio)
			}
		} else {
			m := r.Vars["class_mask"]
			if m["_dtype"] != "int8" || m["flag_meanings"] != "background tropical_cyclone atmospheric_river" {
				t.Errorf("%s: class_mask %v", p, m)
			}
			fv, _ := m["flag_values"].([]any)
			if len(fv) != 3 || fv[0] != 0.0 || fv[1] != 1.0 || fv[2] != 2.0 {
				t.Errorf("%s: flag_values %v, want [0 1 2]", p, m["flag_values"])
			}
			maskTC += r.MaskCounts[1]
			maskAR += r.MaskCounts[2]
		}
	}
	if maskTC != tcPix || maskAR != arPix {
		t.Errorf("truth files hold %d TC and %d AR pixels; the summary says %d and %d", maskTC, maskAR, tcPix, arPix)
	}
	if maskTC == 0 || maskAR == 0 {
		t.Errorf("the test world planted no truth pixels (TC %d, AR %d)", maskTC, maskAR)
	}
}

func TestTruthCatalogs(t *testing.T) {
	_, sum := smallWorld(t)
	for _, p := range filesOf(sum, "events") {
		rows := readCSV(t, p)
		col := index(rows[0])
		for _, r := range rows[1:] {
			switch r[col["class"]] {
			case ClassTC:
				w, err := strconv.ParseFloat(r[col["peak_wind_ms"]], 64)
				if err != nil || r[col["category"]] != SaffirSimpson(w) {
					t.Errorf("%s: wind %q category %q", r[0], r[col["peak_wind_ms"]], r[col["category"]])
				}
			case ClassAR:
				if v, err := strconv.ParseFloat(r[col["peak_ivt"]], 64); err != nil || v < ARThreshold {
					t.Errorf("%s: peak IVT %q below the AR threshold", r[0], r[col["peak_ivt"]])
				}
			default:
				t.Errorf("%s: class %q", r[0], r[col["class"]])
			}
			if r[col["landfall"]] == "yes" {
				lm := r[col["landfall_landmass"]]
				if !containsString(Landmasses, lm) {
					t.Errorf("%s: landfall on %q, not one of %v", r[0], lm, Landmasses)
				}
			}
		}
	}
	for _, p := range filesOf(sum, "tracks") {
		rows := readCSV(t, p)
		col := index(rows[0])
		last := map[string]int{}
		for _, r := range rows[1:] {
			st, _ := strconv.Atoi(r[col["step"]])
			if prev, ok := last[r[0]]; ok && st <= prev {
				t.Errorf("%s: step %d after %d", r[0], st, prev)
			}
			last[r[0]] = st
		}
		if len(last) == 0 {
			t.Errorf("%s: no tracks", p)
		}
	}
}

func readCSV(t *testing.T, p string) [][]string {
	t.Helper()
	f, err := os.Open(p)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", p, err)
	}
	return rows
}

func index(header []string) map[string]int {
	m := map[string]int{}
	for i, h := range header {
		m[h] = i
	}
	return m
}

// Same options give byte-identical files, whatever the number of workers;
// another seed gives other fields and truth.
func TestDeterminism(t *testing.T) {
	o := mustPreset("tiny")
	o.Days = 2
	o.Scenarios = o.Scenarios[1:]
	o.Scenarios[0].LastYear = o.Scenarios[0].FirstYear
	run := func(name string, seed uint64, workers int) map[string]string {
		oo := o
		oo.Dir = filepath.Join(testRoot, name)
		oo.Seed = seed
		oo.Workers = workers
		if _, err := Generate(context.Background(), oo); err != nil {
			t.Fatal(err)
		}
		return digests(t, oo.Dir)
	}
	a := run("det-a", 7, 1)
	b := run("det-b", 7, 3)
	c := run("det-c", 8, 2)
	if len(a) == 0 {
		t.Fatal("no files")
	}
	for _, k := range sortedKeys(a) {
		if a[k] != b[k] {
			t.Errorf("%s differs between two runs with the same options", k)
		}
	}
	for _, k := range []string{"warm/fields_2071.nc", "warm/truth_2071.nc", "warm/truth_tracks.csv"} {
		if a[k] == "" || a[k] == c[k] {
			t.Errorf("%s: same digest %q with another seed", k, a[k])
		}
	}
}

// ncioRead reads a whole float variable through ncio.
func ncioRead(t *testing.T, path, std string) []float32 {
	t.Helper()
	f, err := ncio.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	v, err := f.FindVar(std)
	if err != nil {
		t.Fatal(err)
	}
	x, err := v.ReadFloat32(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	return x
}
