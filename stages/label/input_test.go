package label

import (
	"context"
	"errors"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// riverOnly is a two-step block with one river band (the stormScene
// band) and no storm, on the stormScene grid.
func riverOnly(t *testing.T) (*grid.Grid, []float64, *band) {
	g := mustGrid(t, 0, 1, 51, 100, 1, 81)
	return g, []float64{0, 6}, &band{lat0: 30, lon0: 110, lat1: 45, lon1: 160, halfW: 250e3}
}

func constField(g *grid.Grid, steps int, in []bool, inside, outside float64) [][]float64 {
	out := make([][]float64, steps)
	for s := range out {
		out[s] = make([]float64, g.Len())
		for k := range out[s] {
			out[s][k] = outside
			if in[k] {
				out[s][k] = inside
			}
		}
	}
	return out
}

func arClasses(t *testing.T, out string) (*grid.Grid, [][]byte) {
	t.Helper()
	return readMask(t, filepath.Join(out, MaskFile))
}

// TestARFromLevels: without an ivt channel, IVT is integrated here from
// q, u, v on pressure levels. In the band q = 0.01 kg/kg and u = 10 m/s
// from 1000 to 300 hPa give IVT 713.8013 kg m-1 s-1 (derived,
// reference-values.md); outside q = 0. The band must be the river.
func TestARFromLevels(t *testing.T) {
	g, hours, b := riverOnly(t)
	in := b.inside(g)
	var chans []testChannel
	for _, p := range []float64{100000, 92500, 85000, 70000, 50000, 30000, 20000} {
		q := testChannel{name: "q" + hPaName(p), quantity: QQ, units: "g kg-1", level: p, data: constField(g, 2, in, 10, 0)}
		u := testChannel{name: "u" + hPaName(p), quantity: QU, units: "m s-1", level: p, data: constField(g, 2, in, 10, 10)}
		v := testChannel{name: "v" + hPaName(p), quantity: QV, units: "m s-1", level: p, data: constField(g, 2, in, 0, 0)}
		chans = append(chans, q, u, v)
	}
	fp := filepath.Join(t.TempDir(), FieldsFile)
	writeFields(t, fp, g, hours, "standard", chans)
	fl, err := OpenFields(fp)
	if err != nil {
		t.Fatal(err)
	}
	src, err := planAR(fl, &ARConfig{IVTTop: 30000})
	if err != nil {
		t.Fatal(err)
	}
	ivt, err := fl.readAR(src, 0, 30000)
	fl.Close()
	if err != nil {
		t.Fatal(err)
	}
	for k, x := range ivt {
		want := 0.0
		if in[k] {
			want = 713.8013 // derived, reference-values.md
		}
		if d := x - want; d > 1e-3 || d < -1e-3 { // float32 storage of q
			t.Fatalf("IVT[%d] = %.4f, want %.4f", k, x, want)
		}
	}
	out, err := runLabel(t, fp, map[string]any{"classes": []string{ClassAR}})
	if err != nil {
		t.Fatal(err)
	}
	_, steps := arClasses(t, out)
	for s, cls := range steps {
		for k, c := range cls {
			if (c == AtmosphericRiver) != in[k] {
				t.Fatalf("step %d pixel %d: class %d, in band %v", s, k, c, in[k])
			}
		}
	}
}

func hPaName(p float64) string {
	return strings.TrimSuffix(strings.ReplaceAll(hPa(p), " hPa", ""), ".")
}

// TestARFromIWV: only column water vapour: 30 kg m-2 in the band, 10
// outside, against the 20 kg m-2 threshold (Ralph et al. 2004, from
// memory).
func TestARFromIWV(t *testing.T) {
	g, hours, b := riverOnly(t)
	in := b.inside(g)
	fp := filepath.Join(t.TempDir(), FieldsFile)
	writeFields(t, fp, g, hours, "standard", []testChannel{{name: "prw", quantity: QIWVCF, units: "mm", data: constField(g, 2, in, 30, 10)}})
	out, err := runLabel(t, fp, map[string]any{"classes": []string{ClassAR}})
	if err != nil {
		t.Fatal(err)
	}
	_, steps := arClasses(t, out)
	for s, cls := range steps {
		for k, c := range cls {
			if (c == AtmosphericRiver) != in[k] {
				t.Fatalf("step %d pixel %d: class %d, in band %v", s, k, c, in[k])
			}
		}
	}
	rows := readCSV(t, filepath.Join(out, ARObjectsFile))
	if rows[1][3] != QIWV {
		t.Errorf("ar_objects quantity %q, want %q", rows[1][3], QIWV)
	}
}

func TestBadInput(t *testing.T) {
	g, hours, b := riverOnly(t)
	in := b.inside(g)
	write := func(chans ...testChannel) string {
		fp := filepath.Join(t.TempDir(), FieldsFile)
		writeFields(t, fp, g, hours, "standard", chans)
		return fp
	}
	field := func(x float64) [][]float64 { return constField(g, 2, in, x, x) }

	t.Run("levels not reaching the IVT top", func(t *testing.T) {
		var chans []testChannel
		for _, p := range []float64{100000, 85000} {
			chans = append(chans,
				testChannel{name: "q" + hPaName(p), quantity: QQ, units: "kg kg-1", level: p, data: field(0.01)},
				testChannel{name: "u" + hPaName(p), quantity: QU, units: "m s-1", level: p, data: field(10)},
				testChannel{name: "v" + hPaName(p), quantity: QV, units: "m s-1", level: p, data: field(0)})
		}
		_, err := runLabel(t, write(chans...), map[string]any{"classes": []string{ClassAR}})
		for _, want := range []string{"atmospheric-river detection needs", "only at 1000 hPa, 850 hPa, not up to 300 hPa", "q1000 (specific_humidity at 1000 hPa)"} {
			if err == nil || !strings.Contains(err.Error(), want) {
				t.Errorf("error lacks %q: %v", want, err)
			}
		}
	})
	t.Run("warm core without 700 hPa", func(t *testing.T) {
		fp := write(
			testChannel{name: "psl", quantity: QSLP, units: "Pa", data: field(101000)},
			testChannel{name: "vo", quantity: QVortCF, units: "s-1", level: 85000, data: field(0)},
			testChannel{name: "ws", quantity: QWind, units: "m s-1", data: field(5)},
			testChannel{name: "ws850", quantity: QWind, units: "m s-1", level: 85000, data: field(5)},
			testChannel{name: "ws300", quantity: QWind, units: "m s-1", level: 30000, data: field(5)},
			testChannel{name: "t850", quantity: QTemp, units: "K", level: 85000, data: field(290)},
			testChannel{name: "t500", quantity: QTemp, units: "K", level: 50000, data: field(260)},
			testChannel{name: "t300", quantity: QTemp, units: "K", level: 30000, data: field(230)},
		)
		_, err := runLabel(t, fp, map[string]any{"classes": []string{ClassTC}})
		if err == nil || !strings.Contains(err.Error(), "criterion warm_core needs air_temperature at 850, 700, 500 and 300 hPa; missing: air_temperature at 700 hPa") {
			t.Errorf("error: %v", err)
		}
		if err != nil && strings.Contains(err.Error(), "criterion vorticity") {
			t.Errorf("vorticity reported missing although given: %v", err)
		}
		// Leaving the criterion out makes the same file acceptable.
		if _, err := runLabel(t, fp, map[string]any{"classes": []string{ClassTC},
			"tc_criteria": []string{CritVorticity, CritMaxWind, CritWindProfile, CritGenesisLat}}); err != nil {
			t.Errorf("without warm_core: %v", err)
		}
	})
	t.Run("vorticity from winds", func(t *testing.T) {
		// No vorticity channel but u and v at 850 hPa: computed here.
		fp := write(
			testChannel{name: "psl", quantity: QSLP, units: "Pa", data: field(101000)},
			testChannel{name: "ws", quantity: QWind, units: "m s-1", data: field(5)},
			testChannel{name: "u850", quantity: QU, units: "m s-1", level: 85000, data: field(5)},
			testChannel{name: "v850", quantity: QV, units: "m s-1", level: 85000, data: field(0)},
		)
		if _, err := runLabel(t, fp, map[string]any{"classes": []string{ClassTC}, "tc_criteria": []string{CritVorticity}}); err != nil {
			t.Errorf("vorticity from u, v: %v", err)
		}
	})
	t.Run("units", func(t *testing.T) {
		fp := write(testChannel{name: "ivt", quantity: QIVT, units: "furlongs", data: field(300)})
		_, err := OpenFields(fp)
		if err == nil || !strings.Contains(err.Error(), `channel "ivt"`) || !strings.Contains(err.Error(), "furlongs") {
			t.Errorf("unknown units: %v", err)
		}
	})
	t.Run("not a regular grid", func(t *testing.T) {
		// Gaussian-like latitudes (uneven steps) are refused.
		fp := filepath.Join(t.TempDir(), FieldsFile)
		w, err := ncio.Create(fp)
		if err != nil {
			t.Fatal(err)
		}
		w.DefTime([]float64{0}, "hours since 1990-01-01", "standard")
		w.DefLat([]float64{-60, -20.5, 20.5, 60})
		w.DefLon([]float64{0, 90, 180, 270})
		w.DefVar(ncio.VarSpec{Name: "ivt", Type: ncio.Float, Dims: []string{"time", "lat", "lon"},
			Attrs: []ncio.Attr{{Name: "units", Value: "kg m-1 s-1"}, {Name: "quantity", Value: QIVT}}})
		if err := w.EndDef(); err != nil {
			t.Fatal(err)
		}
		w.WriteFloat32("ivt", nil, nil, make([]float32, 16))
		if err := w.Close(); err != nil {
			t.Fatal(err)
		}
		_, err = runLabel(t, fp, nil)
		if err == nil || !strings.Contains(err.Error(), "not a regular latitude-longitude grid") || !strings.Contains(err.Error(), fp) {
			t.Errorf("irregular grid: %v", err)
		}
	})
	t.Run("no fields input", func(t *testing.T) {
		job := &pipeline.Job{Stage: "labels", Kind: KindName, Settings: DefaultValues(), OutDir: t.TempDir(),
			Inputs: []pipeline.Input{{From: "raw", Kind: "scenario", Files: []string{"/nonexistent/raw.nc"}}}}
		err := Kind{}.Run(context.Background(), job)
		if err == nil || !strings.Contains(err.Error(), "no input provides fields.nc") {
			t.Errorf("no fields input: %v", err)
		}
	})
	t.Run("settings", func(t *testing.T) {
		for _, c := range []struct {
			key  string
			val  any
			want string
		}{
			{"tc_box_points", 6, "must be odd"},
			{"tc_criteria", []string{"vorticity", "eye"}, `unknown criterion "eye"`},
			{"classes", []string{"tornado"}, `unknown class "tornado"`},
			{"classes", []string{}, "empty"},
		} {
			v := DefaultValues()
			v[c.key] = c.val
			err := Kind{}.CheckStage("labels", v, &pipeline.CampaignInfo{})
			if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), c.key) {
				t.Errorf("%s = %v: %v", c.key, c.val, err)
			}
		}
	})
	t.Run("sweep lists at load time", func(t *testing.T) {
		// The loader hands CheckStage a swept setting as its list.
		v := DefaultValues()
		v["ar_ivt_min"] = []any{200.0, 250.0, 300.0}
		v["tc_warm_core_min"] = []any{3.0, 4.0}
		if err := (Kind{}).CheckStage("labels", v, &pipeline.CampaignInfo{}); err != nil {
			t.Errorf("sweep: %v", err)
		}
		v["tc_box_points"] = 8
		if err := (Kind{}).CheckStage("labels", v, &pipeline.CampaignInfo{}); err == nil {
			t.Errorf("even box with a sweep elsewhere accepted")
		}
	})
	t.Run("climatology of another grid", func(t *testing.T) {
		fp := write(testChannel{name: "ivt", quantity: QIVT, units: "kg m-1 s-1", data: field(300)})
		other := mustGrid(t, 0, 2, 26, 100, 2, 41)
		var months [12]ClimatologyMonth
		for m := range months {
			months[m] = ClimatologyMonth{Threshold: make([]float64, other.Len()), Samples: make([]int, other.Len())}
		}
		cdir := t.TempDir()
		cp := filepath.Join(cdir, ClimatologyFile)
		if err := WriteClimatology(cp, other, months, ClimatologyInfo{Quantity: QIVT, Percentile: 85}, ncio.Provenance{Tool: "test"}); err != nil {
			t.Fatal(err)
		}
		_, err := runLabel(t, fp, map[string]any{"classes": []string{ClassAR}, "ar_threshold": ThresholdRelative},
			pipeline.Input{From: "clim", Kind: "ivt-climatology", Files: []string{cp}})
		if err == nil || !strings.Contains(err.Error(), "does not match") || !strings.Contains(err.Error(), "grid mismatch") {
			t.Errorf("climatology grid: %v", err)
		}
	})
	t.Run("missing data is an error value, not a panic", func(t *testing.T) {
		fp := write(testChannel{name: "psl", quantity: QSLP, units: "Pa", data: field(101000)})
		_, err := runLabel(t, fp, map[string]any{"classes": []string{ClassTC}})
		if !errors.Is(err, errMissing) {
			t.Errorf("want errMissing, got %v", err)
		}
	})
}
