package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/squall-climate/squall/pipeline"
)

// A trivial kind for command-line tests: copies its inputs, optionally slowly.
type copyKind struct{}

func (copyKind) Name() string               { return "copy" }
func (copyKind) Version() int               { return 1 }
func (copyKind) Doc() string                { return "copies its inputs" }
func (copyKind) Fan() pipeline.Fan          { return pipeline.FanBlock }
func (copyKind) CampaignSections() []string { return nil }
func (copyKind) Settings() []pipeline.Setting {
	return []pipeline.Setting{{Name: "sleep_ms", Type: pipeline.TypeInt, Unit: "ms", Default: 0, Min: pipeline.Bound(0), Doc: "pause"}}
}
func (copyKind) Run(ctx context.Context, job *pipeline.Job) error {
	if ms := job.Settings.Int("sleep_ms"); ms > 0 {
		select {
		case <-time.After(time.Duration(ms) * time.Millisecond):
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	if _, err := os.Stat(filepath.Join(job.Campaign.Dir, "fail-"+job.Block)); err == nil {
		return fmt.Errorf("marker asks block %s to fail", job.Block)
	}
	var b bytes.Buffer
	for _, in := range job.Inputs {
		for _, f := range in.Files {
			d, err := os.ReadFile(f)
			if err != nil {
				return err
			}
			b.Write(d)
		}
	}
	return os.WriteFile(filepath.Join(job.OutDir, "copy.txt"), b.Bytes(), 0o644)
}

func testEnv(out, errw *bytes.Buffer) *env {
	return &env{stdout: out, stderr: errw, registry: pipeline.NewRegistry(copyKind{})}
}

// The runner re-executes os.Executable() with "exec-instance"; under `go
// test` that is this test binary, so TestMain plays squall's main.
func TestMain(m *testing.M) {
	if len(os.Args) > 1 && (os.Args[1] == "exec-instance" || os.Getenv("SQUALL_CLI_MAIN") == "1") {
		ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
		e := &env{stdout: os.Stdout, stderr: os.Stderr, registry: pipeline.NewRegistry(copyKind{})}
		code := execute(ctx, e, os.Args[1:])
		stop()
		os.Exit(code)
	}
	os.Exit(m.Run())
}

func campaignDir(t *testing.T, sleepMS int) string {
	dir := t.TempDir()
	for _, y := range []int{2001, 2002} {
		p := filepath.Join(dir, "data", fmt.Sprintf("f_%d.nc", y))
		os.MkdirAll(filepath.Dir(p), 0o755)
		os.WriteFile(p, []byte(fmt.Sprint(y)), 0o644)
	}
	c := fmt.Sprintf(`campaign: cli
scenarios:
  base: {files: data/*.nc, period: 2001-2002}
stages:
  copy:
    kind: copy
    inputs: [scenarios]
    settings: {sleep_ms: %d}
`, sleepMS)
	os.WriteFile(filepath.Join(dir, "c.yaml"), []byte(c), 0o644)
	return filepath.Join(dir, "c.yaml")
}

func run(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errw bytes.Buffer
	code := execute(context.Background(), testEnv(&out, &errw), args)
	return code, out.String(), errw.String()
}

func TestPlanJSONRunStatusAndExitCodes(t *testing.T) {
	f := campaignDir(t, 0)
	code, out, _ := run(t, "plan", "--json", f)
	if code != exitOK {
		t.Fatalf("plan exit %d", code)
	}
	var plan struct {
		Instances []map[string]string `json:"instances"`
	}
	if err := json.Unmarshal([]byte(out), &plan); err != nil {
		t.Fatalf("plan --json is not one JSON object: %v\n%s", err, out)
	}
	if len(plan.Instances) != 2 || plan.Instances[0]["action"] != "run" || plan.Instances[0]["reason"] != "never run" ||
		plan.Instances[0]["stage"] != "copy" || plan.Instances[0]["scenario"] != "base" || plan.Instances[0]["block"] != "2001" {
		t.Fatalf("plan: %+v", plan.Instances)
	}
	code, out, errs := run(t, "run", "--report", "-", f)
	if code != exitOK {
		t.Fatalf("run exit %d: %s %s", code, out, errs)
	}
	if !strings.Contains(out, "ok: 2 ran, 0 reused") {
		t.Fatalf("run summary: %s", out)
	}
	code, out, _ = run(t, "run", "--report", "-", f)
	if code != exitOK || !strings.Contains(out, "0 ran, 2 reused") {
		t.Fatalf("rerun: %d %s", code, out)
	}
	code, out, _ = run(t, "status", f)
	if code != exitOK || !strings.Contains(out, "copy[base/2001]") || !strings.Contains(out, "reused") {
		t.Fatalf("status: %d %s", code, out)
	}
	// A failing instance: exit code 3, status shows its error output.
	os.WriteFile(filepath.Join(filepath.Dir(f), "fail-2002"), nil, 0o644)
	os.WriteFile(filepath.Join(filepath.Dir(f), "data", "f_2002.nc"), []byte("changed"), 0o644)
	code, _, _ = run(t, "run", "--report", "-", f)
	if code != exitStageFailed {
		t.Fatalf("failing run exit %d, want %d", code, exitStageFailed)
	}
	_, out, _ = run(t, "status", f)
	if !strings.Contains(out, "copy[base/2002] failed") || !strings.Contains(out, "marker asks block 2002 to fail") {
		t.Fatalf("status after failure lacks the error:\n%s", out)
	}
	// An invalid campaign: exit code 2.
	bad := filepath.Join(filepath.Dir(f), "bad.yaml")
	os.WriteFile(bad, []byte("campaign: x\nscenarioz: {}\n"), 0o644)
	if code, _, errs := run(t, "plan", bad); code != exitInvalid || !strings.Contains(errs, `did you mean "scenarios"?`) {
		t.Fatalf("invalid campaign: exit %d, %s", code, errs)
	}
	if code, _, _ := run(t, "plan"); code != exitInvalid {
		t.Fatalf("missing argument: exit %d, want %d", code, exitInvalid)
	}
}

func TestSecondRunIsRefusedWithTheHolder(t *testing.T) {
	f := campaignDir(t, 3000)
	cmd := exec.Command(os.Args[0], "run", "-j", "1", "--report", "-", f)
	cmd.Env = append(os.Environ(), "SQUALL_CLI_MAIN=1")
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer func() { cmd.Process.Kill(); cmd.Wait() }()
	// Wait until the first run owns the store.
	owner := filepath.Join(filepath.Dir(f), ".squall", "owner.json")
	for i := 0; i < 200; i++ {
		if _, err := os.Stat(owner); err == nil {
			break
		}
		time.Sleep(25 * time.Millisecond)
	}
	code, _, errs := run(t, "run", "--report", "-", f)
	if code != exitLocked {
		t.Fatalf("second run exit %d, want %d: %s", code, exitLocked, errs)
	}
	if !strings.Contains(errs, fmt.Sprintf("process %d", cmd.Process.Pid)) {
		t.Fatalf("refusal does not name the holder %d: %s", cmd.Process.Pid, errs)
	}
}

func TestInterruptStopsChildrenAndExits130(t *testing.T) {
	f := campaignDir(t, 20000)
	cmd := exec.Command(os.Args[0], "run", "-j", "2", "--report", "-", f)
	cmd.Env = append(os.Environ(), "SQUALL_CLI_MAIN=1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	tmp := filepath.Join(filepath.Dir(f), ".squall", "tmp")
	for i := 0; i < 400; i++ {
		if m, _ := filepath.Glob(filepath.Join(tmp, "copy-*", "job.json")); len(m) == 2 {
			break
		}
		time.Sleep(25 * time.Millisecond)
	}
	cmd.Process.Signal(os.Interrupt)
	err := cmd.Wait()
	ee, ok := err.(*exec.ExitError)
	if !ok || ee.ExitCode() != exitInterrupted {
		t.Fatalf("interrupted run: %v, want exit %d; stderr %s", err, exitInterrupted, stderr.String())
	}
	// No work directory or child is left behind, and a rerun completes.
	if m, _ := filepath.Glob(filepath.Join(tmp, "*")); len(m) != 0 {
		t.Fatalf("work directories left after interrupt: %v", m)
	}
	rec, err := pipeline.LastRunRecord(filepath.Join(filepath.Dir(f), ".squall"))
	if err != nil || rec.Status != "interrupted" {
		t.Fatalf("run record after interrupt: %v %+v", err, rec)
	}
}

func TestKindsAndGraph(t *testing.T) {
	code, out, _ := run(t, "kinds")
	if code != exitOK || !strings.Contains(out, "sleep_ms") || !strings.Contains(out, "ms") {
		t.Fatalf("kinds: %s", out)
	}
	code, out, _ = run(t, "graph", campaignDir(t, 0))
	if code != exitOK || !strings.Contains(out, `"scenario:base" -> "copy"`) {
		t.Fatalf("graph: %s", out)
	}
}

func TestRunJSONLinesAreMachineReadable(t *testing.T) {
	f := campaignDir(t, 0)
	code, out, _ := run(t, "run", "--json", "--report", "-", f)
	if code != exitOK {
		t.Fatalf("run --json exit %d", code)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	var starts, finishes int
	for _, l := range lines {
		var m map[string]any
		if err := json.Unmarshal([]byte(l), &m); err != nil {
			t.Fatalf("not a JSON line: %q", l)
		}
		switch m["type"] {
		case "start":
			starts++
		case "finish":
			finishes++
			if m["state"] != "ran" || m["total"].(float64) != 2 {
				t.Errorf("finish line %v", m)
			}
		case "summary":
			if m["status"] != "ok" {
				t.Errorf("summary %v", m)
			}
		default:
			t.Errorf("unknown line type in %v", m)
		}
	}
	if starts != 2 || finishes != 2 || !strings.Contains(lines[len(lines)-1], `"type":"summary"`) {
		t.Fatalf("%d starts, %d finishes, last line %s", starts, finishes, lines[len(lines)-1])
	}
}
