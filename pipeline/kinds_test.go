package pipeline_test

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/squall-climate/squall/pipeline"
)

// Test stage kinds: trivial, deterministic file transformations whose
// outputs are easy to predict, so the engine's semantics can be checked.

type concatKind struct{}

func (concatKind) Name() string               { return "concat" }
func (concatKind) Version() int               { return 1 }
func (concatKind) Doc() string                { return "joins its input files" }
func (concatKind) Fan() pipeline.Fan          { return pipeline.FanBlock }
func (concatKind) CampaignSections() []string { return nil }
func (concatKind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "suffix", Type: pipeline.TypeString, Default: "", Doc: "text appended"},
		{Name: "comment", Type: pipeline.TypeString, Default: "", Doc: "ignored: changes keys, never outputs"},
		{Name: "fail_on", Type: pipeline.TypeString, Default: "", Doc: "fail for this block"},
		{Name: "sleep_ms", Type: pipeline.TypeInt, Unit: "ms", Default: 0, Min: pipeline.Bound(0), Max: pipeline.Bound(60000), Doc: "pause"},
		{Name: "factor", Type: pipeline.TypeFloat, Default: 1.0, Min: pipeline.Bound(0), Sweep: true, Doc: "sweepable"},
		{Name: "extra", Type: pipeline.TypeFiles, Default: "", Doc: "extra files"},
	}
}

func (concatKind) Run(ctx context.Context, job *pipeline.Job) error {
	countChild()
	if ms := job.Settings.Int("sleep_ms"); ms > 0 {
		select {
		case <-time.After(time.Duration(ms) * time.Millisecond):
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	if f := job.Settings.String("fail_on"); f != "" && f == job.Block {
		return fmt.Errorf("asked to fail on block %s", f)
	}
	// A marker file fails an instance without touching its key.
	if _, err := os.Stat(filepath.Join(job.Campaign.Dir, "fail-"+job.Block)); err == nil {
		return fmt.Errorf("asked to fail on block %s", job.Block)
	}
	var b strings.Builder
	for _, in := range job.Inputs {
		for _, f := range in.Files {
			data, err := os.ReadFile(f)
			if err != nil {
				return err
			}
			b.Write(data)
		}
	}
	fmt.Fprintf(&b, "%s x%g\n", job.Settings.String("suffix"), job.Settings.Float("factor"))
	return os.WriteFile(filepath.Join(job.OutDir, "out.txt"), []byte(b.String()), 0o644)
}

type sumKind struct{ fan pipeline.Fan }

func (k sumKind) Name() string {
	if k.fan == pipeline.FanMembers {
		return "gather"
	}
	return "sum"
}
func (sumKind) Version() int                 { return 1 }
func (sumKind) Doc() string                  { return "lists its inputs" }
func (k sumKind) Fan() pipeline.Fan          { return k.fan }
func (sumKind) Settings() []pipeline.Setting { return nil }
func (sumKind) CampaignSections() []string   { return nil }
func (sumKind) Run(ctx context.Context, job *pipeline.Job) error {
	countChild()
	var lines []string
	for _, in := range job.Inputs {
		for _, f := range in.Files {
			data, err := os.ReadFile(f)
			if err != nil {
				return err
			}
			lines = append(lines, fmt.Sprintf("%s/%s/%s/%s: %d bytes", in.From, in.Scenario, in.Block, in.Member, len(data)))
		}
	}
	sort.Strings(lines)
	return os.WriteFile(filepath.Join(job.OutDir, "total.txt"), []byte(strings.Join(lines, "\n")+"\n"), 0o644)
}

func testRegistry() *pipeline.Registry {
	return pipeline.NewRegistry(concatKind{}, sumKind{fan: pipeline.FanCampaign}, sumKind{fan: pipeline.FanMembers}, scenarioReader{})
}

// countChild appends a line to $SQUALL_TEST_COUNT so tests can tell how
// many instances really ran.
func countChild() {
	if p := os.Getenv("SQUALL_TEST_COUNT"); p != "" {
		f, err := os.OpenFile(p, os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o644)
		if err == nil {
			f.WriteString("x\n")
			f.Close()
		}
	}
}

func TestMain(m *testing.M) {
	// The runner re-executes this test binary as the instance child.
	if job := os.Getenv("SQUALL_TEST_JOB"); job != "" {
		if err := pipeline.RunChild(context.Background(), job, testRegistry(), os.Stderr); err != nil {
			fmt.Fprintln(os.Stderr, "error: "+err.Error())
			os.Exit(1)
		}
		os.Exit(0)
	}
	if c := os.Getenv("SQUALL_TEST_RUNNER"); c != "" {
		os.Exit(runnerMain(c))
	}
	os.Exit(m.Run())
}

func childCommand(jobFile string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), "SQUALL_TEST_JOB="+jobFile)
	return cmd
}
