package evaluate

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/catalog"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// writeMask writes a mask in the shared mask.nc format (brief: file formats).
func writeMask(t *testing.T, path string, g *grid.Grid, hours []float64, steps [][]byte) {
	t.Helper()
	os.MkdirAll(filepath.Dir(path), 0o755)
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefTime(hours, "hours since 1990-01-01 00:00:00", "noleap")
	w.DefLat(g.Lat)
	w.DefLon(g.Lon)
	w.DefVar(ncio.VarSpec{Name: "class_mask", Type: ncio.Byte, Dims: []string{"time", "lat", "lon"}, Attrs: []ncio.Attr{
		{Name: "long_name", Value: "class mask"}, {Name: "flag_values", Value: []int8{0, 1, 2}},
		{Name: "flag_meanings", Value: "background tropical_cyclone atmospheric_river"}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	for i, m := range steps {
		b := make([]int8, len(m))
		for k, v := range m {
			b[k] = int8(v)
		}
		if err := w.WriteInt8("class_mask", []int{i, 0, 0}, []int{1, g.NLat(), g.NLon()}, b); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func defaults() pipeline.Values {
	v := pipeline.Values{}
	for _, s := range (Kind{}).Settings() {
		v[s.Name] = s.Default
	}
	return v
}

func readRows(t *testing.T, path string) []map[string]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out []map[string]string
	for _, r := range recs[1:] {
		m := map[string]string{}
		for i, c := range recs[0] {
			m[c] = r[i]
		}
		out = append(out, m)
	}
	return out
}

// TestKindTruthFilesAndMembers scores a two-member sweep over two
// scenarios against truth files given by a pattern: member "a" equals the
// truth, member "b" misses the river.
func TestKindTruthFilesAndMembers(t *testing.T) {
	dir := t.TempDir()
	g, _ := grid.Global(3, 3)
	hours := []float64{0, 6, 12}
	truth := func() [][]byte {
		var out [][]byte
		for s := range hours {
			m := make([]byte, g.Len())
			paint(g, m, catalog.TropicalCyclone, 33, 35, 10+s, 12+s)
			paint(g, m, catalog.AtmosphericRiver, 45, 46, 20, 30)
			out = append(out, m)
		}
		return out
	}
	noRiver := func() [][]byte {
		out := truth()
		for _, m := range out {
			for k := range m {
				if m[k] == catalog.AtmosphericRiver {
					m[k] = 0
				}
			}
		}
		return out
	}
	var inputs []pipeline.Input
	for _, sc := range []string{"ctl", "warm"} {
		tp := filepath.Join(dir, "world", sc, "truth_1990.nc")
		writeMask(t, tp, g, hours, truth())
		inputs = append(inputs, pipeline.Input{From: "reference_files", Kind: "file", Scenario: sc, Block: "1990", Files: []string{tp}})
		for _, mem := range []string{"a", "b"} {
			p := filepath.Join(dir, "label", sc, mem, "mask.nc")
			steps := truth()
			if mem == "b" {
				steps = noRiver()
			}
			writeMask(t, p, g, hours, steps)
			inputs = append(inputs, pipeline.Input{From: "label", Kind: "label", Scenario: sc, Block: "1990", Member: mem, Files: []string{p}})
		}
	}
	v := defaults()
	v["candidate"] = "label"
	v["reference_files"] = "world/{scenario}/truth_{block}.nc"
	out := t.TempDir()
	job := &pipeline.Job{Stage: "evaluate", Kind: "evaluate", Settings: v, Inputs: inputs, OutDir: out,
		Campaign: pipeline.CampaignInfo{Regions: []pipeline.Region{{Name: "tropics", Box: &pipeline.Box{LatMin: -20, LatMax: 20, LonMin: 0, LonMax: 360}}}}}
	if err := (Kind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	rows := readRows(t, filepath.Join(out, EventFile))
	get := func(member, scenario, region, class string) map[string]string {
		for _, r := range rows {
			if r["member"] == member && r["scenario"] == scenario && r["region"] == region && r["season"] == All && r["class"] == class {
				return r
			}
		}
		t.Fatalf("no row %s %s %s %s", member, scenario, region, class)
		return nil
	}
	// Member a is the truth: every event a hit, POD 1, FAR 0, CSI 1.
	if r := get("a", All, All, "atmospheric_river"); r["hits"] != "2" || r["misses"] != "0" || r["pod"] != "1" || r["far"] != "0" || r["csi"] != "1" {
		t.Errorf("member a rivers: %v", r)
	}
	// Member b misses both rivers (one per scenario): POD 0; FAR undefined
	// (no candidate river: empty cell).
	if r := get("b", All, All, "atmospheric_river"); r["hits"] != "0" || r["misses"] != "2" || r["pod"] != "0" || r["far"] != "" {
		t.Errorf("member b rivers: %v", r)
	}
	if r := get("b", "warm", "tropics", "tropical_cyclone"); r["hits"] != "1" || r["false_alarms"] != "0" {
		t.Errorf("member b cyclones in the tropics: %v", r)
	}
	// The river lies at 45-47 * 3 - 90 = 45-51N: not in the tropics.
	if r := get("a", "ctl", "tropics", "atmospheric_river"); r["hits"] != "0" || r["correct_negatives"] != "3" {
		t.Errorf("member a rivers in the tropics: %v", r)
	}
	px := readRows(t, filepath.Join(out, PixelFile))
	for _, r := range px {
		if r["member"] == "a" && r["class"] == "mean" && r["weighting"] == "area" && r["region"] == All && r["season"] == All && r["iou"] != "1" {
			t.Errorf("member a mean IoU %s, want 1", r["iou"])
		}
	}
	var doc map[string]any
	b, _ := os.ReadFile(filepath.Join(out, ScoresFile))
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatalf("scores.json: %v", err)
	}
	if doc["event_matching"] == nil || doc["pixel"] == nil {
		t.Error("scores.json lacks its rules or tables")
	}
	for _, name := range []string{MapsName("ctl", "a"), MapsName("warm", "b")} {
		p := filepath.Join(out, name)
		if _, err := os.Stat(p); err != nil {
			t.Fatalf("missing %s", name)
		}
		if nc, err := exec.LookPath("ncdump"); err == nil {
			o, err := exec.Command(nc, "-h", p).CombinedOutput()
			if err != nil || !strings.Contains(string(o), "float miss_frequency(class, lat, lon)") {
				t.Errorf("ncdump %s: %v\n%s", name, err, o)
			}
		}
	}
	// Deterministic: a second run gives identical files.
	out2 := t.TempDir()
	job.OutDir = out2
	if err := (Kind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{ScoresFile, PixelFile, ConfusionFile, EventFile, MapsName("ctl", "a")} {
		a, _ := os.ReadFile(filepath.Join(out, f))
		b, _ := os.ReadFile(filepath.Join(out2, f))
		if string(a) != string(b) {
			t.Errorf("%s differs between runs", f)
		}
	}
}

func TestKindBadInputs(t *testing.T) {
	dir := t.TempDir()
	g, _ := grid.Global(3, 3)
	g2, _ := grid.Global(2, 2)
	m := make([]byte, g.Len())
	m2 := make([]byte, g2.Len())
	cand := filepath.Join(dir, "c", "mask.nc")
	writeMask(t, cand, g, []float64{0, 6}, [][]byte{m, m})
	cases := []struct {
		name string
		ref  func(string)
		want string
	}{
		{"other grid", func(p string) { writeMask(t, p, g2, []float64{0, 6}, [][]byte{m2, m2}) }, "different grids"},
		{"other times", func(p string) { writeMask(t, p, g, []float64{0, 12}, [][]byte{m, m}) }, "same times"},
		{"fewer steps", func(p string) { writeMask(t, p, g, []float64{0}, [][]byte{m}) }, "time steps"},
	}
	for i, c := range cases {
		p := filepath.Join(dir, "r", string(rune('a'+i)), "mask.nc")
		c.ref(p)
		v := defaults()
		v["candidate"], v["reference"] = "pred", "label"
		job := &pipeline.Job{Settings: v, OutDir: t.TempDir(), Inputs: []pipeline.Input{
			{From: "pred", Kind: "x", Scenario: "s", Block: "1990", Files: []string{cand}},
			{From: "label", Kind: "label", Scenario: "s", Block: "1990", Files: []string{p}}}}
		err := (Kind{}).Run(context.Background(), job)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one mentioning %q", c.name, err, c.want)
		}
	}
	// Settings: neither or both references.
	v := defaults()
	v["candidate"] = "pred"
	if err := (Kind{}).CheckStage("ev", v, nil); err == nil {
		t.Error("no reference must be refused")
	}
	v["reference"], v["reference_files"] = "label", "x/{block}.nc"
	if err := (Kind{}).CheckStage("ev", v, nil); err == nil {
		t.Error("two references must be refused")
	}
}
