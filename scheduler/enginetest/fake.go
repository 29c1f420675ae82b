package enginetest

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/local"
)

// Fake is a stand-in batch system for engines that have no real one here
// (PBS, LSF): the engine's test binary doubles as the fake qsub/bsub,
// qstat/bjobs and qdel/bkill (dispatching on os.Args[0] in TestMain), and
// each command translates its arguments onto the local engine, which runs
// the engine's own rendered script with bash. Dependencies, failures,
// cancellation and exit codes therefore behave as the suite expects, and
// the fake commands check the arguments and directives they receive.
type Fake struct {
	e *local.Engine
}

// FakeStateEnv names the variable holding the fake's state directory.
const FakeStateEnv = "SQUALL_FAKE_SCHEDULER_STATE"

// OpenFake returns the fake for the current process (a fake command).
func OpenFake() *Fake {
	p := scheduler.Default()
	p.Engine = "local"
	p.Walltime = scheduler.Duration(24 * time.Hour)
	p.Node.Cores = 1 << 10
	p.Node.Accelerators = 1 << 10
	p.StateDir = os.Getenv(FakeStateEnv)
	if err := p.Validate(); err != nil {
		panic(err)
	}
	return &Fake{e: local.New(p)}
}

// InstallFake puts links named by commands, pointing at the running test
// binary, first on PATH, and gives the fake a fresh state directory.
func InstallFake(t *testing.T, commands ...string) {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	bin := t.TempDir()
	for _, c := range commands {
		if err := os.Symlink(exe, filepath.Join(bin, c)); err != nil {
			t.Fatal(err)
		}
	}
	t.Setenv("PATH", bin+string(os.PathListSeparator)+os.Getenv("PATH"))
	t.Setenv(FakeStateEnv, t.TempDir())
}

// Submit runs script (a file the engine rendered) after the jobs numbered
// in after, logging to log in dir; it returns the fake's job number.
func (f *Fake) Submit(script string, after []string, log, dir string) (string, error) {
	tmp, err := os.CreateTemp(f.e.StateDir(), "wrap-*.sh")
	if err != nil {
		return "", err
	}
	tmp.Close()
	deps := make([]string, len(after))
	for i, a := range after {
		deps[i] = "local-" + a
	}
	if dir == "" {
		dir, _ = os.Getwd()
	}
	id, err := f.e.Submit(context.Background(), &scheduler.JobSpec{
		Name: "fake", Script: tmp.Name(), Dir: dir, Log: log, After: deps,
		Argv: []string{"bash", script},
	})
	return strings.TrimPrefix(id, "local-"), err
}

// States reports by fake job number.
func (f *Fake) States(ns []string) (map[string]scheduler.Status, error) {
	ids := make([]string, len(ns))
	for i, n := range ns {
		ids[i] = "local-" + n
	}
	st, err := f.e.States(context.Background(), ids)
	out := map[string]scheduler.Status{}
	for i, n := range ns {
		out[n] = st[ids[i]]
	}
	return out, err
}

// Cancel cancels by fake job number.
func (f *Fake) Cancel(ns []string) error {
	ids := make([]string, len(ns))
	for i, n := range ns {
		ids[i] = "local-" + n
	}
	return f.e.Cancel(context.Background(), ids)
}
