package scheduler

import (
	"errors"
	"fmt"
	"regexp"
	"strings"
	"time"
)

// Dialect is what an engine contributes to a job script; everything else
// (prologue, signal handling, body) is common so that every engine's
// scripts behave the same.
type Dialect struct {
	// Directives are complete header lines ("#SBATCH --nodes=2").
	Directives []string
	// JobID, SubmitDir and ArrayIndex are shell expressions (trusted,
	// written by the engine) for the engine's job id, the directory the
	// job was submitted from and the 0-based array index.
	JobID, SubmitDir, ArrayIndex string
	// NativeWarning is true when the engine itself delivers the warning
	// signal before the walltime; otherwise the script arms a timer.
	NativeWarning bool
}

// Shape is a JobSpec's allocation with defaults applied.
type Shape struct {
	Nodes, RanksPerNode, CoresPerRank, AcceleratorsPerNode int
	Walltime                                               Duration
}

// Ranks is the total number of ranks.
func (s Shape) Ranks() int { return s.Nodes * s.RanksPerNode }

// CheckJob validates spec against the profile and returns its shape. Every
// error names the JobSpec field, the value, and the profile limit.
func CheckJob(p *Profile, spec *JobSpec) (Shape, error) {
	s := Shape{Nodes: spec.Nodes, RanksPerNode: spec.RanksPerNode, CoresPerRank: spec.CoresPerRank,
		AcceleratorsPerNode: spec.AcceleratorsPerNode, Walltime: Duration(spec.Walltime)}
	if s.Nodes == 0 {
		s.Nodes = 1
	}
	if s.RanksPerNode == 0 {
		s.RanksPerNode = 1
	}
	if s.CoresPerRank == 0 {
		s.CoresPerRank = 1
	}
	if s.Walltime == 0 {
		s.Walltime = p.Walltime
	}
	var errs []error
	bad := func(field string, v any, msg, hint string) {
		errs = append(errs, &FieldError{Field: field, Value: fmt.Sprint(v), Msg: msg, Hint: hint})
	}
	if err := CheckName(spec.Name); err != nil {
		errs = append(errs, err)
	}
	if (len(spec.Argv) == 0) == (spec.Body == "") {
		bad("job body", spec.Name, "exactly one of Argv and Body must be set", "")
	}
	if s.Nodes < 0 || s.RanksPerNode < 0 || s.CoresPerRank < 0 || s.AcceleratorsPerNode < 0 || s.Walltime < 0 {
		bad("job shape", fmt.Sprintf("%+v", s), "counts must not be negative", "")
	}
	if p.MaxNodes > 0 && s.Nodes > p.MaxNodes {
		bad("nodes", s.Nodes, fmt.Sprintf("exceeds the profile's max_nodes %d", p.MaxNodes), "use fewer nodes or a profile for a larger partition")
	}
	if c := s.RanksPerNode * s.CoresPerRank; c > p.Node.Cores {
		bad("cores per node", c, fmt.Sprintf("%d ranks x %d cores exceeds the profile's node.cores %d", s.RanksPerNode, s.CoresPerRank, p.Node.Cores), "fewer ranks per node or cores per rank")
	}
	if s.AcceleratorsPerNode > p.Node.Accelerators {
		bad("accelerators per node", s.AcceleratorsPerNode, fmt.Sprintf("exceeds the profile's node.accelerators %d", p.Node.Accelerators), "fewer accelerators per node, or a profile for an accelerator partition")
	}
	if s.Walltime > p.Walltime {
		bad("walltime", s.Walltime.Clock(), fmt.Sprintf("exceeds the profile's walltime %s", p.Walltime.Clock()), "split the work into a chain of shorter segments")
	}
	if spec.Warning && s.Walltime > 0 && p.Warning.Lead >= s.Walltime {
		bad("walltime", s.Walltime.Clock(), fmt.Sprintf("not longer than the warning lead %s", p.Warning.Lead), "ask for a longer walltime or shorten warning.lead")
	}
	if spec.Array < 0 || spec.ArrayParallel < 0 {
		bad("array", spec.Array, "must not be negative", "")
	}
	if spec.Dir != "" && !strings.HasPrefix(spec.Dir, "/") {
		bad("dir", spec.Dir, "must be absolute", "")
	}
	if strings.ContainsAny(spec.Log, "\n\r\x00") {
		bad("log", spec.Log, "contains a line break", "")
	}
	for _, e := range spec.Env {
		if err := CheckEnvName(e.Name); err != nil {
			errs = append(errs, err)
		}
	}
	for _, id := range spec.After {
		if !jobIDRE.MatchString(id) {
			bad("after", id, "not a job id", "")
		}
	}
	return s, errors.Join(errs...)
}

// jobIDRE covers the ids the engines print: "123", "123_4", "123.server",
// "local-17".
var jobIDRE = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9_.\[\]-]{0,127}$`)

// CheckJobID validates an id read back from an engine before it reaches a
// command line.
func CheckJobID(id string) error {
	if !jobIDRE.MatchString(id) {
		return fmt.Errorf("not a job id: %q", id)
	}
	return nil
}

// RenderScript assembles a job script from the engine's dialect and the
// common parts:
//
//	#!/bin/bash + directives
//	set -eo pipefail, the profile's setup lines, then set -u
//	SQUALL_JOB_ID, SQUALL_JOB_DIR, SQUALL_ARRAY_INDEX exported
//	the warning trap and timer when asked
//	cd to the job directory, the body
//
// The warning handler sets SQUALL_WARNED=1 and forwards the signal to whatever squall_run started,
// so that a trainer launched with `squall_run srun ...` sees it.
func RenderScript(p *Profile, d Dialect, spec *JobSpec, shape Shape) []byte {
	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	w("#!/bin/bash")
	for _, l := range d.Directives {
		w("%s", l)
	}
	w("# Job script written by squall for engine %s; submit it again to resume:", p.Engine)
	w("# it only ever writes below its own job directory.")
	w("# shellcheck disable=SC1090,SC1091 # site set-up may source files we cannot follow")
	w("set -eo pipefail")
	if len(p.Setup) > 0 {
		w("")
		w("# Site set-up (from the site profile, verbatim).")
		for _, l := range p.Setup {
			w("%s", l)
		}
	}
	w("set -u")
	w("")
	w("SQUALL_JOB_ID=%s", d.JobID)
	w("SQUALL_SUBMIT_DIR=%s", d.SubmitDir)
	if spec.Dir != "" {
		w("SQUALL_JOB_DIR=%s", Quote(spec.Dir))
	} else {
		w("SQUALL_JOB_DIR=$SQUALL_SUBMIT_DIR")
	}
	w("export SQUALL_JOB_ID SQUALL_SUBMIT_DIR SQUALL_JOB_DIR")
	if spec.Array > 0 {
		w("SQUALL_ARRAY_INDEX=%s", d.ArrayIndex)
		w("export SQUALL_ARRAY_INDEX")
	}
	for _, e := range spec.Env {
		w("export %s=%s", e.Name, Quote(e.Value))
	}
	w("cd -- \"$SQUALL_JOB_DIR\"")
	w("")
	sig := p.Warning.Signal
	w("# squall_run runs a command in the background and waits for it, so that")
	w("# a trapped signal is handled while it runs; it returns the command's status.")
	w("squall_child=")
	w("squall_run() {")
	w("\t\"$@\" &")
	w("\tsquall_child=$!")
	w("\tlocal rc=0")
	w("\twhile kill -0 \"$squall_child\" 2>/dev/null; do")
	w("\t\twait \"$squall_child\" || true")
	w("\tdone")
	w("\twait \"$squall_child\" || rc=$?")
	w("\tsquall_child=")
	w("\treturn \"$rc\"")
	w("}")
	if spec.Warning {
		w("")
		w("# The engine (or our timer) sends %s %s before the walltime: pass", sig, p.Warning.Lead)
		w("# it on so the command can write a checkpoint and stop cleanly.")
		w("export SQUALL_WARNED=0")
		w("squall_warn() {")
		w("\tSQUALL_WARNED=1")
		w("\techo \"squall: warning signal %s received; asking the command to checkpoint\" >&2", sig)
		w("\tif [[ -n $squall_child ]]; then kill -s %s \"$squall_child\" 2>/dev/null || true; fi", sig)
		w("}")
		w("trap squall_warn %s", sig)
		if !d.NativeWarning {
			lead := time.Duration(shape.Walltime - p.Warning.Lead)
			w("# This engine has no warning directive: arm a timer instead.")
			w("# Its output goes nowhere so that it never holds the job's log open.")
			w("(sleep %d && kill -s %s \"$$\") </dev/null >/dev/null 2>&1 &", int64(lead/time.Second), sig)
			w("squall_timer=$!")
			w("trap 'kill \"$squall_timer\" 2>/dev/null || true' EXIT")
		}
	}
	w("")
	if len(spec.Argv) > 0 {
		w("squall_run %s", QuoteAll(spec.Argv))
		if spec.Warning {
			w("if ((SQUALL_WARNED)); then echo \"squall: the command stopped after the warning signal\" >&2; fi")
		}
	} else {
		b.WriteString(strings.TrimRight(spec.Body, "\n"))
		b.WriteString("\n")
	}
	return []byte(b.String())
}
