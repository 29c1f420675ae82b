// The suite: every engine passes
// rendering (shape checks, shellcheck-clean output), submission with
// afterok dependencies, a failing job whose dependent is cancelled, states
// of many jobs in one call, cancel, unknown ids, and hostile argv words
// that must reach the command verbatim and never run.
//
// An engine's test calls Run with a Harness. Engines without a real batch
// system here (PBS, LSF) run it against fake submit commands on PATH.

package enginetest

import (
	"context"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/squall-climate/squall/scheduler"
)

// Harness describes the engine under test.
type Harness struct {
	// Profile is a valid profile for the engine (node shape at least 2
	// cores, walltime at least 10 minutes).
	Profile *scheduler.Profile
	// New builds the engine.
	New func(p *scheduler.Profile) scheduler.Engine
	// Timeout bounds each wait for a job to finish (it only turns a hang
	// into a failure; no test asserts how long anything takes).
	Timeout time.Duration
	// NoSubmit skips the cases that submit jobs (render-only runs).
	NoSubmit bool
}

// hostile are words that would run commands or split if they reached bash
// unquoted (the list: $(...), backticks, quotes, semicolons,
// newlines, spaces, leading dashes).
var hostile = []string{
	"$(touch PWNED1)", "`touch PWNED2`", "'; touch PWNED3; '", `"; touch PWNED4; "`,
	"a;touch PWNED5", "line\ntouch PWNED6", "two words", "--rm -rf /", "-n", "$HOME", "${PATH}",
	"*", "~", "a|touch PWNED7", "&& touch PWNED8", "\\", "",
}

// Run runs the suite.
func Run(t *testing.T, h Harness) {
	if h.Timeout == 0 {
		h.Timeout = 60 * time.Second
	}
	t.Run("RenderShape", func(t *testing.T) { testRenderShape(t, h) })
	t.Run("RenderShellcheck", func(t *testing.T) { testRenderShellcheck(t, h) })
	if h.NoSubmit {
		return
	}
	t.Run("Lifecycle", func(t *testing.T) { testLifecycle(t, h) })
	t.Run("Cancel", func(t *testing.T) { testCancel(t, h) })
	t.Run("Hostile", func(t *testing.T) { testHostile(t, h) })
}

func testRenderShape(t *testing.T, h Harness) {
	e := h.New(h.Profile)
	p := h.Profile
	cases := []struct {
		field string
		spec  scheduler.JobSpec
	}{
		{"accelerators per node", scheduler.JobSpec{Name: "x", Argv: []string{"true"}, AcceleratorsPerNode: p.Node.Accelerators + 1}},
		{"walltime", scheduler.JobSpec{Name: "x", Argv: []string{"true"}, Walltime: time.Duration(p.Walltime) + time.Minute}},
		{"cores per node", scheduler.JobSpec{Name: "x", Argv: []string{"true"}, RanksPerNode: p.Node.Cores + 1}},
		{"job name", scheduler.JobSpec{Name: "bad name;x", Argv: []string{"true"}}},
		{"after", scheduler.JobSpec{Name: "x", Argv: []string{"true"}, After: []string{"1;rm"}}},
	}
	for _, c := range cases {
		_, err := e.Render(&c.spec)
		var fe *scheduler.FieldError
		if !errors.As(err, &fe) || fe.Field != c.field {
			t.Errorf("Render with bad %s: got %v, want a FieldError naming %q", c.field, err, c.field)
		}
	}
}

// Specs are representative jobs every engine must render cleanly.
func Specs(dir string) []scheduler.JobSpec {
	return []scheduler.JobSpec{
		{Name: "plain", Argv: []string{"echo", "hello"}, Log: "logs/plain-{job}.out"},
		{Name: "dir-and-env", Dir: dir, Argv: []string{"env"}, Env: []scheduler.EnvVar{{Name: "A_B", Value: "x y"}}},
		{Name: "warned", Argv: []string{"sleep", "1"}, Warning: true, Walltime: 20 * time.Minute},
		{Name: "array", Argv: []string{"printenv", "SQUALL_ARRAY_INDEX"}, Array: 4, ArrayParallel: 2, Log: "logs/a-{job}-{index}.out"},
		{Name: "body", Body: "echo \"$SQUALL_JOB_ID\"\n"},
	}
}

func testRenderShellcheck(t *testing.T, h Harness) {
	e := h.New(h.Profile)
	dir := t.TempDir()
	for _, spec := range Specs(dir) {
		spec := spec
		script, err := e.Render(&spec)
		if err != nil {
			t.Fatalf("Render %s: %v", spec.Name, err)
		}
		ShellCheck(t, spec.Name, script)
		if !strings.HasPrefix(string(script), "#!/bin/bash\n") {
			t.Errorf("%s: script does not start with #!/bin/bash", spec.Name)
		}
	}
}

// ShellCheck runs Debian's shellcheck over a script and fails on any
// finding (all severities); it skips when shellcheck is not installed.
func ShellCheck(t *testing.T, name string, script []byte) {
	t.Helper()
	if _, err := exec.LookPath("shellcheck"); err != nil {
		t.Skip("shellcheck not installed (Debian package shellcheck); CI installs it")
	}
	cmd := exec.Command("shellcheck", "--shell=bash", "--severity=style", "-")
	cmd.Stdin = strings.NewReader(string(script))
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Errorf("shellcheck %s: %v\n%s\n--- script ---\n%s", name, err, out, script)
	}
}

// Wait polls States until every id is final.
func Wait(t *testing.T, e scheduler.Engine, timeout time.Duration, ids ...string) map[string]scheduler.Status {
	t.Helper()
	deadline := time.Now().Add(timeout)
	for {
		st, err := e.States(context.Background(), ids)
		if err != nil {
			t.Fatalf("States: %v", err)
		}
		done := true
		for _, id := range ids {
			if !st[id].State.Done() {
				done = false
			}
		}
		if done {
			return st
		}
		if time.Now().After(deadline) {
			t.Fatalf("jobs not finished after %s: %v", timeout, st)
		}
		time.Sleep(100 * time.Millisecond)
	}
}

func submit(t *testing.T, e scheduler.Engine, dir string, spec scheduler.JobSpec) string {
	t.Helper()
	spec.Dir = dir
	spec.Script = filepath.Join(dir, spec.Name+".sh")
	spec.Log = filepath.Join(dir, spec.Name+".log")
	id, err := e.Submit(context.Background(), &spec)
	if err != nil {
		t.Fatalf("Submit %s: %v", spec.Name, err)
	}
	if err := scheduler.CheckJobID(id); err != nil {
		t.Fatalf("Submit %s returned %v", spec.Name, err)
	}
	return id
}

func testLifecycle(t *testing.T, h Harness) {
	e := h.New(h.Profile)
	dir := t.TempDir()
	a := submit(t, e, dir, scheduler.JobSpec{Name: "first", Argv: []string{"bash", "-c", "echo first >order; echo to-log"}})
	b := submit(t, e, dir, scheduler.JobSpec{Name: "second", After: []string{a}, Argv: []string{"bash", "-c", "cat order >seen; echo second >>order"}})
	f := submit(t, e, dir, scheduler.JobSpec{Name: "failing", Argv: []string{"bash", "-c", "exit 3"}})
	d := submit(t, e, dir, scheduler.JobSpec{Name: "dependent", After: []string{f}, Argv: []string{"touch", "dependent-ran"}})
	st := Wait(t, e, h.Timeout, a, b, f, d)
	if st[a].State != scheduler.Succeeded || st[a].ExitCode != 0 {
		t.Errorf("first: %v, want succeeded exit 0", st[a])
	}
	if st[b].State != scheduler.Succeeded {
		t.Errorf("second (afterok first): %v, want succeeded", st[b])
	}
	if got, _ := os.ReadFile(filepath.Join(dir, "seen")); string(got) != "first\n" {
		t.Errorf("second saw %q in order, want %q: it did not run after first", got, "first\n")
	}
	if log, _ := os.ReadFile(filepath.Join(dir, "first.log")); !strings.Contains(string(log), "to-log") {
		t.Errorf("first.log = %q, want the job's output", log)
	}
	if st[f].State != scheduler.Failed || st[f].ExitCode != 3 {
		t.Errorf("failing: %v, want failed exit 3", st[f])
	}
	if st[d].State != scheduler.Cancelled {
		t.Errorf("dependent of a failed job: %v, want cancelled", st[d])
	}
	if _, err := os.Stat(filepath.Join(dir, "dependent-ran")); err == nil {
		t.Errorf("dependent of a failed job ran")
	}
	// An id the engine never issued is unknown, not an error.
	st2, err := e.States(context.Background(), []string{"987654"})
	if err != nil || st2["987654"].State != scheduler.Unknown {
		t.Errorf("States(unknown id) = %v, %v; want Unknown, nil", st2, err)
	}
}

func testCancel(t *testing.T, h Harness) {
	e := h.New(h.Profile)
	dir := t.TempDir()
	long := submit(t, e, dir, scheduler.JobSpec{Name: "long", Argv: []string{"bash", "-c", "sleep 60; touch long-finished"}})
	waiting := submit(t, e, dir, scheduler.JobSpec{Name: "waiting", After: []string{long}, Argv: []string{"touch", "waiting-ran"}})
	if err := e.Cancel(context.Background(), []string{long}); err != nil {
		t.Fatalf("Cancel: %v", err)
	}
	st := Wait(t, e, h.Timeout, long, waiting)
	if st[long].State != scheduler.Cancelled {
		t.Errorf("cancelled job: %v, want cancelled", st[long])
	}
	if st[waiting].State != scheduler.Cancelled {
		t.Errorf("dependent of a cancelled job: %v, want cancelled", st[waiting])
	}
	for _, f := range []string{"long-finished", "waiting-ran"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err == nil {
			t.Errorf("%s exists: a cancelled job ran to the end", f)
		}
	}
}

// testHostile passes every hostile word as an argument and as an
// environment value: the job must print them back verbatim, and none of
// the commands hidden in them may run.
func testHostile(t *testing.T, h Harness) {
	e := h.New(h.Profile)
	dir := t.TempDir()
	argv := append([]string{"bash", "-c", `printf '%s\0' "$@" >argv.out; printf '%s' "$HOSTILE" >env.out`, "argv0"}, hostile...)
	id := submit(t, e, dir, scheduler.JobSpec{Name: "hostile", Argv: argv,
		Env: []scheduler.EnvVar{{Name: "HOSTILE", Value: strings.Join(hostile, "|")}}})
	st := Wait(t, e, h.Timeout, id)
	if st[id].State != scheduler.Succeeded {
		log, _ := os.ReadFile(filepath.Join(dir, "hostile.log"))
		t.Fatalf("hostile job: %v\n%s", st[id], log)
	}
	got, _ := os.ReadFile(filepath.Join(dir, "argv.out"))
	want := strings.Join(hostile, "\x00") + "\x00"
	if string(got) != want {
		t.Errorf("argv reached the command as %q, want %q", got, want)
	}
	env, _ := os.ReadFile(filepath.Join(dir, "env.out"))
	if string(env) != strings.Join(hostile, "|") {
		t.Errorf("environment value arrived as %q", env)
	}
	matches, _ := filepath.Glob(filepath.Join(dir, "PWNED*"))
	if len(matches) > 0 {
		t.Errorf("hostile values ran commands: %v", matches)
	}
}

// GoldenSpecs are the jobs rendered into each engine's golden files: the
// representative Specs plus a multi-node accelerator job with a warning.
func GoldenSpecs() []scheduler.JobSpec {
	specs := Specs("/scratch/campaign/jobs/run-1")
	return append(specs, scheduler.JobSpec{
		Name: "train-seg1", Nodes: 4, RanksPerNode: 6, CoresPerRank: 7, AcceleratorsPerNode: 6,
		Walltime: 6 * time.Hour, Warning: true, Exclusive: true, Log: "logs/train-{job}.out",
		After: nil, Body: "squall_run srun --ntasks=24 trainer --resume\n",
	})
}

// Golden renders GoldenSpecs with e and compares each script with
// dir/NAME.ext, rewriting the files when update is set. Every golden must
// also pass shellcheck. It returns the rendered scripts by name.
func Golden(t *testing.T, e scheduler.Engine, specs []scheduler.JobSpec, dir, ext string, update bool) map[string][]byte {
	t.Helper()
	out := map[string][]byte{}
	for _, spec := range specs {
		spec := spec
		got, err := e.Render(&spec)
		if err != nil {
			t.Fatalf("Render %s: %v", spec.Name, err)
		}
		out[spec.Name] = got
		path := filepath.Join(dir, spec.Name+ext)
		if update {
			if err := os.MkdirAll(dir, 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, got, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(path)
		if err != nil {
			t.Fatalf("%v (run the test with -update to create it)", err)
		}
		if string(got) != string(want) {
			t.Errorf("%s differs from the golden file (run with -update if the change is intended)\n--- got ---\n%s", path, got)
		}
	}
	files, _ := filepath.Glob(filepath.Join(dir, "*"+ext))
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		ShellCheck(t, f, data)
	}
	return out
}

// GoldenProfile is a rich profile for golden files: setup lines, extra
// directives, a partition and an account, an accelerator node shape.
func GoldenProfile(engine string, directives ...string) *scheduler.Profile {
	p := scheduler.Default()
	p.Engine = engine
	p.Partition = "gpu"
	p.Account = "clim042"
	p.Walltime = scheduler.Duration(12 * time.Hour)
	p.Node = scheduler.Node{Cores: 42, Accelerators: 6, Memory: 512e9, AcceleratorPeakTFLOPS: 125,
		Scratch: scheduler.Scratch{Path: "/mnt/local", Size: 800e9}}
	p.Setup = []string{"module load cuda/12.2", ". /opt/venvs/squall/bin/activate"}
	p.Warning = scheduler.Warning{Signal: "USR1", Lead: scheduler.Duration(10 * time.Minute)}
	p.Directives = directives
	if err := p.Validate(); err != nil {
		panic(err)
	}
	return p
}
