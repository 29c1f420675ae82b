package label

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// runLabel runs the kind on a fields.nc with settings overriding the
// defaults and returns the output directory.
func runLabel(t testing.TB, fieldsPath string, over map[string]any, extra ...pipeline.Input) (string, error) {
	t.Helper()
	v := DefaultValues()
	for k, x := range over {
		v[k] = x
	}
	out := t.TempDir()
	job := &pipeline.Job{
		Stage: "labels", Kind: KindName, Scenario: "control", Block: "1990",
		Settings: v, OutDir: out,
		Inputs: append([]pipeline.Input{{From: "fields", Kind: "subset", Scenario: "control", Block: "1990",
			Dir: filepath.Dir(fieldsPath), Files: []string{fieldsPath}}}, extra...),
	}
	return out, Kind{}.Run(context.Background(), job)
}

func readMask(t testing.TB, path string) (*grid.Grid, [][]byte) {
	t.Helper()
	f, err := ncio.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	ng, err := f.Grid()
	if err != nil {
		t.Fatal(err)
	}
	g, err := grid.New(ng.Lat, ng.Lon)
	if err != nil {
		t.Fatal(err)
	}
	v, err := f.Var(MaskVar)
	if err != nil {
		t.Fatal(err)
	}
	if v.Type() != ncio.Byte {
		t.Errorf("class_mask type %v, want byte", v.Type())
	}
	raw, err := v.ReadInt8(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	n := g.Len()
	var steps [][]byte
	for s := 0; s*n < len(raw); s++ {
		b := make([]byte, n)
		for i := range b {
			b[i] = byte(raw[s*n+i])
		}
		steps = append(steps, b)
	}
	return g, steps
}

func readCSV(t testing.TB, path string) [][]string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return rows
}

func TestKindStormAndRiver(t *testing.T) {
	sc := stormScene(t)
	fp := writeScene(t, t.TempDir(), sc)
	out, err := runLabel(t, fp, nil)
	if err != nil {
		t.Fatal(err)
	}
	g, steps := readMask(t, filepath.Join(out, MaskFile))
	if len(steps) != len(sc.hours) {
		t.Fatalf("mask has %d steps, want %d", len(steps), len(sc.hours))
	}
	tracks := readCSV(t, filepath.Join(out, TracksFile))
	if got := strings.Join(tracks[0], ","); got != strings.Join(trackHeader, ",") {
		t.Errorf("tracks header %q", got)
	}
	if len(tracks)-1 != len(sc.hours) {
		t.Errorf("track table has %d points, want %d (one track, every step)", len(tracks)-1, len(sc.hours))
	}
	for s, cls := range steps {
		h := sc.storms[s][0]
		// The centre pixel is TC; a pixel 1500 km away is not.
		i, j, _ := g.Locate(h.lat, h.lon)
		if c := cls[g.Index(i, j)]; c != TropicalCyclone {
			t.Errorf("step %d: centre pixel class %d, want TC", s, c)
		}
		tc, ar := 0, 0
		for k, c := range cls {
			ii, jj := g.RowCol(k)
			d := grid.Distance(h.lat, h.lon, g.Lat[ii], g.Lon[jj])
			if c == TropicalCyclone {
				tc++
				if d > 500e3+1 {
					t.Errorf("step %d: TC pixel %.0f km from the centre, beyond the 500 km cap", s, d/1e3)
				}
			}
			if c == AtmosphericRiver {
				ar++
			}
		}
		if sc.river[s] == nil && ar != 0 {
			t.Errorf("step %d: %d AR pixels without a river", s, ar)
		}
		if sc.river[s] != nil {
			// Every band pixel is AR unless it is TC (precedence).
			b := sc.river[s]
			for k, c := range cls {
				ii, jj := g.RowCol(k)
				in := b.inside(g)[k]
				if in != (c == AtmosphericRiver) && c != TropicalCyclone {
					t.Errorf("step %d: pixel %g,%g in band %v, class %d", s, g.Lat[ii], g.Lon[jj], in, c)
					break
				}
			}
		}
	}
	// The river appears in ar_objects.csv as kept from step 7 on.
	objs := readCSV(t, filepath.Join(out, ARObjectsFile))
	kept := 0
	for _, r := range objs[1:] {
		if r[12] == "yes" {
			kept++
		}
	}
	if kept != 8 {
		t.Errorf("%d kept AR objects, want 8 (steps 7..14)", kept)
	}

	// Deterministic: a second run gives byte-identical files.
	out2, err := runLabel(t, fp, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{MaskFile, CandidatesFile, TracksFile, ARObjectsFile} {
		a, _ := os.ReadFile(filepath.Join(out, name))
		b, _ := os.ReadFile(filepath.Join(out2, name))
		if !bytes.Equal(a, b) || len(a) == 0 {
			t.Errorf("%s differs between two runs (or is empty)", name)
		}
	}
}

// TestMaskCF checks mask.nc against the CF flag conventions with the
// reference ncdump (Debian netcdf-bin).
func TestMaskCF(t *testing.T) {
	ncdump, err := exec.LookPath("ncdump")
	if err != nil {
		t.Skip("reference ncdump missing (install Debian netcdf-bin)")
	}
	sc := stormScene(t)
	fp := writeScene(t, t.TempDir(), sc)
	out, err := runLabel(t, fp, map[string]any{"classes": []string{ClassTC}})
	if err != nil {
		t.Fatal(err)
	}
	h, err := exec.Command(ncdump, "-h", filepath.Join(out, MaskFile)).CombinedOutput()
	if err != nil {
		t.Fatalf("ncdump: %v\n%s", err, h)
	}
	// CF-1.13 section 3.5: flag_values of the variable's type, flag_meanings
	// blank-separated; the shared format fixes the three meanings.
	for _, want := range []string{
		"byte class_mask(time, lat, lon)",
		`class_mask:flag_values = 0b, 1b, 2b`,
		`class_mask:flag_meanings = "background tropical_cyclone atmospheric_river"`,
		`:Conventions = "CF-1.13"`,
		`time:calendar = "noleap"`,
		`lat:units = "degrees_north"`,
	} {
		if !strings.Contains(string(h), want) {
			t.Errorf("ncdump -h lacks %q:\n%s", want, h)
		}
	}
	if _, err := os.Stat(filepath.Join(out, ARObjectsFile)); !os.IsNotExist(err) {
		t.Errorf("ar_objects.csv written although atmospheric_river is not labelled")
	}
}

func TestKindRelativeThreshold(t *testing.T) {
	sc := stormScene(t)
	for _, b := range sc.river {
		if b != nil {
			b.peak = 180 // below the absolute 250, above a 150 climatology
		}
	}
	dir := t.TempDir()
	fp := writeScene(t, dir, sc)
	// Absolute mode: no river.
	out, err := runLabel(t, fp, map[string]any{"classes": []string{ClassAR}})
	if err != nil {
		t.Fatal(err)
	}
	_, steps := readMask(t, filepath.Join(out, MaskFile))
	for s, cls := range steps {
		for _, c := range cls {
			if c == AtmosphericRiver {
				t.Fatalf("step %d: AR pixel with IVT 180 < 250 in absolute mode", s)
			}
		}
	}
	// Relative mode without a climatology input: a clear error.
	if _, err := runLabel(t, fp, map[string]any{"classes": []string{ClassAR}, "ar_threshold": ThresholdRelative}); err == nil ||
		!strings.Contains(err.Error(), "ivt-climatology") {
		t.Errorf("relative mode without climatology: %v", err)
	}
	// A climatology of 150 in January everywhere except one column of the
	// band, where it is missing (too few samples): there the absolute 250
	// applies and the pixel stays background.
	n := sc.g.Len()
	var months [12]ClimatologyMonth
	for m := range months {
		months[m] = ClimatologyMonth{Threshold: make([]float64, n), Samples: make([]int, n)}
		for i := range n {
			months[m].Threshold[i] = 150
			months[m].Samples[i] = 100
		}
	}
	holeCol := 30 // 130E, crossed by the band (110E..160E)
	for i := range sc.g.NLat() {
		months[0].Threshold[sc.g.Index(i, holeCol)] = math.NaN()
	}
	cdir := t.TempDir()
	cpath := filepath.Join(cdir, ClimatologyFile)
	if err := WriteClimatology(cpath, sc.g, months, ClimatologyInfo{Quantity: QIVT, Percentile: 85, Scenario: "control", Years: "1980-1989", MinSamples: 30}, ncio.Provenance{Tool: "test"}); err != nil {
		t.Fatal(err)
	}
	clim := pipeline.Input{From: "clim", Kind: "ivt-climatology", Dir: cdir, Files: []string{cpath}}
	out, err = runLabel(t, fp, map[string]any{"classes": []string{ClassAR}, "ar_threshold": ThresholdRelative}, clim)
	if err != nil {
		t.Fatal(err)
	}
	g, steps := readMask(t, filepath.Join(out, MaskFile))
	for s, cls := range steps {
		b := sc.river[s]
		for k, c := range cls {
			_, j := g.RowCol(k)
			want := b != nil && b.inside(g)[k] && j != holeCol
			if want != (c == AtmosphericRiver) {
				t.Fatalf("step %d pixel %d (col %d): class %d, want AR %v", s, k, j, c, want)
			}
		}
	}
	// The floor wins over a lower climatology: with ar_ivt_floor 200 the
	// band (180) is below max(150, 200) everywhere.
	out, err = runLabel(t, fp, map[string]any{"classes": []string{ClassAR}, "ar_threshold": ThresholdRelative, "ar_ivt_floor": 200.0}, clim)
	if err != nil {
		t.Fatal(err)
	}
	_, steps = readMask(t, filepath.Join(out, MaskFile))
	for s, cls := range steps {
		for _, c := range cls {
			if c == AtmosphericRiver {
				t.Fatalf("step %d: AR pixel below the 200 floor", s)
			}
		}
	}
}

// TestSettingsJSONRoundTrip: a child process receives its settings as
// JSON (numbers become float64, lists []any); the defaults must still
// parse, and every setting must document its default's source.
func TestSettingsJSONRoundTrip(t *testing.T) {
	b, err := json.Marshal(DefaultValues())
	if err != nil {
		t.Fatal(err)
	}
	var v pipeline.Values
	if err := json.Unmarshal(b, &v); err != nil {
		t.Fatal(err)
	}
	a, err := ParseConfig(v)
	if err != nil {
		t.Fatal(err)
	}
	d, _ := ParseConfig(DefaultValues())
	if fmt.Sprint(a) != fmt.Sprint(d) {
		t.Errorf("after JSON: %+v\nbefore: %+v", a, d)
	}
	for _, s := range (Kind{}).Settings() {
		if s.Doc == "" || s.Default == nil {
			t.Errorf("setting %s lacks a doc or default", s.Name)
		}
		if s.Type == pipeline.TypeFloat && s.Unit == "" {
			t.Errorf("float setting %s has no unit", s.Name)
		}
	}
}
