package pipeline_test

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/squall-climate/squall/cache"
	"github.com/squall-climate/squall/pipeline"
)

// world makes a campaign directory with raw files per scenario and year.
type world struct {
	t   *testing.T
	dir string
}

func newWorld(t *testing.T, years map[string][]int) *world {
	t.Helper()
	w := &world{t: t, dir: t.TempDir()}
	for sc, ys := range years {
		for _, y := range ys {
			w.writeData(sc, y, fmt.Sprintf("%s %d\n", sc, y))
		}
	}
	return w
}

func (w *world) writeData(sc string, year int, content string) string {
	p := filepath.Join(w.dir, "data", sc, fmt.Sprintf("fields_%d.nc", year))
	os.MkdirAll(filepath.Dir(p), 0o755)
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		w.t.Fatal(err)
	}
	return p
}

const baseCampaign = `campaign: test
scenarios:
  control:
    files: data/control/*.nc
    period: %s
  warm:
    files: data/warm/*.nc
    period: 2070-2072
stages:
  prep:
    kind: concat
    inputs: [scenarios]
    settings:
      suffix: "%s"
      comment: "%s"
      fail_on: "%s"
  total:
    kind: sum
    inputs: [prep]
`

func (w *world) campaign(period, suffix, comment, failOn string) string {
	p := filepath.Join(w.dir, "campaign.yaml")
	if err := os.WriteFile(p, []byte(fmt.Sprintf(baseCampaign, period, suffix, comment, failOn)), 0o644); err != nil {
		w.t.Fatal(err)
	}
	return p
}

func (w *world) countFile() string { return filepath.Join(w.dir, "children.count") }

func (w *world) children() int {
	b, _ := os.ReadFile(w.countFile())
	return strings.Count(string(b), "\n")
}

func (w *world) plan(file string) *pipeline.Plan {
	w.t.Helper()
	c, err := pipeline.Load(file, testRegistry())
	if err != nil {
		w.t.Fatal(err)
	}
	s, err := cache.Open(c.StoreDir, cache.Options{})
	if err != nil {
		w.t.Fatal(err)
	}
	defer s.Close()
	p, err := pipeline.NewPlan(c, s)
	if err != nil {
		w.t.Fatal(err)
	}
	return p
}

func (w *world) run(file string) (*pipeline.RunRecord, error) {
	w.t.Helper()
	w.t.Setenv("SQUALL_TEST_COUNT", w.countFile())
	c, err := pipeline.Load(file, testRegistry())
	if err != nil {
		w.t.Fatal(err)
	}
	s, err := cache.Open(c.StoreDir, cache.Options{})
	if err != nil {
		w.t.Fatal(err)
	}
	defer s.Close()
	p, err := pipeline.NewPlan(c, s)
	if err != nil {
		w.t.Fatal(err)
	}
	return pipeline.Execute(context.Background(), p, s, pipeline.RunOptions{Jobs: 2, ChildCommand: childCommand})
}

func actions(p *pipeline.Plan) map[string]string {
	m := map[string]string{}
	for _, st := range p.Steps {
		m[st.Label()] = string(st.Action) + ": " + st.Reason
	}
	return m
}

func digests(rec *pipeline.RunRecord) map[string]string {
	m := map[string]string{}
	for _, in := range rec.Instances {
		m[in.ID] = in.OutputDigest
	}
	return m
}

var threeYears = map[string][]int{"control": {1990, 1991, 1992}, "warm": {2070, 2071, 2072}}

func TestRerunWithNothingChangedDoesNoWork(t *testing.T) {
	w := newWorld(t, threeYears)
	f := w.campaign("1990-1992", "a", "", "")
	rec, err := w.run(f)
	if err != nil {
		t.Fatal(err)
	}
	if rec.Counts[pipeline.StateRan] != 7 || w.children() != 7 {
		t.Fatalf("first run: %v, %d children; want 7 ran (6 blocks + 1 fan-in)", rec.Counts, w.children())
	}
	for label, a := range actions(w.plan(f)) {
		if !strings.HasPrefix(a, "reuse") {
			t.Errorf("after a run, %s: %s; want reuse", label, a)
		}
	}
	rec2, err := w.run(f)
	if err != nil {
		t.Fatal(err)
	}
	if rec2.Counts[pipeline.StateReused] != 7 || w.children() != 7 {
		t.Fatalf("rerun: %v and %d children in total; want all 7 reused and no new child", rec2.Counts, w.children())
	}
	if fmt.Sprint(digests(rec)) != fmt.Sprint(digests(rec2)) {
		t.Fatal("rerun changed output digests")
	}
}

func TestAddingAYearRunsOnlyItAndTheFanIn(t *testing.T) {
	w := newWorld(t, threeYears)
	if _, err := w.run(w.campaign("1990-1992", "a", "", "")); err != nil {
		t.Fatal(err)
	}
	w.writeData("control", 1993, "control 1993\n")
	got := actions(w.plan(w.campaign("1990-1993", "a", "", "")))
	want := map[string]string{
		"prep[control/1993]": "run: never run",
		"total":              "run: upstream prep[control/1993] will run",
	}
	for label, a := range got {
		exp, special := want[label]
		if special && a != exp {
			t.Errorf("%s: %q, want %q", label, a, exp)
		}
		if !special && !strings.HasPrefix(a, "reuse") {
			t.Errorf("%s: %q, want reuse", label, a)
		}
	}
	if len(got) != 8 {
		t.Errorf("%d instances, want 8", len(got))
	}
}

func TestTouchingAFileRehashesButRerunsNothing(t *testing.T) {
	w := newWorld(t, threeYears)
	f := w.campaign("1990-1992", "a", "", "")
	if _, err := w.run(f); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(w.dir, "data", "control", "fields_1991.nc")
	later := time.Now().Add(time.Hour)
	os.Chtimes(p, later, later)
	for label, a := range actions(w.plan(f)) {
		if !strings.HasPrefix(a, "reuse") {
			t.Errorf("after touch, %s: %s", label, a)
		}
	}
}

func TestChangedInputSaysWhich(t *testing.T) {
	w := newWorld(t, threeYears)
	f := w.campaign("1990-1992", "a", "", "")
	if _, err := w.run(f); err != nil {
		t.Fatal(err)
	}
	w.writeData("control", 1991, "control 1991 revised\n")
	got := actions(w.plan(f))
	if a := got["prep[control/1991]"]; a != "run: input file control:data/control/fields_1991.nc changed" {
		t.Errorf("changed file: %q", a)
	}
	if a := got["prep[control/1990]"]; !strings.HasPrefix(a, "reuse") {
		t.Errorf("unchanged block: %q", a)
	}
	if a := got["total"]; a != "run: upstream prep[control/1991] will run" {
		t.Errorf("fan-in: %q", a)
	}
	// A changed setting is named with old and new values.
	got = actions(w.plan(w.campaign("1990-1992", "b", "", "")))
	if a := got["prep[warm/2071]"]; a != `run: setting suffix changed ("a" -> "b")` {
		t.Errorf("changed setting: %q", a)
	}
}

func TestEarlyCutoffStopsAtIdenticalOutputs(t *testing.T) {
	w := newWorld(t, threeYears)
	if _, err := w.run(w.campaign("1990-1992", "a", "", "")); err != nil {
		t.Fatal(err)
	}
	before := w.children()
	// comment changes prep's keys but not its outputs.
	rec, err := w.run(w.campaign("1990-1992", "a", "new comment", ""))
	if err != nil {
		t.Fatal(err)
	}
	if rec.Counts[pipeline.StateRan] != 6 || rec.Counts[pipeline.StateReused] != 1 {
		t.Fatalf("counts %v; want the 6 prep instances ran and total reused", rec.Counts)
	}
	if w.children()-before != 6 {
		t.Fatalf("%d children, want 6", w.children()-before)
	}
}

func TestAlteredOrMissingOutputIsRecomputed(t *testing.T) {
	w := newWorld(t, threeYears)
	f := w.campaign("1990-1992", "a", "", "")
	rec, err := w.run(f)
	if err != nil {
		t.Fatal(err)
	}
	var victim, gone pipeline.InstanceRecord
	for _, in := range rec.Instances {
		switch in.Label {
		case "prep[control/1990]":
			victim = in
		case "prep[warm/2072]":
			gone = in
		}
	}
	out := filepath.Join(victim.OutputDir, "out.txt")
	if err := os.WriteFile(out, []byte("tampered\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	os.Remove(filepath.Join(gone.OutputDir, "out.txt"))
	got := actions(w.plan(f))
	if a := got["prep[control/1990]"]; !strings.HasPrefix(a, "run: output out.txt") {
		t.Errorf("altered: %q", a)
	}
	if a := got["prep[warm/2072]"]; a != "run: output out.txt missing" {
		t.Errorf("deleted: %q", a)
	}
	rec2, err := w.run(f)
	if err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(digests(rec)) != fmt.Sprint(digests(rec2)) {
		t.Fatal("recomputed outputs differ from the originals")
	}
	b, _ := os.ReadFile(out)
	if string(b) == "tampered\n" {
		t.Fatal("tampered output still in place")
	}
}

func TestFailureIsolatesAndRetriesOnlyWhatFailed(t *testing.T) {
	w := newWorld(t, threeYears)
	marker := filepath.Join(w.dir, "fail-1991")
	os.WriteFile(marker, nil, 0o644)
	rec, err := w.run(w.campaign("1990-1992", "a", "", ""))
	var sf *pipeline.StageFailedError
	if !errors.As(err, &sf) {
		t.Fatalf("error %v; want a StageFailedError", err)
	}
	c := rec.Counts
	if c[pipeline.StateFailed] != 1 || c[pipeline.StateRan] != 5 || c[pipeline.StateBlocked] != 1 {
		t.Fatalf("counts %v; want 1 failed, 5 ran, 1 blocked", c)
	}
	for _, in := range rec.Instances {
		if in.State == pipeline.StateFailed && !strings.Contains(in.Error, "asked to fail on block 1991") {
			t.Errorf("failure message %q lacks the instance's own error", in.Error)
		}
	}
	os.Remove(marker)
	got := actions(w.plan(w.campaign("1990-1992", "a", "", "")))
	if a := got["prep[control/1991]"]; a != "run: failed last time" {
		t.Errorf("failed instance: %q", a)
	}
	runs := 0
	for label, a := range got {
		if strings.HasPrefix(a, "run") {
			runs++
			if label != "prep[control/1991]" && label != "total" {
				t.Errorf("%s would run: %s", label, a)
			}
		}
	}
	if runs != 2 {
		t.Errorf("%d would run, want 2: %v", runs, got)
	}
}

func TestSecondRunnerIsRefusedQuickly(t *testing.T) {
	dir := t.TempDir()
	s, err := cache.Open(dir, cache.Options{Command: "squall run first"})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	// bbolt's flock is per open file description, so a second Open in the
	// same process is refused exactly like another process.
	_, err = cache.Open(dir, cache.Options{})
	var le *cache.LockedError
	if !errors.As(err, &le) {
		t.Fatalf("second open: %v, want LockedError", err)
	}
	if le.Owner == nil || le.Owner.PID != os.Getpid() || le.Owner.Command != "squall run first" {
		t.Fatalf("owner %+v; want this process and its command", le.Owner)
	}
	if !strings.Contains(err.Error(), fmt.Sprint(os.Getpid())) {
		t.Fatalf("message %q does not name the holder", err)
	}
}

func TestSweepMembersAndFanIn(t *testing.T) {
	w := newWorld(t, map[string][]int{"control": {1990, 1991}, "warm": {2070}})
	f := filepath.Join(w.dir, "sweep.yaml")
	os.WriteFile(f, []byte(`campaign: sweep
scenarios:
  control: {files: data/control/*.nc, period: 1990-1991}
  warm: {files: data/warm/*.nc, period: 2070}
stages:
  label:
    kind: concat
    inputs: [scenarios]
    settings:
      factor: [1, 2.5]
  agree:
    kind: gather
    inputs: [label]
`), 0o644)
	p := w.plan(f)
	var labels []string
	for _, st := range p.Steps {
		labels = append(labels, st.Label())
	}
	want := "label[control/1990/factor=1] label[control/1990/factor=2.5] label[control/1991/factor=1] label[control/1991/factor=2.5] label[warm/2070/factor=1] label[warm/2070/factor=2.5] agree[control/1990] agree[control/1991] agree[warm/2070]"
	if strings.Join(labels, " ") != want {
		t.Fatalf("instances\n%s\nwant\n%s", strings.Join(labels, " "), want)
	}
	for _, st := range p.Steps {
		if st.Stage.Name == "agree" && len(st.Upstream) != 2 {
			t.Errorf("%s reads %d members, want 2", st.Label(), len(st.Upstream))
		}
	}
}

// runnerMain runs a campaign in this process (for the kill -9 test).
func runnerMain(file string) int {
	c, err := pipeline.Load(file, testRegistry())
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 2
	}
	s, err := cache.Open(c.StoreDir, cache.Options{})
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 4
	}
	defer s.Close()
	p, err := pipeline.NewPlan(c, s)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 2
	}
	if _, err := pipeline.Execute(context.Background(), p, s, pipeline.RunOptions{Jobs: 2, ChildCommand: childCommand}); err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 3
	}
	return 0
}

const sleepyCampaign = `campaign: sleepy
scenarios:
  control: {files: data/control/*.nc, period: 1990-1993}
stages:
  prep:
    kind: concat
    inputs: [scenarios]
    settings: {sleep_ms: %d}
  total:
    kind: sum
    inputs: [prep]
`

// TestKill9RunnerThenRerunCompletes kills the runner process with SIGKILL
// at seeded moments while instances are mid-flight, reruns, and checks the
// final digests against an uninterrupted run.
func TestKill9RunnerThenRerunCompletes(t *testing.T) {
	years := map[string][]int{"control": {1990, 1991, 1992, 1993}}
	ref := newWorld(t, years)
	os.WriteFile(filepath.Join(ref.dir, "c.yaml"), []byte(fmt.Sprintf(sleepyCampaign, 0)), 0o644)
	want, err := ref.run(filepath.Join(ref.dir, "c.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	trials := 6
	if testing.Short() {
		trials = 2
	}
	for trial := 0; trial < trials; trial++ {
		w := newWorld(t, years)
		f := filepath.Join(w.dir, "c.yaml")
		os.WriteFile(f, []byte(fmt.Sprintf(sleepyCampaign, 150)), 0o644)
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), "SQUALL_TEST_RUNNER="+f)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		// Seeded kill moments from 50 ms to 550 ms: before, during and
		// between instances (each sleeps 150 ms; 2 run at once).
		time.Sleep(time.Duration(50+trial*100) * time.Millisecond)
		cmd.Process.Signal(syscall.SIGKILL)
		cmd.Wait()
		got, err := w.run(f)
		if err != nil {
			t.Fatalf("trial %d: rerun after kill -9: %v", trial, err)
		}
		if fmt.Sprint(digests(got)) != fmt.Sprint(digests(want)) {
			t.Fatalf("trial %d: digests after kill and rerun differ from an uninterrupted run", trial)
		}
	}
}

// A fan-in broadcast into block instances must arrive exactly once.
func TestBroadcastInputArrivesOnce(t *testing.T) {
	w := newWorld(t, map[string][]int{"control": {1990, 1991}})
	f := filepath.Join(w.dir, "b.yaml")
	os.WriteFile(f, []byte(`campaign: broadcast
scenarios:
  control: {files: data/control/*.nc, period: 1990-1991}
stages:
  prep: {kind: concat, inputs: [scenarios]}
  total: {kind: sum, inputs: [prep]}
  apply: {kind: concat, inputs: [prep, total]}
`), 0o644)
	for _, st := range w.plan(f).Steps {
		if st.Stage.Name != "apply" {
			continue
		}
		if len(st.Upstream) != 2 || st.Upstream[0].Stage.Name != "prep" || st.Upstream[1].Stage.Name != "total" {
			var got []string
			for _, u := range st.Upstream {
				got = append(got, u.Label())
			}
			t.Errorf("%s reads %v; want its prep block and total once", st.Label(), got)
		}
	}
}

// A per-block kind that reads the scenarios section must not rerun old
// years when a year is added.
type scenarioReader struct{ concatKind }

func (scenarioReader) Name() string               { return "scenario-reader" }
func (scenarioReader) CampaignSections() []string { return []string{pipeline.SectionScenarios} }

func TestAddingAYearKeepsScenarioReadersOfOtherYears(t *testing.T) {
	reg := testRegistry()
	w := newWorld(t, map[string][]int{"control": {1990, 1991}})
	write := func(period string) *pipeline.Plan {
		f := filepath.Join(w.dir, "s.yaml")
		os.WriteFile(f, []byte("campaign: s\nscenarios:\n  control: {files: data/control/*.nc, period: "+period+"}\nstages:\n  a: {kind: scenario-reader, inputs: [scenarios]}\n"), 0o644)
		c, err := pipeline.Load(f, reg)
		if err != nil {
			t.Fatal(err)
		}
		s, err := cache.Open(c.StoreDir, cache.Options{})
		if err != nil {
			t.Fatal(err)
		}
		defer s.Close()
		p, err := pipeline.NewPlan(c, s)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := pipeline.Execute(context.Background(), p, s, pipeline.RunOptions{Jobs: 1, ChildCommand: childCommand}); err != nil {
			t.Fatal(err)
		}
		return p
	}
	write("1990-1991")
	w.writeData("control", 1992, "control 1992\n")
	p := write("1990-1992")
	for _, st := range p.Steps {
		if want := st.Block == "1992"; (st.Action == pipeline.ActionRun) != want {
			t.Errorf("%s: %s %s", st.Label(), st.Action, st.Reason)
		}
	}
}
