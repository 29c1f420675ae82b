package pipeline_test

// Fault injection on the engine: the runner killed with SIGKILL at seeded
// random moments, and one child killed with SIGKILL while its siblings
// run. Both use the test kinds of kinds_test.go (cheap child processes
// that sleep a little), so many trials fit in a CI run.
//
// Long variant: SQUALL_FAULTS_KILL_TRIALS=500 go test -run Kill9Runner ./pipeline

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/squall-climate/squall/cache"
	"github.com/squall-climate/squall/pipeline"
)

// faultsCampaign has three block instances over two scenarios and a
// fan-in over all of them: small, so that many trials fit in a CI run
// (each instance costs a process start and five fsyncs).
const faultsCampaign = `campaign: faults
scenarios:
  control: {files: data/control/*.nc, period: 1990-1991}
  warm: {files: data/warm/*.nc, period: 2070}
stages:
  prep:
    kind: concat
    inputs: [scenarios]
    settings: {sleep_ms: %d}
  total:
    kind: sum
    inputs: [prep]
`

var faultsYears = map[string][]int{"control": {1990, 1991}, "warm": {2070}}

// faultsWorld writes the raw files and the campaign into a fresh directory.
func faultsWorld(t *testing.T, sleepMS int) string {
	t.Helper()
	dir := t.TempDir()
	for sc, ys := range faultsYears {
		for _, y := range ys {
			p := filepath.Join(dir, "data", sc, fmt.Sprintf("fields_%d.nc", y))
			if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(p, []byte(fmt.Sprintf("%s %d\n", sc, y)), 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	f := filepath.Join(dir, "c.yaml")
	if err := os.WriteFile(f, []byte(fmt.Sprintf(faultsCampaign, sleepMS)), 0o644); err != nil {
		t.Fatal(err)
	}
	return f
}

// faultsRun loads, plans and executes a campaign in this process without
// touching the test's environment, so parallel trials may call it.
func faultsRun(file string, jobs int) (*pipeline.RunRecord, *pipeline.Plan, error) {
	c, err := pipeline.Load(file, testRegistry())
	if err != nil {
		return nil, nil, err
	}
	s, err := cache.Open(c.StoreDir, cache.Options{})
	if err != nil {
		return nil, nil, err
	}
	defer s.Close()
	p, err := pipeline.NewPlan(c, s)
	if err != nil {
		return nil, nil, err
	}
	rec, err := pipeline.Execute(context.Background(), p, s, pipeline.RunOptions{Jobs: jobs, ChildCommand: childCommand})
	return rec, p, err
}

// faultsPlan returns the plan's action and reason per instance label.
func faultsPlan(file string) (map[string]string, error) {
	c, err := pipeline.Load(file, testRegistry())
	if err != nil {
		return nil, err
	}
	s, err := cache.Open(c.StoreDir, cache.Options{})
	if err != nil {
		return nil, err
	}
	defer s.Close()
	p, err := pipeline.NewPlan(c, s)
	if err != nil {
		return nil, err
	}
	return actions(p), nil
}

// faultsVerifyStore re-hashes every output the index records (what
// `squall store check` does) and returns the first problem.
func faultsVerifyStore(storeDir string) error {
	s, err := cache.Open(storeDir, cache.Options{})
	if err != nil {
		return err
	}
	defer s.Close()
	recs, err := s.Records()
	if err != nil {
		return err
	}
	for _, r := range recs {
		if p := s.CheckOutputs(r, true); p != nil {
			return fmt.Errorf("recorded outputs of %s do not verify: %s", r.Instance, p)
		}
	}
	return nil
}

// faultsChildren lists live processes whose environment or command line
// mentions dir: instance children of a run in that directory.
func faultsChildren(dir string) []int {
	var pids []int
	ents, _ := os.ReadDir("/proc")
	for _, e := range ents {
		pid, err := strconv.Atoi(e.Name())
		if err != nil || pid == os.Getpid() {
			continue
		}
		env, _ := os.ReadFile(filepath.Join("/proc", e.Name(), "environ"))
		cmd, _ := os.ReadFile(filepath.Join("/proc", e.Name(), "cmdline"))
		if !bytes.Contains(env, []byte(dir)) && !bytes.Contains(cmd, []byte(dir)) {
			continue
		}
		// A zombie has left its work; only a running process counts.
		st, _ := os.ReadFile(filepath.Join("/proc", e.Name(), "stat"))
		if i := bytes.LastIndexByte(st, ')'); i > 0 && i+2 < len(st) && st[i+2] == 'Z' {
			continue
		}
		pids = append(pids, pid)
	}
	return pids
}

// faultsNoChildren waits (bounded) for the kernel to deliver the parent
// death signal to every child of a killed runner.
func faultsNoChildren(dir string) error {
	var left []int
	for i := 0; i < 200; i++ {
		if left = faultsChildren(dir); len(left) == 0 {
			return nil
		}
		time.Sleep(10 * time.Millisecond)
	}
	return fmt.Errorf("processes of the killed run still alive: %v", left)
}

// TestFaultsKill9RunnerSeededTrials kills the runner with SIGKILL at
// seeded random moments (uniform over the length of an uninterrupted run,
// so before, during and between instances, and around commits), then
// checks that no child survived it, that the store still verifies, that a
// rerun completes, that the final output digests equal those of an
// uninterrupted run, and that a third plan reuses everything.
func TestFaultsKill9RunnerSeededTrials(t *testing.T) {
	trials := 50
	if testing.Short() {
		trials = 12
	}
	if v := os.Getenv("SQUALL_FAULTS_KILL_TRIALS"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 1 {
			t.Fatalf("SQUALL_FAULTS_KILL_TRIALS=%q: want a positive number", v)
		}
		trials = n
	}
	const sleepMS = 15
	// Reference digests: an uninterrupted run (sleep changes keys, never
	// outputs, so the digests are comparable).
	want, _, err := faultsRun(faultsWorld(t, 0), 2)
	if err != nil {
		t.Fatal(err)
	}
	// Length of an uninterrupted runner process (median of three), to
	// spread kill moments over it. Measured, never asserted.
	var spans []time.Duration
	for i := 0; i < 3; i++ {
		probe := faultsWorld(t, sleepMS)
		t0 := time.Now()
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), "SQUALL_TEST_RUNNER="+probe)
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("uninterrupted runner: %v\n%s", err, out)
		}
		spans = append(spans, time.Since(t0))
	}
	slices.Sort(spans)
	// Two trials run at once, so each runs a little slower than the probe.
	span := spans[1] * 13 / 10
	seed := uint64(20240917)
	t.Logf("%d trials, kill moments uniform in [0, %v], seed %d", trials, span, seed)
	// What the kills hit, for the log: instances the rerun could reuse,
	// and work directories the killed runner left in tmp/.
	var mu sync.Mutex
	reusedHist := map[int]int{}
	leftTmp, leftAfter := 0, 0
	t.Cleanup(func() {
		t.Logf("instances reused by the rerun after a kill (count: trials): %v; trials leaving work directories in tmp/: %d; still there after the rerun: %d", reusedHist, leftTmp, leftAfter)
	})
	for trial := 0; trial < trials; trial++ {
		rng := rand.New(rand.NewPCG(seed, uint64(trial)))
		delay := time.Duration(rng.Int64N(int64(span)))
		t.Run(fmt.Sprintf("trial%03d", trial), func(t *testing.T) {
			t.Parallel() // two at a time on two cores
			f := faultsWorld(t, sleepMS)
			dir := filepath.Dir(f)
			cmd := exec.Command(os.Args[0], "-test.run=^$")
			cmd.Env = append(os.Environ(), "SQUALL_TEST_RUNNER="+f)
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			time.Sleep(delay)
			cmd.Process.Signal(syscall.SIGKILL)
			cmd.Wait()
			if err := faultsNoChildren(dir); err != nil {
				t.Fatalf("kill at %v: %v", delay, err)
			}
			if _, err := os.Stat(filepath.Join(dir, ".squall", "index.db")); err == nil {
				if err := faultsVerifyStore(filepath.Join(dir, ".squall")); err != nil {
					t.Fatalf("kill at %v: store after the kill: %v", delay, err)
				}
			}
			stale, _ := filepath.Glob(filepath.Join(dir, ".squall", "tmp", "*"))
			got, _, err := faultsRun(f, 2)
			if err != nil {
				t.Fatalf("kill at %v: rerun: %v", delay, err)
			}
			after, _ := filepath.Glob(filepath.Join(dir, ".squall", "tmp", "*"))
			mu.Lock()
			leftAfter += len(after)
			reusedHist[got.Counts[pipeline.StateReused]]++
			if len(stale) > 0 {
				leftTmp++
			}
			mu.Unlock()
			if fmt.Sprint(digests(got)) != fmt.Sprint(digests(want)) {
				t.Fatalf("kill at %v: digests after kill and rerun\n%v\ndiffer from an uninterrupted run\n%v", delay, digests(got), digests(want))
			}
			if err := faultsVerifyStore(filepath.Join(dir, ".squall")); err != nil {
				t.Fatalf("kill at %v: store after the rerun: %v", delay, err)
			}
			acts, err := faultsPlan(f)
			if err != nil {
				t.Fatal(err)
			}
			for label, a := range acts {
				if !strings.HasPrefix(a, "reuse") {
					t.Errorf("kill at %v: after the rerun %s: %s; want reuse", delay, label, a)
				}
			}
		})
	}
}

// TestFaultsKill9OneChild kills one instance's child process with SIGKILL
// (found by the job file in the store's tmp/): that instance fails with
// "killed by signal", its siblings finish, the fan-in is blocked, and the
// next run redoes only the killed instance and the fan-in.
func TestFaultsKill9OneChild(t *testing.T) {
	dir := t.TempDir()
	for _, y := range []int{1990, 1991, 1992} {
		p := filepath.Join(dir, "data", fmt.Sprintf("fields_%d.nc", y))
		os.MkdirAll(filepath.Dir(p), 0o755)
		os.WriteFile(p, []byte(fmt.Sprint(y)), 0o644)
	}
	f := filepath.Join(dir, "c.yaml")
	os.WriteFile(f, []byte(`campaign: child-kill
scenarios:
  control: {files: data/*.nc, period: 1990-1992}
stages:
  prep: {kind: concat, inputs: [scenarios], settings: {sleep_ms: 1500}}
  total: {kind: sum, inputs: [prep]}
`), 0o644)
	type outcome struct {
		rec *pipeline.RunRecord
		err error
	}
	done := make(chan outcome, 1)
	go func() {
		rec, _, err := faultsRun(f, 3)
		done <- outcome{rec, err}
	}()
	// Find the child of block 1991 by its job file.
	tmp := filepath.Join(dir, ".squall", "tmp")
	victim := 0
	for i := 0; i < 500 && victim == 0; i++ {
		jobs, _ := filepath.Glob(filepath.Join(tmp, "prep-*", "job.json"))
		for _, jf := range jobs {
			b, err := os.ReadFile(jf)
			var job pipeline.Job
			if err != nil || json.Unmarshal(b, &job) != nil || job.Block != "1991" {
				continue
			}
			for _, pid := range faultsChildren(jf) {
				victim = pid
			}
		}
		if victim == 0 {
			time.Sleep(10 * time.Millisecond)
		}
	}
	if victim == 0 {
		t.Fatal("no child process found for block 1991")
	}
	if err := syscall.Kill(victim, syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	o := <-done
	var sf *pipeline.StageFailedError
	if !errors.As(o.err, &sf) {
		t.Fatalf("run error %v; want a StageFailedError", o.err)
	}
	states := map[string]pipeline.InstanceRecord{}
	for _, in := range o.rec.Instances {
		states[in.Label] = in
	}
	v := states["prep[control/1991]"]
	if v.State != pipeline.StateFailed || !strings.Contains(v.Error, "instance process killed by signal killed") {
		t.Errorf("killed instance: state %s, error %q; want failed, killed by signal", v.State, v.Error)
	}
	for _, l := range []string{"prep[control/1990]", "prep[control/1992]"} {
		if states[l].State != pipeline.StateRan {
			t.Errorf("%s: %s; siblings of a killed child must finish", l, states[l].State)
		}
	}
	if states["total"].State != pipeline.StateBlocked {
		t.Errorf("fan-in: %s; want blocked", states["total"].State)
	}
	if m, _ := filepath.Glob(filepath.Join(tmp, "*")); len(m) != 0 {
		t.Errorf("work directories left after the run: %v", m)
	}
	acts, err := faultsPlan(f)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]string{
		"prep[control/1990]": "reuse", "prep[control/1992]": "reuse",
		"prep[control/1991]": "run: failed last time", "total": "run",
	}
	for l, w := range want {
		if !strings.HasPrefix(acts[l], w) {
			t.Errorf("next plan %s: %q; want %q", l, acts[l], w)
		}
	}
	rec, _, err := faultsRun(f, 3)
	if err != nil {
		t.Fatalf("rerun: %v", err)
	}
	if rec.Counts[pipeline.StateRan] != 2 || rec.Counts[pipeline.StateReused] != 2 {
		t.Fatalf("rerun counts %v; want 2 ran (the killed one and the fan-in), 2 reused", rec.Counts)
	}
}
