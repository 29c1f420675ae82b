package slurm_test

import (
	"context"
	"flag"
	"os/exec"
	"path/filepath"
	"strings"
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

var update = flag.Bool("update", false, "rewrite golden files")

func TestGolden(t *testing.T) {
	e := slurm.New(enginetest.GoldenProfile("slurm", "--constraint=gpu", "--qos=normal"))
	s := enginetest.Golden(t, e, enginetest.GoldenSpecs(), filepath.Join("testdata", "golden"), ".sbatch", *update)
	// sbatch option spellings from the sbatch manual page.
	for _, want := range []string{"#SBATCH --nodes=4\n", "#SBATCH --ntasks-per-node=6\n", "#SBATCH --gpus-per-node=6\n",
		"#SBATCH --time=06:00:00\n", "#SBATCH --signal=B:USR1@600\n", "#SBATCH --exclusive\n", "#SBATCH --output=logs/train-%j.out\n"} {
		if !strings.Contains(string(s["train-seg1"]), want) {
			t.Errorf("train-seg1 lacks %q", want)
		}
	}
	if !strings.Contains(string(s["array"]), "#SBATCH --array=0-3%2\n") {
		t.Errorf("array job lacks --array=0-3%%2")
	}
}

func TestBadDirective(t *testing.T) {
	p := enginetest.GoldenProfile("slurm", "constraint=gpu")
	_, err := slurm.New(p).Render(&scheduler.JobSpec{Name: "x", Argv: []string{"true"}})
	if err == nil || !strings.Contains(err.Error(), "directives[0]") {
		t.Errorf("Render with a directive that is not an option: %v, want an error naming directives[0]", err)
	}
}
