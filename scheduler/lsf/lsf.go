// Package lsf is the engine for IBM Spectrum LSF: #BSUB directives, bsub
// reading the script on standard input (bsub honours #BSUB lines only
// there), dependencies as -w "done(ID) && ..." with -ti so that a job whose
// dependency can no longer be met is terminated instead of pending for
// ever, bjobs -a -o for states (one call for any number of jobs), bkill.
//
// LSF sends the warning signal itself (-wa SIGNAL -wt MINUTES; minutes are
// LSF's unit, so the lead is rounded up). Arrays are 1-based in LSF
// (LSB_JOBINDEX); SQUALL_ARRAY_INDEX is LSB_JOBINDEX-1. A job that ends
// with EXIT is reported as cancelled when bjobs' exit_reason says it was
// killed (bkill, or orphan termination), otherwise as failed.
//
// No LSF cluster runs here: tests render golden files, check each
// directive against the grammar below, and run the conformance suite
// against fake bsub/bjobs/bkill commands.
package lsf

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"regexp"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/scheduler"
)

// Engine submits with bsub, bjobs and bkill found on PATH.
type Engine struct {
	p *scheduler.Profile
}

var _ scheduler.Engine = (*Engine)(nil)

// New returns an engine for a validated profile.
func New(p *scheduler.Profile) *Engine { return &Engine{p: p} }

// Name is "lsf".
func (e *Engine) Name() string { return "lsf" }

// DirectiveRE is the grammar of one #BSUB line: an option and either a
// bare argument without spaces or one double-quoted argument without
// quotes or $ inside (bsub options as in the LSF command reference).
var DirectiveRE = regexp.MustCompile(`^#BSUB -[A-Za-z_]+( ([^\s"$]+|"[^"$\x60\\]*"))?$`)

// Dialect returns the directives and job variables for spec.
func (e *Engine) Dialect(spec *scheduler.JobSpec, s scheduler.Shape) (scheduler.Dialect, error) {
	p := e.p
	d := scheduler.Dialect{
		JobID:         `"${LSB_JOBID:-unknown}"`,
		SubmitDir:     `"${LS_SUBCWD:-$PWD}"`,
		ArrayIndex:    `"$((${LSB_JOBINDEX:?not an array task} - 1))"`,
		NativeWarning: true,
	}
	dir := func(format string, args ...any) {
		d.Directives = append(d.Directives, "#BSUB "+fmt.Sprintf(format, args...))
	}
	if spec.Array > 0 {
		a := fmt.Sprintf("%s[1-%d]", spec.Name, spec.Array)
		if spec.ArrayParallel > 0 {
			a += fmt.Sprintf("%%%d", spec.ArrayParallel)
		}
		dir(`-J "%s"`, a)
	} else {
		dir("-J %s", spec.Name)
	}
	if p.Partition != "" {
		dir("-q %s", p.Partition)
	}
	if p.Account != "" {
		dir("-P %s", p.Account)
	}
	dir("-n %d", s.Ranks())
	dir(`-R "span[ptile=%d] affinity[core(%d)]"`, s.RanksPerNode, s.CoresPerRank)
	if s.AcceleratorsPerNode > 0 {
		dir(`-gpu "num=%d"`, s.AcceleratorsPerNode)
	}
	dir("-W %d", s.Walltime.Minutes())
	if spec.Exclusive {
		dir("-x")
	}
	if spec.Warning {
		dir("-wa %s", p.Warning.Signal)
		dir("-wt %d", p.Warning.Lead.Minutes())
	}
	if l := logPattern(spec.Log, spec.Array > 0); l != "" && scheduler.PlainPath(spec.Log) {
		dir("-o %s", l)
	}
	if spec.Dir != "" && scheduler.PlainPath(spec.Dir) {
		dir("-cwd %s", spec.Dir)
	}
	for i, x := range p.Directives {
		line := "#BSUB " + strings.TrimSpace(x)
		if !DirectiveRE.MatchString(line) {
			return d, &scheduler.FieldError{File: p.File(), Line: p.Line(fmt.Sprintf("directives[%d]", i)),
				Field: fmt.Sprintf("directives[%d]", i), Value: x, Msg: "not a bsub option we can place in a #BSUB line",
				Hint: `one option and one argument, quoted with "..." when it has spaces, e.g. -R "select[mem>4000]"`}
		}
		d.Directives = append(d.Directives, line)
	}
	return d, nil
}

// logPattern maps {job} and {index} to LSF's %J and %I.
func logPattern(log string, array bool) string {
	l := strings.ReplaceAll(log, "{job}", "%J")
	return strings.ReplaceAll(l, "{index}", "%I")
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

// Condition is the -w expression for afterok on every id.
func Condition(ids []string) string {
	c := make([]string, len(ids))
	for i, id := range ids {
		c[i] = "done(" + id + ")"
	}
	return strings.Join(c, " && ")
}

var submittedRE = regexp.MustCompile(`Job <([0-9]+)> is submitted`)

// Submit writes the script and pipes it to bsub.
func (e *Engine) Submit(ctx context.Context, spec *scheduler.JobSpec) (string, error) {
	script, err := e.Render(spec)
	if err != nil {
		return "", err
	}
	if err := os.WriteFile(spec.Script, script, 0o755); err != nil {
		return "", fmt.Errorf("lsf submit: %w", err)
	}
	argv := []string{"bsub"}
	if len(spec.After) > 0 {
		argv = append(argv, "-w", Condition(spec.After), "-ti")
	}
	if spec.Log != "" {
		argv = append(argv, "-o", logPattern(spec.Log, spec.Array > 0))
	}
	if spec.Dir != "" {
		argv = append(argv, "-cwd", spec.Dir)
	}
	cmd := exec.CommandContext(ctx, argv[0], argv[1:]...)
	f, err := os.Open(spec.Script)
	if err != nil {
		return "", fmt.Errorf("lsf submit: %w", err)
	}
	defer f.Close()
	cmd.Stdin = f
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	argv = append(argv, "<", spec.Script) // for messages only
	if err := cmd.Run(); err != nil {
		return "", &scheduler.EngineError{Engine: "lsf", Op: "submit", Argv: argv, Output: stdout.String() + stderr.String(), Err: err}
	}
	m := submittedRE.FindStringSubmatch(stdout.String())
	if m == nil {
		return "", &scheduler.EngineError{Engine: "lsf", Op: "submit", Argv: argv, Output: stdout.String(), Err: fmt.Errorf("no job id in bsub's answer")}
	}
	return m[1], nil
}

// SubmitShell is the bsub line for emitted chain scripts.
func (e *Engine) SubmitShell(script, after, id string) string {
	return fmt.Sprintf(`squall_dep=()
if [[ -n ${%[2]s} ]]; then
	read -ra squall_ids <<<"${%[2]s}"
	squall_cond=
	for squall_i in "${squall_ids[@]}"; do squall_cond+="${squall_cond:+ && }done($squall_i)"; done
	squall_dep=(-w "$squall_cond" -ti)
fi
squall_out=$(bsub "${squall_dep[@]}" <"$%[1]s")
%[3]s=$(sed -n 's/^Job <\([0-9]*\)> is submitted.*/\1/p' <<<"$squall_out")`, script, after, id)
}

// States runs one bjobs for all ids.
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
	argv := append([]string{"bjobs", "-a", "-noheader", "-o", "jobid stat exit_code exit_reason delimiter='|'"}, ids...)
	cmd := exec.CommandContext(ctx, argv[0], argv[1:]...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	runErr := cmd.Run() // non-zero when some id is not found; the rest still print
	if runErr != nil && stdout.Len() == 0 && !strings.Contains(stderr.String(), "is not found") {
		return nil, &scheduler.EngineError{Engine: "lsf", Op: "states", Argv: argv, Output: stderr.String(), Err: runErr}
	}
	tasks := map[string][]scheduler.Status{}
	for _, line := range strings.Split(stdout.String(), "\n") {
		f := strings.Split(strings.TrimSpace(line), "|")
		if len(f) != 4 {
			continue
		}
		st := scheduler.Status{ID: f[0], Raw: f[1], ExitCode: -1}
		if n, err := strconv.Atoi(f[2]); err == nil {
			st.ExitCode = n
		}
		switch f[1] {
		case "PEND", "PSUSP", "WAIT":
			st.State = scheduler.Pending
		case "RUN", "USUSP", "SSUSP", "PROV":
			st.State = scheduler.Running
		case "DONE":
			st.State, st.ExitCode = scheduler.Succeeded, 0
		case "EXIT":
			st.State = scheduler.Failed
			if r := f[3]; r != "-" && r != "" {
				st.Reason = r
				if strings.Contains(strings.ToLower(r), "kill") || strings.Contains(strings.ToLower(r), "dependency") {
					st.State = scheduler.Cancelled
				}
			}
		default:
			st.State = scheduler.Unknown
		}
		tasks[f[0]] = append(tasks[f[0]], st)
	}
	for _, id := range ids {
		switch ts := tasks[id]; len(ts) {
		case 0:
			out[id] = scheduler.Status{ID: id, State: scheduler.Unknown, ExitCode: -1}
		case 1:
			out[id] = ts[0]
		default: // array tasks share the job id
			out[id] = scheduler.Aggregate(id, ts)
		}
	}
	return out, nil
}

// Cancel runs bkill; finished jobs are not an error.
func (e *Engine) Cancel(ctx context.Context, ids []string) error {
	if len(ids) == 0 {
		return nil
	}
	for _, id := range ids {
		if err := scheduler.CheckJobID(id); err != nil {
			return err
		}
	}
	argv := append([]string{"bkill"}, ids...)
	cmd := exec.CommandContext(ctx, argv[0], argv[1:]...)
	out, err := cmd.CombinedOutput()
	if err != nil && !strings.Contains(string(out), "already finished") && !strings.Contains(string(out), "is not found") {
		return &scheduler.EngineError{Engine: "lsf", Op: "cancel", Argv: argv, Output: string(out), Err: err}
	}
	return nil
}
