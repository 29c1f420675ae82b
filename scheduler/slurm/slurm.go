// Package slurm is the Slurm engine: #SBATCH directives, sbatch with
// afterok dependencies, squeue and sacct for states, scancel.
//
// States cost at most three commands however many jobs are asked about:
// `squeue -t all -j ...` for jobs the controller still holds (finished ones
// stay there for MinJobAge seconds), then for the rest and for exit codes
// `sacct -j ...` (accounting database) or, when the site runs without one,
// `sacct --completion -j ...` (the job-completion log, a permanent record).
// `squeue --json` is not used: Slurm 22.05 ignores -j and -t with it.
//
// Array tasks are reported by squeue as "ID_INDEX"; asking for the array's
// id returns the aggregate of its tasks (see scheduler.Aggregate). The
// job-completion log records array tasks under their own job ids, so an
// array that has left the controller is reported from its last task only.
package slurm

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"time"

	"github.com/squall-climate/squall/scheduler"
)

// Engine submits to a Slurm controller with the sbatch, squeue, sacct and
// scancel commands found on PATH.
type Engine struct {
	p *scheduler.Profile
}

var _ scheduler.Engine = (*Engine)(nil)

// New returns an engine for a validated profile.
func New(p *scheduler.Profile) *Engine { return &Engine{p: p} }

// Name is "slurm".
func (e *Engine) Name() string { return "slurm" }

// maxSignalLead is the largest lead sbatch --signal accepts (seconds).
const maxSignalLead = 65535

// Dialect returns the directives and job variables for spec.
func (e *Engine) Dialect(spec *scheduler.JobSpec, s scheduler.Shape) (scheduler.Dialect, error) {
	p := e.p
	d := scheduler.Dialect{
		JobID:         `"${SLURM_JOB_ID:-unknown}"`,
		SubmitDir:     `"${SLURM_SUBMIT_DIR:-$PWD}"`,
		ArrayIndex:    `"${SLURM_ARRAY_TASK_ID:?not an array task}"`,
		NativeWarning: true,
	}
	dir := func(format string, args ...any) {
		d.Directives = append(d.Directives, "#SBATCH "+fmt.Sprintf(format, args...))
	}
	dir("--job-name=%s", spec.Name)
	if p.Partition != "" {
		dir("--partition=%s", p.Partition)
	}
	if p.Account != "" {
		dir("--account=%s", p.Account)
	}
	dir("--nodes=%d", s.Nodes)
	dir("--ntasks-per-node=%d", s.RanksPerNode)
	dir("--cpus-per-task=%d", s.CoresPerRank)
	if s.AcceleratorsPerNode > 0 {
		dir("--gpus-per-node=%d", s.AcceleratorsPerNode)
	}
	dir("--time=%s", s.Walltime.Clock())
	if spec.Exclusive {
		dir("--exclusive")
	}
	if spec.Array > 0 {
		a := fmt.Sprintf("0-%d", spec.Array-1)
		if spec.ArrayParallel > 0 {
			a += fmt.Sprintf("%%%d", spec.ArrayParallel)
		}
		dir("--array=%s", a)
	}
	if spec.Warning {
		lead := int64(time.Duration(p.Warning.Lead) / time.Second)
		if lead <= maxSignalLead {
			// B: signal the batch shell only; it forwards to the command.
			dir("--signal=B:%s@%d", p.Warning.Signal, lead)
		} else {
			d.NativeWarning = false
		}
	}
	if spec.Log != "" && scheduler.PlainPath(spec.Log) {
		dir("--output=%s", logPattern(spec.Log, spec.Array > 0))
	}
	if spec.Dir != "" && scheduler.PlainPath(spec.Dir) {
		dir("--chdir=%s", spec.Dir)
	}
	for i, x := range p.Directives {
		x = strings.TrimSpace(x)
		if !strings.HasPrefix(x, "-") {
			return d, &scheduler.FieldError{File: p.File(), Line: p.Line(fmt.Sprintf("directives[%d]", i)),
				Field: fmt.Sprintf("directives[%d]", i), Value: x, Msg: "not an sbatch option", Hint: `Slurm directives start with - or --, e.g. "--constraint=gpu"`}
		}
		dir("%s", x)
	}
	return d, nil
}

// logPattern escapes % (Slurm's pattern character) and maps {job} and
// {index} to Slurm's own patterns.
func logPattern(log string, array bool) string {
	l := strings.ReplaceAll(log, "%", "%%")
	if array {
		l = strings.ReplaceAll(l, "{job}", "%A")
	} else {
		l = strings.ReplaceAll(l, "{job}", "%j")
	}
	return strings.ReplaceAll(l, "{index}", "%a")
}

// Render returns the job script.
func (e *Engine) Render(spec *scheduler.JobSpec) ([]byte, error) {
	s, err := scheduler.CheckJob(e.p, spec)
	if err != nil {
		return nil, err
	}
	d, err := e.Dialect(spec, s)
	if err != nil {
		return nil, err
	}
	return scheduler.RenderScript(e.p, d, spec, s), nil
}

// Submit writes the script and runs sbatch.
func (e *Engine) Submit(ctx context.Context, spec *scheduler.JobSpec) (string, error) {
	script, err := e.Render(spec)
	if err != nil {
		return "", err
	}
	if err := os.WriteFile(spec.Script, script, 0o755); err != nil {
		return "", fmt.Errorf("slurm submit: %w", err)
	}
	argv := []string{"sbatch", "--parsable"}
	if len(spec.After) > 0 {
		argv = append(argv, "--dependency=afterok:"+strings.Join(spec.After, ":"), "--kill-on-invalid-dep=yes")
	}
	if spec.Log != "" {
		argv = append(argv, "--output="+logPattern(spec.Log, spec.Array > 0))
	}
	if spec.Dir != "" {
		argv = append(argv, "--chdir="+spec.Dir)
	}
	argv = append(argv, spec.Script)
	out, err := run(ctx, argv)
	if err != nil {
		return "", &scheduler.EngineError{Engine: "slurm", Op: "submit", Argv: argv, Output: out, Err: err}
	}
	id := strings.TrimSpace(out)
	if i := strings.IndexByte(id, ';'); i >= 0 { // "id;cluster"
		id = id[:i]
	}
	if err := scheduler.CheckJobID(id); err != nil {
		return "", &scheduler.EngineError{Engine: "slurm", Op: "submit", Argv: argv, Output: out, Err: err}
	}
	return id, nil
}

// SubmitShell is the sbatch line for emitted chain scripts.
func (e *Engine) SubmitShell(script, after, id string) string {
	return fmt.Sprintf(`squall_dep=()
if [[ -n ${%[2]s} ]]; then squall_dep=(--dependency="afterok:${%[2]s// /:}" --kill-on-invalid-dep=yes); fi
%[3]s=$(sbatch --parsable "${squall_dep[@]}" "$%[1]s")
%[3]s=${%[3]s%%%%;*}`, script, after, id)
}

// States asks squeue, then sacct for what squeue no longer holds and for
// exit codes of finished jobs.
func (e *Engine) States(ctx context.Context, ids []string) (map[string]scheduler.Status, error) {
	out := map[string]scheduler.Status{}
	if len(ids) == 0 {
		return out, nil
	}
	for _, id := range ids {
		if err := scheduler.CheckJobID(id); err != nil {
			return nil, err
		}
	}
	argv := []string{"squeue", "-h", "-t", "all", "-j", strings.Join(ids, ","), "-o", "%i|%T|%r"}
	text, err := run(ctx, argv)
	if err != nil && !strings.Contains(text, "Invalid job id") {
		return nil, &scheduler.EngineError{Engine: "slurm", Op: "states", Argv: argv, Output: text, Err: err}
	}
	tasks := map[string][]scheduler.Status{}
	for _, line := range strings.Split(text, "\n") {
		f := strings.Split(strings.TrimSpace(line), "|")
		if len(f) != 3 {
			continue
		}
		st := scheduler.Status{ID: f[0], State: mapState(f[1]), Raw: f[1], ExitCode: -1}
		if f[2] != "None" && f[2] != "" {
			st.Reason = f[2]
		}
		base := f[0]
		if i := strings.IndexByte(base, '_'); i > 0 {
			base = base[:i]
		}
		tasks[base] = append(tasks[base], st)
		tasks[f[0]] = append(tasks[f[0]], st)
	}
	var rest []string
	for _, id := range ids {
		ts := tasks[id]
		switch {
		case len(ts) == 1 && ts[0].ID == id:
			out[id] = ts[0]
		case len(ts) > 0:
			out[id] = scheduler.Aggregate(id, ts)
		}
		if st, ok := out[id]; !ok || st.State.Done() {
			rest = append(rest, id)
		}
	}
	if len(rest) == 0 {
		return out, nil
	}
	acct, err := sacct(ctx, rest)
	if err != nil {
		return nil, err
	}
	for _, id := range ids {
		a, ok := acct[id]
		st, have := out[id]
		switch {
		case have && ok:
			if st.ExitCode < 0 {
				st.ExitCode = a.ExitCode
			}
			out[id] = st
		case ok:
			out[id] = a
		case !have:
			out[id] = scheduler.Status{ID: id, State: scheduler.Unknown, ExitCode: -1}
		}
	}
	return out, nil
}

// sacct reads the accounting database, or the job-completion log when the
// site has no database.
func sacct(ctx context.Context, ids []string) (map[string]scheduler.Status, error) {
	common := []string{"-n", "-P", "-j", strings.Join(ids, ","), "-o", "JobID,State,ExitCode"}
	argv := append([]string{"sacct", "-X"}, common...)
	text, err := run(ctx, argv)
	if err != nil {
		argv = append([]string{"sacct", "--completion"}, common...)
		text, err = run(ctx, argv)
		if err != nil {
			return nil, &scheduler.EngineError{Engine: "slurm", Op: "states", Argv: argv, Output: text, Err: err}
		}
	}
	out := map[string]scheduler.Status{}
	for _, line := range strings.Split(text, "\n") {
		f := strings.Split(strings.TrimSpace(line), "|")
		if len(f) != 3 || strings.Contains(f[0], ".") { // skip job steps
			continue
		}
		raw := strings.Fields(f[1]) // "CANCELLED by 0"
		if len(raw) == 0 {
			continue
		}
		st := scheduler.Status{ID: f[0], State: mapState(raw[0]), Raw: raw[0], ExitCode: -1}
		if c, _, ok := strings.Cut(f[2], ":"); ok {
			if n, err := strconv.Atoi(c); err == nil {
				st.ExitCode = n
			}
		}
		out[f[0]] = st // later lines (a requeued job) win
	}
	return out, nil
}

// mapState maps Slurm's job state words to engine-neutral states.
func mapState(s string) scheduler.State {
	switch s {
	case "PENDING", "CONFIGURING", "REQUEUED", "REQUEUE_HOLD", "REQUEUE_FED", "RESV_DEL_HOLD", "SPECIAL_EXIT", "POWER_UP_NODE":
		return scheduler.Pending
	case "RUNNING", "COMPLETING", "STAGE_OUT", "SIGNALING", "SUSPENDED", "STOPPED", "RESIZING":
		return scheduler.Running
	case "COMPLETED":
		return scheduler.Succeeded
	case "FAILED", "TIMEOUT", "NODE_FAIL", "OUT_OF_MEMORY", "BOOT_FAIL", "DEADLINE", "PREEMPTED", "REVOKED":
		return scheduler.Failed
	case "CANCELLED":
		return scheduler.Cancelled
	}
	return scheduler.Unknown
}

// Cancel runs scancel.
func (e *Engine) Cancel(ctx context.Context, ids []string) error {
	if len(ids) == 0 {
		return nil
	}
	for _, id := range ids {
		if err := scheduler.CheckJobID(id); err != nil {
			return err
		}
	}
	argv := append([]string{"scancel"}, ids...)
	if out, err := run(ctx, argv); err != nil && !strings.Contains(out, "Invalid job id") {
		return &scheduler.EngineError{Engine: "slurm", Op: "cancel", Argv: argv, Output: out, Err: err}
	}
	return nil
}

// run returns the command's standard output; when it fails, standard
// error is appended so that the caller's error shows it.
func run(ctx context.Context, argv []string) (string, error) {
	cmd := exec.CommandContext(ctx, argv[0], argv[1:]...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout = &stdout
	cmd.Stderr = &stderr
	err := cmd.Run()
	if err != nil {
		return stdout.String() + stderr.String(), err
	}
	return stdout.String(), nil
}
