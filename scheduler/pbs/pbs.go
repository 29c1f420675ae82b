// Package pbs is the engine for PBS Professional / OpenPBS: #PBS
// directives with a select statement, qsub -W depend=afterok, qstat -x -f
// -F json for states (one call for any number of jobs, finished ones
// included because of -x), qdel.
//
// PBS has no warning signal before the walltime, so job scripts that ask
// for one arm a timer themselves. PBS deletes a job whose afterok
// dependency failed; qstat then shows it finished without an exit status,
// which we report as cancelled. Array tasks see their index in
// PBS_ARRAY_INDEX; PBS arrays have no cap on concurrent tasks, so
// ArrayParallel is written as a comment only.
//
// No PBS server runs here: tests render golden files, check each directive
// against the grammar below, and run the conformance suite against fake
// qsub/qstat/qdel commands.
package pbs

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"regexp"
	"strings"

	"github.com/squall-climate/squall/scheduler"
)

// Engine submits with qsub, qstat and qdel found on PATH.
type Engine struct {
	p *scheduler.Profile
}

var _ scheduler.Engine = (*Engine)(nil)

// New returns an engine for a validated profile.
func New(p *scheduler.Profile) *Engine { return &Engine{p: p} }

// Name is "pbs".
func (e *Engine) Name() string { return "pbs" }

// DirectiveRE is the grammar of one #PBS line we emit or accept from a
// profile: an option letter and, for most, one argument without spaces
// (PBS Professional Reference Guide, qsub options).
var DirectiveRE = regexp.MustCompile(`^#PBS -([NqAjoeJWm]|l|r|k|V|S|P) ?[^\s]*$`)

// Dialect returns the directives and job variables for spec.
func (e *Engine) Dialect(spec *scheduler.JobSpec, s scheduler.Shape) (scheduler.Dialect, error) {
	p := e.p
	d := scheduler.Dialect{
		JobID:      `"${PBS_JOBID:-unknown}"`,
		SubmitDir:  `"${PBS_O_WORKDIR:-$PWD}"`,
		ArrayIndex: `"${PBS_ARRAY_INDEX:?not an array task}"`,
	}
	dir := func(format string, args ...any) {
		d.Directives = append(d.Directives, "#PBS "+fmt.Sprintf(format, args...))
	}
	dir("-N %s", spec.Name)
	if p.Partition != "" {
		dir("-q %s", p.Partition)
	}
	if p.Account != "" {
		dir("-A %s", p.Account)
	}
	sel := fmt.Sprintf("select=%d:ncpus=%d:mpiprocs=%d", s.Nodes, s.RanksPerNode*s.CoresPerRank, s.RanksPerNode)
	if s.AcceleratorsPerNode > 0 {
		sel += fmt.Sprintf(":ngpus=%d", s.AcceleratorsPerNode)
	}
	dir("-l %s", sel)
	if spec.Exclusive {
		dir("-l place=scatter:excl")
	} else {
		dir("-l place=scatter")
	}
	dir("-l walltime=%s", s.Walltime.Clock())
	if spec.Array > 1 {
		dir("-J 0-%d", spec.Array-1)
		if spec.ArrayParallel > 0 {
			d.Directives = append(d.Directives, fmt.Sprintf("# at most %d tasks at once was asked for; PBS arrays have no such cap", spec.ArrayParallel))
		}
	} else if spec.Array == 1 {
		// PBS arrays need two or more indices; a single task is a plain job.
		d.ArrayIndex = `"${PBS_ARRAY_INDEX:-0}"`
	}
	dir("-j oe")
	if l := logPath(spec.Log); l != "" && scheduler.PlainPath(l) {
		dir("-o %s", l)
	}
	for i, x := range p.Directives {
		line := "#PBS " + strings.TrimSpace(x)
		if !DirectiveRE.MatchString(line) {
			return d, &scheduler.FieldError{File: p.File(), Line: p.Line(fmt.Sprintf("directives[%d]", i)),
				Field: fmt.Sprintf("directives[%d]", i), Value: x, Msg: "not a qsub option we can place in a #PBS line",
				Hint: `one option and one argument without spaces, e.g. "-l place=scatter" or "-m n"`}
		}
		d.Directives = append(d.Directives, line)
	}
	return d, nil
}

// logPath maps {index} to PBS's ^array_index^; PBS has no job-id pattern
// in output paths, so a log naming {job} is left to PBS's default name.
func logPath(log string) string {
	if log == "" || strings.Contains(log, "{job}") {
		return ""
	}
	return strings.ReplaceAll(log, "{index}", "^array_index^")
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

// Submit writes the script and runs qsub.
func (e *Engine) Submit(ctx context.Context, spec *scheduler.JobSpec) (string, error) {
	script, err := e.Render(spec)
	if err != nil {
		return "", err
	}
	if err := os.WriteFile(spec.Script, script, 0o755); err != nil {
		return "", fmt.Errorf("pbs submit: %w", err)
	}
	argv := []string{"qsub"}
	if len(spec.After) > 0 {
		argv = append(argv, "-W", "depend=afterok:"+strings.Join(spec.After, ":"))
	}
	if l := logPath(spec.Log); l != "" {
		argv = append(argv, "-j", "oe", "-o", l)
	}
	argv = append(argv, spec.Script)
	out, err := run(ctx, argv)
	if err != nil {
		return "", &scheduler.EngineError{Engine: "pbs", Op: "submit", Argv: argv, Output: out, Err: err}
	}
	id := strings.TrimSpace(out)
	if err := scheduler.CheckJobID(id); err != nil {
		return "", &scheduler.EngineError{Engine: "pbs", Op: "submit", Argv: argv, Output: out, Err: err}
	}
	return id, nil
}

// SubmitShell is the qsub line for emitted chain scripts.
func (e *Engine) SubmitShell(script, after, id string) string {
	return fmt.Sprintf(`squall_dep=()
if [[ -n ${%[2]s} ]]; then squall_dep=(-W "depend=afterok:${%[2]s// /:}"); fi
%[3]s=$(qsub "${squall_dep[@]}" "$%[1]s")`, script, after, id)
}

// qstatJSON is the part of `qstat -f -F json` we read.
type qstatJSON struct {
	Jobs map[string]struct {
		State      string `json:"job_state"`
		ExitStatus *int   `json:"Exit_status"`
		Comment    string `json:"comment"`
	} `json:"Jobs"`
}

// States runs one qstat for all ids.
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
	argv := append([]string{"qstat", "-x", "-f", "-F", "json"}, ids...)
	cmd := exec.CommandContext(ctx, argv[0], argv[1:]...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	runErr := cmd.Run() // non-zero when some id is unknown; the rest still print
	var q qstatJSON
	if err := json.Unmarshal(stdout.Bytes(), &q); err != nil && (stdout.Len() > 0 || !strings.Contains(stderr.String(), "Unknown Job Id")) {
		return nil, &scheduler.EngineError{Engine: "pbs", Op: "states", Argv: argv, Output: stdout.String() + stderr.String(), Err: firstErr(runErr, err)}
	}
	for _, id := range ids {
		j, ok := q.Jobs[id]
		if !ok {
			out[id] = scheduler.Status{ID: id, State: scheduler.Unknown, ExitCode: -1}
			continue
		}
		st := scheduler.Status{ID: id, Raw: j.State, ExitCode: -1}
		switch j.State {
		case "Q", "H", "W", "T", "S", "U":
			st.State = scheduler.Pending
		case "R", "E", "B":
			st.State = scheduler.Running
		case "F", "X":
			switch {
			case j.ExitStatus == nil:
				// Deleted before it ran: by qdel, or because a
				// dependency can no longer be met.
				st.State, st.Reason = scheduler.Cancelled, j.Comment
			case *j.ExitStatus == 0:
				st.State, st.ExitCode = scheduler.Succeeded, 0
			case *j.ExitStatus == 256+15 || *j.ExitStatus == 256+9:
				// Killed by qdel while running: 256 + signal number
				// is how PBS reports a job ended by a signal.
				st.State, st.ExitCode, st.Reason = scheduler.Cancelled, *j.ExitStatus, "deleted"
			default:
				st.State, st.ExitCode = scheduler.Failed, *j.ExitStatus
			}
		default:
			st.State = scheduler.Unknown
		}
		out[id] = st
	}
	return out, nil
}

func firstErr(errs ...error) error {
	for _, e := range errs {
		if e != nil {
			return e
		}
	}
	return nil
}

// Cancel runs qdel; jobs already finished are not an error.
func (e *Engine) Cancel(ctx context.Context, ids []string) error {
	if len(ids) == 0 {
		return nil
	}
	for _, id := range ids {
		if err := scheduler.CheckJobID(id); err != nil {
			return err
		}
	}
	argv := append([]string{"qdel"}, ids...)
	if out, err := run(ctx, argv); err != nil && !strings.Contains(out, "Job has finished") && !strings.Contains(out, "Unknown Job Id") {
		return &scheduler.EngineError{Engine: "pbs", Op: "cancel", Argv: argv, Output: out, Err: err}
	}
	return nil
}

func run(ctx context.Context, argv []string) (string, error) {
	cmd := exec.CommandContext(ctx, argv[0], argv[1:]...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		return stdout.String() + stderr.String(), err
	}
	return stdout.String(), nil
}
