package pipeline_test

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
)

const goodHead = `campaign: bad-input
scenarios:
  control:
    files: data/control/*.nc
    period: 1990-1992
`

// Each bad campaign must produce a message naming the place (file:line)
// and saying what was expected; nothing may be written to disk.
func TestBadCampaignsGetActionableErrors(t *testing.T) {
	cases := []struct {
		name, yaml string
		want       []string
	}{
		{"unknown top key", goodHead + "stagse: {}\n", []string{":6:1:", `unknown key "stagse"`, `did you mean "stages"?`}},
		{"unknown stage key", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n    setings: {}\n", []string{":10:5:", `did you mean "settings"?`}},
		{"unknown setting", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n    settings: {sufix: x}\n", []string{":10:16:", `unknown key "sufix"`, `did you mean "suffix"?`}},
		{"unknown kind", goodHead + "stages:\n  a:\n    kind: concatt\n    inputs: [scenarios]\n", []string{":8:11:", `unknown stage kind "concatt"`, `did you mean "concat"?`}},
		{"missing input", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [prepp]\n", []string{`no stage or scenario is called "prepp"`}},
		{"cycle", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios, c]\n  b:\n    kind: concat\n    inputs: [a]\n  c:\n    kind: concat\n    inputs: [b]\n", []string{"closes a cycle", "c -> a -> b -> c"}},
		{"duplicate stage", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n  a:\n    kind: concat\n    inputs: [scenarios]\n", []string{`stage "a" given twice`}},
		{"unsafe name", goodHead + "stages:\n  \"a;rm -rf\":\n    kind: concat\n    inputs: [scenarios]\n", []string{`stage name "a;rm -rf" is not allowed`, "a-z, 0-9"}},
		{"upper-case name", goodHead + "stages:\n  Prep:\n    kind: concat\n    inputs: [scenarios]\n", []string{`stage name "Prep" is not allowed`}},
		{"empty glob", "campaign: x\nscenarios:\n  control:\n    files: nowhere/*.nc\n    period: 1990\nstages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n", []string{`glob "nowhere/*.nc" matches no file`}},
		{"bad period", "campaign: x\nscenarios:\n  control:\n    files: data/control/*.nc\n    period: nineties\nstages: {}\n", []string{":5:13:", `"nineties" is not a period`}},
		{"reversed period", "campaign: x\nscenarios:\n  control:\n    files: data/control/*.nc\n    period: 1999-1990\nstages: {}\n", []string{"ends before it starts"}},
		{"wrong type", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n    settings: {sleep_ms: soon}\n", []string{`"soon" is not a number`, "int in ms"}},
		{"out of range", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n    settings: {sleep_ms: -5}\n", []string{"-5 ms is out of range", "from 0 to 60000"}},
		{"not whole", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n    settings: {sleep_ms: 1.5}\n", []string{"not a whole number"}},
		{"no campaign name", "scenarios:\n  control:\n    files: data/control/*.nc\n    period: 1990\nstages: {}\n", []string{"the campaign needs a name"}},
		{"malformed yaml", "campaign: x\nscenarios: [\n", []string{"not valid YAML"}},
		{"split overlap", goodHead + "split: {train: 1990-1991, test: 1991}\nstages: {}\n", []string{"train 1990-1991 overlaps test 1991-1991"}},
		{"channel level without unit", goodHead + "channels:\n  - {name: t850, standard_name: air_temperature, level: 850}\nstages: {}\n", []string{`write the unit, e.g. "850 hPa"`}},
		{"channel two identities", goodHead + "channels:\n  - {name: x, standard_name: air_temperature, derived: ivt}\nstages: {}\n", []string{"exactly one of standard_name, variable or derived"}},
		{"reserved scenario name", "campaign: x\nscenarios:\n  scenarios:\n    files: data/control/*.nc\n    period: 1990\nstages: {}\n", []string{`"scenarios" is a reserved word`}},
		{"stage named like scenario", goodHead + "stages:\n  control:\n    kind: concat\n    inputs: [scenarios]\n", []string{"has the name of a scenario"}},
		{"file pattern matches nothing", goodHead + "stages:\n  a:\n    kind: concat\n    inputs: [scenarios]\n    settings: {extra: \"truth/{scenario}_{block}.nc\"}\n", []string{`pattern "truth/control_1990.nc" matches no file`}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			w := newWorld(t, map[string][]int{"control": {1990, 1991, 1992}})
			f := filepath.Join(w.dir, "c.yaml")
			os.WriteFile(f, []byte(tc.yaml), 0o644)
			before := listDir(t, w.dir)
			c, err := pipeline.Load(f, testRegistry())
			if err == nil {
				_, err = c.Expand()
			}
			if err == nil {
				t.Fatal("accepted a bad campaign")
			}
			var inv *pipeline.InvalidError
			if !errors.As(err, &inv) {
				t.Errorf("error is %T, want an InvalidError (exit code 2)", err)
			}
			msg := err.Error()
			if !strings.Contains(msg, f) && tc.name != "malformed yaml" {
				t.Errorf("message does not name the file: %s", msg)
			}
			for _, w := range tc.want {
				if !strings.Contains(msg, w) {
					t.Errorf("message %q lacks %q", msg, w)
				}
			}
			if after := listDir(t, w.dir); after != before {
				t.Errorf("loading a bad campaign changed the disk:\n%s\n->\n%s", before, after)
			}
		})
	}
}

func listDir(t *testing.T, dir string) string {
	var b strings.Builder
	filepath.Walk(dir, func(p string, fi os.FileInfo, err error) error {
		if err == nil {
			b.WriteString(p + "\n")
		}
		return nil
	})
	return b.String()
}

func TestDOTShowsScenariosAndStages(t *testing.T) {
	w := newWorld(t, threeYears)
	c, err := pipeline.Load(w.campaign("1990-1992", "a", "", ""), testRegistry())
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	if err := c.WriteDOT(&b); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"digraph", `"scenario:control" -> "prep"`, `"prep" -> "total"`, "concat"} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("DOT lacks %q:\n%s", want, b.String())
		}
	}
}
