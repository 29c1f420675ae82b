package agreement

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/label"
	"github.com/squall-climate/squall/stages/ncio"
)

// writeMask writes a mask.nc in the shared format (2 x 3 grid, steps
// given) into its own directory and returns the input for it.
func writeMask(t *testing.T, member string, lat []float64, steps [][]int8) pipeline.Input {
	t.Helper()
	dir := t.TempDir()
	path := filepath.Join(dir, label.MaskFile)
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	hours := make([]float64, len(steps))
	for i := range hours {
		hours[i] = float64(6 * i)
	}
	w.DefTime(hours, "hours since 1990-01-01", "360_day")
	w.DefLat(lat)
	w.DefLon([]float64{10, 20, 30})
	w.DefVar(ncio.VarSpec{Name: label.MaskVar, Type: ncio.Byte, Dims: []string{"time", "lat", "lon"},
		Attrs: []ncio.Attr{{Name: "flag_values", Value: []int8{0, 1, 2}}, {Name: "flag_meanings", Value: label.FlagMeanings}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	for s, cls := range steps {
		if err := w.WriteInt8(label.MaskVar, []int{s, 0, 0}, []int{1, len(lat), 3}, cls); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return pipeline.Input{From: "labels", Kind: label.KindName, Scenario: "control", Block: "1990", Member: member, Dir: dir, Files: []string{path}}
}

func run(t *testing.T, ins []pipeline.Input) (string, error) {
	out := t.TempDir()
	job := &pipeline.Job{Stage: "agree", Kind: KindName, Scenario: "control", Block: "1990", Settings: pipeline.Values{}, Inputs: ins, OutDir: out}
	return out, Kind{}.Run(context.Background(), job)
}

func TestAgreementFractions(t *testing.T) {
	lat := []float64{0, 1}
	// Three members of an ar_ivt_min sweep (member names as the engine
	// might give them); hand-made masks whose fractions are counted by hand.
	ins := []pipeline.Input{
		writeMask(t, "ar_ivt_min=300", lat, [][]int8{{0, 0, 2, 1, 0, 0}, {0, 0, 0, 0, 0, 0}}),
		writeMask(t, "ar_ivt_min=200", lat, [][]int8{{0, 2, 2, 1, 2, 0}, {1, 1, 0, 0, 2, 2}}),
		writeMask(t, "ar_ivt_min=250", lat, [][]int8{{0, 2, 2, 1, 0, 0}, {1, 0, 0, 0, 2, 0}}),
	}
	out, err := run(t, ins)
	if err != nil {
		t.Fatal(err)
	}
	f, err := ncio.Open(filepath.Join(out, OutputFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	read := func(name string) []float64 {
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
	const third, twoThirds = 1.0 / 3, 2.0 / 3
	wantTC := []float64{0, 0, 0, 1, 0, 0, twoThirds, third, 0, 0, 0, 0}
	wantAR := []float64{0, twoThirds, 1, 0, third, 0, 0, 0, 0, 0, twoThirds, third}
	const tol = 1e-6 // float32 storage of thirds
	for k, x := range read(TCVar) {
		if d := x - wantTC[k]; d > tol || d < -tol {
			t.Errorf("tc_agreement[%d] = %g, want %g", k, x, wantTC[k])
		}
	}
	for k, x := range read(ARVar) {
		if d := x - wantAR[k]; d > tol || d < -tol {
			t.Errorf("ar_agreement[%d] = %g, want %g", k, x, wantAR[k])
		}
	}
	if got := f.AttrString("members"); got != "ar_ivt_min=200 ar_ivt_min=250 ar_ivt_min=300" {
		t.Errorf("members attribute %q", got)
	}
	if n, _ := f.AttrFloat64("member_count"); n != 3 {
		t.Errorf("member_count %g", n)
	}
	// The calendar travels with the time axis (CF: checked by ncdump).
	if ncdump, err := exec.LookPath("ncdump"); err == nil {
		h, err := exec.Command(ncdump, "-h", filepath.Join(out, OutputFile)).CombinedOutput()
		if err != nil {
			t.Fatalf("ncdump: %v", err)
		}
		for _, want := range []string{`time:calendar = "360_day"`, "float tc_agreement(time, lat, lon)", `tc_agreement:units = "1"`} {
			if !strings.Contains(string(h), want) {
				t.Errorf("ncdump -h lacks %q", want)
			}
		}
	}
	// Input order does not matter: the same bytes come out.
	out2, err := run(t, []pipeline.Input{ins[2], ins[0], ins[1]})
	if err != nil {
		t.Fatal(err)
	}
	a, _ := os.ReadFile(filepath.Join(out, OutputFile))
	b, _ := os.ReadFile(filepath.Join(out2, OutputFile))
	if string(a) != string(b) {
		t.Errorf("agreement.nc depends on input order")
	}
}

func TestAgreementBadInput(t *testing.T) {
	a := writeMask(t, "a", []float64{0, 1}, [][]int8{{0, 0, 0, 0, 0, 0}})
	other := writeMask(t, "b", []float64{0, 2}, [][]int8{{0, 0, 0, 0, 0, 0}})
	if _, err := run(t, []pipeline.Input{a, other}); err == nil || !strings.Contains(err.Error(), "grid mismatch") {
		t.Errorf("different grids: %v", err)
	}
	long := writeMask(t, "c", []float64{0, 1}, [][]int8{{0, 0, 0, 0, 0, 0}, {0, 0, 0, 0, 0, 0}})
	if _, err := run(t, []pipeline.Input{a, long}); err == nil || !strings.Contains(err.Error(), "time axes differ") {
		t.Errorf("different time axes: %v", err)
	}
	bad := writeMask(t, "d", []float64{0, 1}, [][]int8{{0, 3, 0, 0, 0, 0}})
	if _, err := run(t, []pipeline.Input{a, bad}); err == nil || !strings.Contains(err.Error(), "flag_values") {
		t.Errorf("class 3: %v", err)
	}
	if _, err := run(t, nil); err == nil || !strings.Contains(err.Error(), "mask.nc") {
		t.Errorf("no inputs: %v", err)
	}
}
