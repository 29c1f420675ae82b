package main

// Bad input downstream of the data stages, through the real command line
// on a tiny invented world: site profiles that are wrong or cannot fit
// the training job (read by the batch-scripts stage), and reference masks
// that do not match the labels (read by the evaluate stage). The chain
// up to the shards runs once; each case then changes one file or setting
// and must fail only its own instance, with a message naming the file and
// the field, and leave nothing on disk but the store's bookkeeping and
// that instance's log.

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/examples/world"
)

const relSiteCampaign = `campaign: site-cases
scenarios:
  control: {files: world/control/fields_*.nc, period: 1991-1992, calendar: noleap}
channels:
  - {name: psl,   standard_name: air_pressure_at_mean_sea_level, units: Pa}
  - {name: ws10,  derived: wind_speed, units: m s-1}
  - {name: vo850, derived: relative_vorticity, level: 850 hPa, units: s-1}
  - {name: ta850, standard_name: air_temperature, level: 850 hPa, units: K}
  - {name: ta700, standard_name: air_temperature, level: 700 hPa, units: K}
  - {name: ta500, standard_name: air_temperature, level: 500 hPa, units: K}
  - {name: ta300, standard_name: air_temperature, level: 300 hPa, units: K}
  - {name: ws850, derived: wind_speed, level: 850 hPa, units: m s-1}
  - {name: ws300, derived: wind_speed, level: 300 hPa, units: m s-1}
  - {name: ivt,   derived: ivt, units: kg m-1 s-1}
  - {name: iwv,   derived: iwv, units: kg m-2}
split: {train: [1991], test: [1992]}
stages:
  fields: {kind: subset, inputs: [scenarios]}
  stats: {kind: fit-stats, inputs: [fields]}
  normalized: {kind: normalize, inputs: [fields, stats]}
  labels: {kind: label, inputs: [fields]}
  shards: {kind: shard, inputs: [normalized, labels]}
  jobs:
    kind: batch-scripts
    inputs: [shards, stats, normalized]
    settings:
      profile: %PROFILE%
      train_command: [python, train.py, --manifest, "{manifest}"]%JOBS%
  scores:
    kind: evaluate
    inputs: [labels]
    settings: {candidate: labels, reference_files: "%TRUTH%"}
`

const relGoodProfile = "engine: local\nnode:\n  cores: 2\n  scratch: {path: /tmp/squall-scratch, size: 50GB}\nwalltime: 48h\n"

// relMaskCDL is a mask file in the shared mask.nc format on a 3 x 4 grid
// (the invented world's grid is 19 x 28).
const relMaskCDL = `netcdf mask {
dimensions:
	time = 2 ;
	lat = 3 ;
	lon = 4 ;
variables:
	double time(time) ;
		time:standard_name = "time" ;
		time:units = "days since 1850-01-01 00:00:00" ;
		time:calendar = "noleap" ;
	double lat(lat) ;
		lat:standard_name = "latitude" ;
		lat:units = "degrees_north" ;
	double lon(lon) ;
		lon:standard_name = "longitude" ;
		lon:units = "degrees_east" ;
	byte class_mask(time, lat, lon) ;
		class_mask:flag_values = 0b, 1b, 2b ;
		class_mask:flag_meanings = "background tropical_cyclone atmospheric_river" ;
data:
 time = 51326, 51326.25 ;
 lat = 10, 20, 30 ;
 lon = 100, 110, 120, 130 ;
 class_mask = 0, 0, 0, 0, 0, 1, 1, 0, 0, 0, 2, 2, 0, 0, 0, 0, 0, 1, 1, 0, 0, 0, 2, 2 ;
}
`

type relSiteCase struct {
	name    string
	profile string // profile YAML ("" keeps the good one)
	jobs    string // extra batch-scripts settings (YAML lines)
	truth   func(t *testing.T, dir string) string
	failing string // label of the instance that must fail
	want    []string
}

func TestBadInputSiteProfilesAndReferences(t *testing.T) {
	dir := t.TempDir()
	o, err := world.Preset("tiny")
	if err != nil {
		t.Fatal(err)
	}
	o.Dir = filepath.Join(dir, "world")
	o.Scenarios = o.Scenarios[:1]
	if _, err := world.Generate(context.Background(), o); err != nil {
		t.Fatal(err)
	}
	f := filepath.Join(dir, "c.yaml")
	write := func(profile, jobs, truth string) {
		os.WriteFile(filepath.Join(dir, "p.yaml"), []byte(profile), 0o644)
		r := strings.NewReplacer("%PROFILE%", "p.yaml", "%JOBS%", jobs, "%TRUTH%", truth)
		os.WriteFile(f, []byte(r.Replace(relSiteCampaign)), 0o644)
	}
	goodTruth := "world/{scenario}/truth_{block}.nc"
	write(relGoodProfile, "", goodTruth)
	if code, out, errs := relSquall(t, "run", "--report", "-", "-j", "2", f); code != exitOK {
		t.Fatalf("the good campaign: exit %d\n%s%s", code, out, errs)
	}
	cases := []relSiteCase{
		{name: "accelerators the node does not have", jobs: "\n      accelerators_per_node: 4", failing: "jobs",
			want: []string{"setting accelerators_per_node", "exceeds the profile's node.accelerators 0", "p.yaml"}},
		{name: "staging does not fit node-local storage", failing: "jobs",
			profile: "engine: local\nnode:\n  cores: 2\n  scratch: {path: /tmp/squall-scratch, size: 1KB}\nwalltime: 48h\n",
			want:    []string{"node-local storage is usable", "node.scratch.size 1 kB", "too_big: more-nodes"}},
		{name: "profile key misspelt", failing: "jobs",
			profile: "engine: local\nnode:\n  cores: 2\n  acelerators: 0\nwalltime: 48h\n",
			want:    []string{"p.yaml:4", "node.acelerators: unknown key", `did you mean "node.accelerators"?`}},
		{name: "unknown engine", failing: "jobs",
			profile: "engine: slurmm\nnode:\n  cores: 2\nwalltime: 48h\n",
			want:    []string{"p.yaml:1", `engine = "slurmm"`, `did you mean "slurm"?`}},
		{name: "walltime missing", failing: "jobs",
			profile: "engine: local\nnode:\n  cores: 2\n",
			want:    []string{"p.yaml", "walltime", "is required"}},
		{name: "warning lead not shorter than the walltime", failing: "jobs",
			profile: "engine: local\nnode:\n  cores: 2\nwalltime: 2m\nwarning: {signal: USR1, lead: 5m}\n",
			want:    []string{"p.yaml:5", "warning.lead", "shorter than walltime"}},
		{name: "launcher placeholder unknown", failing: "jobs",
			profile: "engine: slurm\nnode:\n  cores: 2\nwalltime: 4h\nlauncher: [srun, \"--ntasks={rank}\"]\n",
			want:    []string{"p.yaml:5", "launcher[1]", "unknown placeholder {rank}", "did you mean {ranks}?"}},
		{name: "profile is not YAML", failing: "jobs",
			profile: "engine: [local\n",
			want:    []string{"p.yaml", "yaml"}},
		{name: "hostile partition name", failing: "jobs",
			profile: "engine: slurm\npartition: \"gpu;touch PWNED\"\nnode:\n  cores: 2\nwalltime: 4h\n",
			want:    []string{"p.yaml:2", "partition", "not a valid name"}},
		{name: "directive smuggling a second line", failing: "jobs",
			profile: "engine: slurm\nnode:\n  cores: 2\nwalltime: 4h\ndirectives: [\"--constraint=gpu\\n#SBATCH --wrap=touch PWNED\"]\n",
			want:    []string{"p.yaml:5", "directives[0]", "must be one non-empty line"}},
		{name: "relative scratch path", failing: "jobs",
			profile: "engine: local\nnode:\n  cores: 2\n  scratch: {path: scratch/here, size: 1GB}\nwalltime: 48h\n",
			want:    []string{"p.yaml:4", "node.scratch.path", "must be absolute or start with $NAME"}},
		{name: "reference mask on another grid", failing: "scores",
			truth: func(t *testing.T, dir string) string {
				relNcgen(t, filepath.Join(dir, "small", "truth_1991.nc"), "nc4", relMaskCDL)
				relNcgen(t, filepath.Join(dir, "small", "truth_1992.nc"), "nc4", relMaskCDL)
				return "small/truth_{block}.nc"
			},
			want: []string{"truth_1991.nc", "grid"}},
		{name: "reference without class_mask", failing: "scores",
			truth: func(t *testing.T, dir string) string {
				cdl := relEdit(t, relMaskCDL, "byte class_mask(time, lat, lon)", "byte labels(time, lat, lon)",
					"class_mask:flag_values", "labels:flag_values", "class_mask:flag_meanings", "labels:flag_meanings",
					" class_mask = ", " labels = ")
				relNcgen(t, filepath.Join(dir, "nomask", "truth_1991.nc"), "nc4", cdl)
				relNcgen(t, filepath.Join(dir, "nomask", "truth_1992.nc"), "nc4", cdl)
				return "nomask/truth_{block}.nc"
			},
			want: []string{"truth_1991.nc", "class_mask"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			profile, truth := relGoodProfile, goodTruth
			if tc.profile != "" {
				profile = tc.profile
			}
			if tc.truth != nil {
				truth = tc.truth(t, dir)
			}
			write(profile, tc.jobs, truth)
			before := relSnapshot(t, dir)
			code, out, errs := relSquall(t, "run", "--report", "-", "-j", "2", f)
			msg := out + errs
			if code != exitStageFailed {
				t.Fatalf("exit %d, want %d\n%s", code, exitStageFailed, msg)
			}
			failedLine := ""
			for _, l := range strings.Split(out, "\n") {
				if strings.HasPrefix(l, "  failed ") {
					if !strings.HasPrefix(l, "  failed "+tc.failing+"[") && !strings.HasPrefix(l, "  failed "+tc.failing+":") {
						t.Errorf("unexpected failure: %s", l)
					}
					if failedLine == "" {
						failedLine = l
					}
				}
			}
			for _, w := range tc.want {
				if !strings.Contains(msg, w) {
					t.Errorf("message lacks %q:\n%s", w, msg)
				}
			}
			t.Logf("message: %s", strings.TrimSpace(failedLine))
			after := relSnapshot(t, dir)
			added, removed, changed := relDiff(before, after)
			for _, p := range append(added, changed...) {
				rest, ok := strings.CutPrefix(p, ".squall/")
				switch {
				case ok && (rest == "index.db" || strings.HasPrefix(rest, "runs/")):
				case ok && strings.HasPrefix(rest, "logs/") && strings.HasSuffix(rest, ".log"):
				default:
					t.Errorf("a failed %s changed %s", tc.failing, p)
				}
			}
			if len(removed) > 0 {
				t.Errorf("a failed %s removed %v", tc.failing, removed)
			}
			if _, err := os.Stat(filepath.Join(dir, "PWNED")); err == nil {
				t.Error("a hostile profile value ran a command")
			}
		})
	}
	// Hostile values that are legitimate text (a work directory, a scratch
	// path, words of the training command) are accepted and quoted: the
	// emitted local scripts, run with bash, hand every word to the trainer
	// verbatim, run nothing else, and write only below the work directory
	// and the scratch path.
	t.Run("hostile values reach the trainer verbatim", func(t *testing.T) {
		site := filepath.Join(dir, "site")
		recorder := filepath.Join(site, "bin", "trainer")
		os.MkdirAll(filepath.Dir(recorder), 0o755)
		argsFile := filepath.Join(site, "trainer.args")
		os.WriteFile(recorder, []byte("#!/bin/bash\nprintf '%s\\0' \"$SQUALL_RANK\" \"$@\" >>"+relShellQuote(argsFile)+"\n"), 0o755)
		scratch := filepath.Join(site, "scratch $(touch PWNED_S) `touch PWNED_T`")
		hostile := []string{"$(touch PWNED1)", "`touch PWNED2`", "a;touch PWNED3", "'; touch PWNED4; '", "x\ny", "--rm", "-n", "*", "~", "$HOME"}
		var words []string
		for _, w := range append([]string{recorder}, hostile...) {
			words = append(words, strconvQuoteYAML(w))
		}
		profile := "engine: local\nnode:\n  cores: 2\n  scratch: {path: " + strconvQuoteYAML(scratch) + ", size: 1GB}\nwalltime: 48h\n"
		jobs := "\n      work_dir: " + strconvQuoteYAML("runs/$(touch PWNED_W);x") + "\n      train_command: [" + strings.Join(words, ", ") + "]"
		os.WriteFile(filepath.Join(dir, "p.yaml"), []byte(profile), 0o644)
		text := strings.NewReplacer("%PROFILE%", "p.yaml", "%JOBS%", jobs, "%TRUTH%", goodTruth).Replace(relSiteCampaign)
		// The good train_command line is replaced by the hostile one.
		text = strings.Replace(text, "      train_command: [python, train.py, --manifest, \"{manifest}\"]\n", "", 1)
		os.WriteFile(f, []byte(text), 0o644)
		code, out, errs := relSquall(t, "run", "--report", "-", "-j", "2", f)
		if code != exitOK {
			t.Fatalf("hostile but legitimate values: exit %d\n%s%s", code, out, errs)
		}
		subs, _ := filepath.Glob(filepath.Join(dir, ".squall", "objects", "*", "*", "submit.sh"))
		var submit string
		for _, p := range subs {
			if b, _ := os.ReadFile(filepath.Join(filepath.Dir(p), "train.job.sh")); strings.Contains(string(b), "PWNED1") {
				submit = p
			}
		}
		if submit == "" {
			t.Fatalf("no emitted scripts with the hostile command among %v", subs)
		}
		// Run what a person would run at the site, from a copy of the
		// emitted directory.
		emitted := filepath.Join(site, "emitted")
		if out, err := exec.Command("cp", "-r", filepath.Dir(submit), emitted).CombinedOutput(); err != nil {
			t.Fatalf("cp: %v %s", err, out)
		}
		before := relSnapshot(t, dir)
		cmd := exec.Command("bash", filepath.Join(emitted, "submit.sh"))
		cmd.Dir = site
		cmd.Env = append(os.Environ(), "HOME="+site)
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("bash submit.sh: %v\n%s", err, out)
		}
		got, err := os.ReadFile(argsFile)
		if err != nil {
			t.Fatalf("the trainer never ran: %v", err)
		}
		want := strings.Join(append([]string{"0"}, hostile...), "\x00") + "\x00"
		if string(got) != want {
			t.Errorf("the trainer received %q\nwant %q", got, want)
		}
		added, removed, changed := relDiff(before, relSnapshot(t, dir))
		work := "runs/$(touch PWNED_W);x"
		for _, p := range added {
			rel, _ := filepath.Rel(dir, filepath.Join(dir, p))
			ok := strings.HasPrefix(rel, work) || strings.HasPrefix(rel, "site/scratch $(touch PWNED_S) `touch PWNED_T`") ||
				rel == "site/trainer.args" || rel == "runs"
			if !ok {
				t.Errorf("the emitted scripts wrote %s, outside the work directory and the scratch path", p)
			}
			if strings.Contains(filepath.Base(p), "PWNED") && !strings.Contains(p, "$(touch") {
				t.Errorf("a hostile value ran a command: %s", p)
			}
		}
		if len(removed)+len(changed) > 0 {
			t.Errorf("the emitted scripts removed %v and changed %v", removed, changed)
		}
		if _, err := os.Stat(filepath.Join(dir, work, "checkpoints", "TRAINING_DONE")); err != nil {
			t.Errorf("the segment did not finish: %v", err)
		}
	})
}

// strconvQuoteYAML writes s as a YAML double-quoted scalar (JSON string
// syntax, which YAML 1.2 accepts, without HTML escapes).
func strconvQuoteYAML(s string) string {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	enc.Encode(s)
	return strings.TrimSuffix(b.String(), "\n")
}

// relShellQuote quotes a path for a bash script of our own.
func relShellQuote(s string) string {
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
