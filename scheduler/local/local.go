// Package local is the engine for one machine without a batch system: a
// job is a detached bash runner that waits for its dependencies, runs the
// job script and records the outcome in a state directory. Records are
// plain files, so a coordinator that restarts finds its jobs again, and
// States costs one directory read per job, no process.
//
// State directory layout (one set per job id "local-N"):
//
//	next          the id counter (guarded by flock)
//	N.run         the runner script
//	N.status      "STATE REASON EXIT", replaced atomically (rename)
//	N.pid         the runner's process id (= its process group)
//	N.cancel      present when a cancel was asked for
//
// Array tasks run one after another, each with SQUALL_LOCAL_ARRAY_INDEX
// set; the job fails if any task fails. The warning signal is delivered by
// a timer the job script arms itself, as on PBS.
package local

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"

	"github.com/squall-climate/squall/scheduler"
)

// Engine runs jobs on this machine.
type Engine struct {
	p     *scheduler.Profile
	state string
}

var _ scheduler.Engine = (*Engine)(nil)

// New returns a local engine keeping its records in p.StateDir, or in a
// per-user directory under the system's temporary directory.
func New(p *scheduler.Profile) *Engine {
	dir := p.StateDir
	if dir == "" {
		dir = filepath.Join(os.TempDir(), fmt.Sprintf("squall-local-%d", os.Getuid()))
	}
	return &Engine{p: p, state: dir}
}

// Name is "local".
func (e *Engine) Name() string { return "local" }

// StateDir is where job records live.
func (e *Engine) StateDir() string { return e.state }

// Dialect returns the job variables; local scripts carry their shape as
// comments only.
func (e *Engine) Dialect(spec *scheduler.JobSpec, s scheduler.Shape) scheduler.Dialect {
	d := scheduler.Dialect{
		JobID:      `"${SQUALL_LOCAL_JOB_ID:-local}"`,
		SubmitDir:  `"${SQUALL_LOCAL_SUBMIT_DIR:-$PWD}"`,
		ArrayIndex: `"${SQUALL_LOCAL_ARRAY_INDEX:?not an array task}"`,
	}
	d.Directives = append(d.Directives,
		fmt.Sprintf("# squall local job %s: %d node(s) x %d rank(s), %d core(s) per rank, walltime %s",
			spec.Name, s.Nodes, s.RanksPerNode, s.CoresPerRank, s.Walltime.Clock()))
	if spec.Array > 0 {
		d.Directives = append(d.Directives, fmt.Sprintf("# array of %d tasks, run one after another", spec.Array))
	}
	return d
}

// Render returns the job script.
func (e *Engine) Render(spec *scheduler.JobSpec) ([]byte, error) {
	s, err := scheduler.CheckJob(e.p, spec)
	if err != nil {
		return nil, err
	}
	if s.Nodes > 1 {
		return nil, &scheduler.FieldError{Field: "nodes", Value: strconv.Itoa(s.Nodes), Msg: "the local engine runs on one machine", Hint: "use 1 node, or a profile for a cluster"}
	}
	return scheduler.RenderScript(e.p, e.Dialect(spec, s), spec, s), nil
}

// Submit writes the script and a runner, and starts the runner detached.
func (e *Engine) Submit(ctx context.Context, spec *scheduler.JobSpec) (string, error) {
	script, err := e.Render(spec)
	if err != nil {
		return "", err
	}
	if err := os.WriteFile(spec.Script, script, 0o755); err != nil {
		return "", fmt.Errorf("local submit: %w", err)
	}
	if err := os.MkdirAll(e.state, 0o755); err != nil {
		return "", fmt.Errorf("local submit: %w", err)
	}
	n, err := e.nextID()
	if err != nil {
		return "", err
	}
	id := fmt.Sprintf("local-%d", n)
	submitDir, _ := os.Getwd()
	if err := e.writeStatus(id, "pending", "", -1); err != nil {
		return "", err
	}
	runner := e.runner(id, spec, submitDir)
	runPath := e.path(id, "run")
	if err := os.WriteFile(runPath, []byte(runner), 0o755); err != nil {
		return "", fmt.Errorf("local submit: %w", err)
	}
	cmd := exec.Command("bash", runPath)
	cmd.SysProcAttr = &syscall.SysProcAttr{Setsid: true}
	cmd.Dir = e.state
	if err := cmd.Start(); err != nil {
		return "", &scheduler.EngineError{Engine: "local", Op: "submit", Argv: []string{"bash", runPath}, Err: err}
	}
	go cmd.Wait() // reap; the runner outlives us if we exit first
	return id, nil
}

func (e *Engine) path(id, ext string) string {
	return filepath.Join(e.state, strings.TrimPrefix(id, "local-")+"."+ext)
}

// nextID increments the counter under an exclusive file lock so that two
// coordinators (or a test and a coordinator) never share an id.
func (e *Engine) nextID() (int, error) {
	f, err := os.OpenFile(filepath.Join(e.state, "next"), os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return 0, fmt.Errorf("local submit: %w", err)
	}
	defer f.Close()
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX); err != nil {
		return 0, fmt.Errorf("local submit: lock id counter: %w", err)
	}
	buf := make([]byte, 32)
	k, _ := f.ReadAt(buf, 0)
	n, _ := strconv.Atoi(strings.TrimSpace(string(buf[:k])))
	n++
	if err := f.Truncate(0); err != nil {
		return 0, err
	}
	if _, err := f.WriteAt([]byte(strconv.Itoa(n)+"\n"), 0); err != nil {
		return 0, err
	}
	return n, nil
}

func (e *Engine) writeStatus(id, state, reason string, exit int) error {
	if reason == "" {
		reason = "-"
	}
	tmp := e.path(id, "status.tmp")
	if err := os.WriteFile(tmp, []byte(fmt.Sprintf("%s %s %d\n", state, reason, exit)), 0o644); err != nil {
		return err
	}
	return os.Rename(tmp, e.path(id, "status"))
}

// runner is the bash program that waits for dependencies, runs the job
// script (each array task in turn) and records the outcome. Every value in
// it is quoted; the ids were checked by CheckJob.
func (e *Engine) runner(id string, spec *scheduler.JobSpec, submitDir string) string {
	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	n := strings.TrimPrefix(id, "local-")
	w("#!/bin/bash")
	w("# squall local runner for job %s", id)
	w("set -u")
	w("state=%s", scheduler.Quote(e.state))
	w("echo $$ >\"$state/%s.pid\"", n)
	w(`status() { printf '%%s %%s %%s\n' "$1" "$2" "$3" >"$state/%s.status.tmp" && mv -f -- "$state/%s.status.tmp" "$state/%s.status"; }`, n, n, n)
	w(`trap 'status cancelled CancelledByUser -1; exit 143' TERM`)
	w("cancelled() { [[ -e \"$state/%s.cancel\" ]]; }", n)
	for _, dep := range spec.After {
		dn := strings.TrimPrefix(dep, "local-")
		w("while :; do")
		w("\tif cancelled; then status cancelled CancelledByUser -1; exit 0; fi")
		w("\tif [[ ! -e \"$state/%s.status\" ]]; then status cancelled DependencyNeverSatisfied -1; exit 0; fi", dn)
		w("\tread -r st _ _ <\"$state/%s.status\" || st=pending", dn)
		w("\tcase $st in")
		w("\tsucceeded) break ;;")
		w("\tfailed | cancelled) status cancelled DependencyNeverSatisfied -1; exit 0 ;;")
		w("\tesac")
		w("\tsleep 0.05")
		w("done")
	}
	w("if cancelled; then status cancelled CancelledByUser -1; exit 0; fi")
	w("status running - -1")
	w("export SQUALL_LOCAL_JOB_ID=%s SQUALL_LOCAL_SUBMIT_DIR=%s", scheduler.Quote(id), scheduler.Quote(submitDir))
	dir := spec.Dir
	if dir == "" {
		dir = submitDir
	}
	w("cd -- %s || { status failed NoWorkingDirectory 1; exit 0; }", scheduler.Quote(dir))
	logWord := func(index string) string {
		if spec.Log == "" {
			return "/dev/null"
		}
		l := strings.ReplaceAll(spec.Log, "{job}", id)
		parts := strings.Split(l, "{index}")
		q := make([]string, len(parts))
		for i, p := range parts {
			if p != "" {
				q[i] = scheduler.Quote(p)
			}
		}
		return strings.Join(q, index)
	}
	if spec.Array > 0 {
		w("rc=0")
		w("for ((i = 0; i < %d; i++)); do", spec.Array)
		w("\tif cancelled; then status cancelled CancelledByUser -1; exit 0; fi")
		w("\tSQUALL_LOCAL_ARRAY_INDEX=$i bash %s >>%s 2>&1 </dev/null || rc=$?", scheduler.Quote(spec.Script), logWord(`"$i"`))
		w("done")
	} else {
		w("rc=0")
		w("bash %s >>%s 2>&1 </dev/null || rc=$?", scheduler.Quote(spec.Script), logWord(""))
	}
	w("if ((rc == 0)); then status succeeded - 0; else status failed NonZeroExitCode \"$rc\"; fi")
	return b.String()
}

// States reads each job's status file.
func (e *Engine) States(ctx context.Context, ids []string) (map[string]scheduler.Status, error) {
	out := map[string]scheduler.Status{}
	for _, id := range ids {
		if err := scheduler.CheckJobID(id); err != nil {
			return nil, err
		}
		st := scheduler.Status{ID: id, State: scheduler.Unknown, ExitCode: -1}
		data, err := os.ReadFile(e.path(id, "status"))
		if err == nil {
			f := strings.Fields(string(data))
			if len(f) == 3 {
				st.State, st.Raw = scheduler.State(f[0]), f[0]
				if f[1] != "-" {
					st.Reason = f[1]
				}
				st.ExitCode, _ = strconv.Atoi(f[2])
			}
		} else if !errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("local states: %w", err)
		}
		out[id] = st
	}
	return out, nil
}

// Cancel marks the jobs cancelled and stops running ones (their whole
// process group: the runner was started in a session of its own).
func (e *Engine) Cancel(ctx context.Context, ids []string) error {
	for _, id := range ids {
		if err := scheduler.CheckJobID(id); err != nil {
			return err
		}
		if err := os.WriteFile(e.path(id, "cancel"), nil, 0o644); err != nil {
			return fmt.Errorf("local cancel %s: %w", id, err)
		}
		data, err := os.ReadFile(e.path(id, "pid"))
		if err != nil {
			continue // not started yet: the runner sees the marker
		}
		if pid, err := strconv.Atoi(strings.TrimSpace(string(data))); err == nil && pid > 1 {
			if st, _ := e.States(ctx, []string{id}); !st[id].State.Done() {
				_ = syscall.Kill(-pid, syscall.SIGTERM)
			}
		}
	}
	return nil
}

// SubmitShell runs the script in the foreground: on one machine a chain
// is simply one segment after another, stopping at the first failure.
func (e *Engine) SubmitShell(script, after, id string) string {
	return fmt.Sprintf(`: "${%[2]s}" # segments run in order; each waits for the one before
SQUALL_LOCAL_SUBMIT_DIR=$PWD bash "$%[1]s"
%[3]s=local`, script, after, id)
}
