package main

import (
	"context"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/squall-climate/squall/examples/world"
	"github.com/squall-climate/squall/pipeline"
)

// End-to-end tests with the real binary and the real stage kinds on a tiny
// invented world: the same campaign run locally, through the local batch
// engine, and on a real Slurm cluster when one is up (.ci/slurm-up.sh),
// must give identical output digests, and a deliberately broken input must
// fail only its own instance and what depends on it.

var (
	buildOnce sync.Once
	binPath   string
	buildErr  error
)

func squallBinary(t *testing.T) string {
	t.Helper()
	buildOnce.Do(func() {
		dir, err := os.MkdirTemp("", "squall-e2e-bin-")
		if err != nil {
			buildErr = err
			return
		}
		binPath = filepath.Join(dir, "squall")
		out, err := exec.Command("go", "build", "-o", binPath, ".").CombinedOutput()
		if err != nil {
			buildErr = err
			t.Logf("%s", out)
		}
	})
	if buildErr != nil {
		t.Fatalf("build squall: %v", buildErr)
	}
	return binPath
}

const e2eCampaign = `campaign: e2e
store: %STORE%
scenarios:
  control: {files: world/control/fields_*.nc, period: 1991-1993, calendar: noleap}
  warm: {files: world/warm/fields_*.nc, period: 2071-2072, calendar: noleap}
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
stages:
  fields: {kind: subset, inputs: [scenarios]}
  labels: {kind: label, inputs: [fields]}
  events: {kind: catalog, inputs: [labels, fields], settings: {masks: labels, fields: fields}}
  scores:
    kind: evaluate
    inputs: [labels]
    settings: {candidate: labels, reference_files: "world/{scenario}/truth_{block}.nc"}
`

func e2eWorld(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	o, err := world.Preset("tiny")
	if err != nil {
		t.Fatal(err)
	}
	o.Dir = filepath.Join(dir, "world")
	if _, err := world.Generate(context.Background(), o); err != nil {
		t.Fatal(err)
	}
	// A deliberately broken year: not a netCDF file at all.
	os.WriteFile(filepath.Join(o.Dir, "control", "fields_1993.nc"), []byte("this is not netCDF\n"), 0o644)
	truth, _ := os.ReadFile(filepath.Join(o.Dir, "control", "truth_1992.nc"))
	os.WriteFile(filepath.Join(o.Dir, "control", "truth_1993.nc"), truth, 0o644)
	return dir
}

func e2eRun(t *testing.T, dir, store string, extra ...string) (*pipeline.RunRecord, string) {
	t.Helper()
	f := filepath.Join(dir, store+".yaml")
	os.WriteFile(f, []byte(strings.ReplaceAll(e2eCampaign, "%STORE%", store)), 0o644)
	args := append([]string{"run", "--report", "-", "-j", "2"}, extra...)
	args = append(args, f)
	out, err := exec.Command(squallBinary(t), args...).CombinedOutput()
	ee, ok := err.(*exec.ExitError)
	if err != nil && (!ok || ee.ExitCode() != exitStageFailed) {
		t.Fatalf("squall %v: %v\n%s", args, err, out)
	}
	rec, lerr := pipeline.LastRunRecord(filepath.Join(dir, store))
	if lerr != nil {
		t.Fatalf("%v\n%s", lerr, out)
	}
	return rec, string(out)
}

func outcome(rec *pipeline.RunRecord) map[string]string {
	m := map[string]string{}
	for _, in := range rec.Instances {
		m[in.Label] = in.State + " " + in.OutputDigest
	}
	return m
}

func checkBrokenYear(t *testing.T, rec *pipeline.RunRecord, how string) {
	t.Helper()
	for _, in := range rec.Instances {
		switch in.Label {
		case "fields[control/1993]":
			if in.State != pipeline.StateFailed || !strings.Contains(in.Error+in.LogTail, "fields_1993.nc") {
				t.Errorf("%s: broken input: %s %q; want failed, naming the file", how, in.State, in.Error)
			}
		case "labels[control/1993]", "events[control]", "scores":
			if in.State != pipeline.StateBlocked {
				t.Errorf("%s: %s is %s; want blocked by the failed input", how, in.Label, in.State)
			}
		default:
			if in.State != pipeline.StateRan {
				t.Errorf("%s: %s is %s (%s); want ran", how, in.Label, in.State, in.Error)
			}
		}
	}
}

func TestSiteRunsMatchLocalRun(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end runs take tens of seconds; skipped with -short")
	}
	dir := e2eWorld(t)
	local, _ := e2eRun(t, dir, "local")
	checkBrokenYear(t, local, "local run")
	want := outcome(local)

	os.WriteFile(filepath.Join(dir, "site-local.yaml"), []byte("engine: local\nwalltime: 1h\n"), 0o644)
	viaEngine, _ := e2eRun(t, dir, "engine", "--site", filepath.Join(dir, "site-local.yaml"))
	checkBrokenYear(t, viaEngine, "local batch engine")
	if got := outcome(viaEngine); !sameOutcome(got, want) {
		t.Errorf("local batch engine differs from the local run:\n got %v\nwant %v", got, want)
	}
	// The receipts folded from the jobs make a later plan reuse everything
	// that succeeded (the jobs computed the planner's own keys).
	for _, in := range planJSON(t, filepath.Join(dir, "engine.yaml")) {
		broken := in["block"] == "1993" || (in["stage"] == "events" && in["scenario"] == "control") || in["stage"] == "scores"
		if (in["action"] == "run") != broken {
			t.Errorf("plan after the batch-engine run: %v", in)
		}
	}

	if err := exec.Command("sinfo").Run(); err != nil {
		t.Log("no Slurm controller answers (start one with .ci/slurm-up.sh); the Slurm half is not run")
		return
	}
	os.WriteFile(filepath.Join(dir, "site-slurm.yaml"), []byte("engine: slurm\nnode: {cores: 2}\nwalltime: 1h\n"), 0o644)
	onSlurm, _ := e2eRun(t, dir, "slurm", "--site", filepath.Join(dir, "site-slurm.yaml"))
	checkBrokenYear(t, onSlurm, "Slurm")
	if got := outcome(onSlurm); !sameOutcome(got, want) {
		t.Errorf("Slurm run differs from the local run:\n got %v\nwant %v", got, want)
	}
	// The next run resubmits only what failed and what depends on it.
	os.Remove(filepath.Join(dir, "world", "control", "fields_1993.nc"))
	os.Remove(filepath.Join(dir, "world", "control", "truth_1993.nc"))
	f := filepath.Join(dir, "slurm.yaml")
	os.WriteFile(f, []byte(strings.Replace(strings.ReplaceAll(e2eCampaign, "%STORE%", "slurm"), "1991-1993", "1991-1992", 1)), 0o644)
	for _, in := range planJSON(t, f) {
		rerun := in["stage"] == "events" && in["scenario"] == "control" || in["stage"] == "scores"
		if (in["action"] == "run") != rerun {
			t.Errorf("after dropping the broken year: %v", in)
		}
	}
}

func sameOutcome(a, b map[string]string) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

func planJSON(t *testing.T, campaign string) []map[string]string {
	t.Helper()
	out, err := exec.Command(squallBinary(t), "plan", "--json", campaign).Output()
	if err != nil {
		t.Fatalf("plan %s: %v", campaign, err)
	}
	var plan struct{ Instances []map[string]string }
	if err := json.Unmarshal(out, &plan); err != nil {
		t.Fatal(err)
	}
	return plan.Instances
}
