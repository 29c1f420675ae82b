package slurm_test

import (
	"context"
	"os/exec"
	"path/filepath"
	"testing"
	"time"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/enginetest"
	"github.com/squall-climate/squall/scheduler/slurm"
)

func profile(t *testing.T) *scheduler.Profile {
	p := scheduler.Default()
	p.Engine = "slurm"
	p.Walltime = scheduler.Duration(time.Hour)
	p.Node.Cores = 2
	p.Node.Accelerators = 0
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	return p
}

// needSlurm skips unless a controller answers.
func needSlurm(t *testing.T) {
	t.Helper()
	if _, err := exec.LookPath("sinfo"); err != nil {
		t.Skip("no sinfo on PATH: install slurm-wlm and start a cluster with .ci/slurm-up.sh")
	}
	out, err := exec.Command("sinfo", "-h", "-o", "%T").CombinedOutput()
	if err != nil {
		t.Skipf("sinfo cannot reach a Slurm controller (%v: %s); start one with .ci/slurm-up.sh", err, out)
	}
}

func TestRenderConformance(t *testing.T) {
	enginetest.Run(t, enginetest.Harness{
		Profile:  profile(t),
		New:      func(p *scheduler.Profile) scheduler.Engine { return slurm.New(p) },
		NoSubmit: true,
	})
}

// TestCluster runs the whole suite against the real controller started by
// .ci/slurm-up.sh: a job, an afterok chain, a failing job whose dependent
// is cancelled (DependencyNeverSatisfied), cancel, hostile argv.
func TestCluster(t *testing.T) {
	needSlurm(t)
	enginetest.Run(t, enginetest.Harness{
		Profile: profile(t),
		New:     func(p *scheduler.Profile) scheduler.Engine { return slurm.New(p) },
		Timeout: 90 * time.Second,
	})
}

// TestDependencyReason checks the reason Slurm gives for the dependent of a
// failed job, which the coordinator shows to people.
func TestDependencyReason(t *testing.T) {
	needSlurm(t)
	e := slurm.New(profile(t))
	dir := t.TempDir()
	ctx := context.Background()
	sub := func(name string, after []string, argv ...string) string {
		id, err := e.Submit(ctx, &scheduler.JobSpec{Name: name, Dir: dir, Script: filepath.Join(dir, name+".sh"),
			Log: filepath.Join(dir, name+".log"), After: after, Argv: argv})
		if err != nil {
			t.Fatal(err)
		}
		return id
	}
	f := sub("fails", nil, "false")
	d := sub("never", []string{f}, "true")
	st := enginetest.Wait(t, e, 90*time.Second, f, d)
	// Slurm's reason word for a dependency that can no longer be met
	// (squeue/scontrol documentation, "DependencyNeverSatisfied").
	if st[d].State != scheduler.Cancelled || st[d].Reason != "DependencyNeverSatisfied" {
		t.Errorf("dependent: %v, want cancelled (DependencyNeverSatisfied)", st[d])
	}
	if st[f].ExitCode != 1 {
		t.Errorf("failing job exit code %d, want 1 (false(1))", st[f].ExitCode)
	}
}
