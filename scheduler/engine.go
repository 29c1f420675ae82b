package scheduler

import (
	"context"
	"fmt"
	"time"
)

// Engine is a batch system: it renders job scripts in its own directive
// grammar, submits them with dependencies, reports their states and cancels
// them. Implementations live in sibling packages (slurm, pbs, lsf, local),
// each proving conformance with `var _ scheduler.Engine = (*Engine)(nil)`,
// and are listed in scheduler/all.
type Engine interface {
	// Name is the profile's engine value ("slurm").
	Name() string
	// Render returns the complete job script for spec: interpreter line,
	// directives, the common prologue and the body. It checks the job's
	// shape against the profile (nodes, cores, accelerators, walltime).
	Render(spec *JobSpec) ([]byte, error)
	// Submit renders spec, writes the script to spec.Script and submits
	// it so that it starts only after every job in spec.After succeeded.
	// It returns the engine's job id. The log and working directory are
	// also passed on the submit command line, so any path is safe.
	Submit(ctx context.Context, spec *JobSpec) (string, error)
	// States reports the status of every id in a small, fixed number of
	// scheduler calls however many ids there are. An id the engine no
	// longer knows is reported with State Unknown, not as an error.
	States(ctx context.Context, ids []string) (map[string]Status, error)
	// Cancel asks the engine to stop the jobs; finished jobs are ignored.
	Cancel(ctx context.Context, ids []string) error
	// SubmitShell returns shell text that submits the script whose path is
	// in the shell variable named by script, after the jobs whose ids are
	// in the shell variable named by after (space-separated, may be
	// empty), and stores the new job's id in the variable named by id.
	// Emitted submit scripts use it to chain segments at the site.
	SubmitShell(script, after, id string) string
}

// JobSpec is one job to render or submit.
type JobSpec struct {
	// Name is the job's name at the engine: letters, digits, _ . - only.
	Name string
	// Dir is the absolute working directory of the job; "" means the
	// directory it was submitted from.
	Dir string
	// Script is where Submit writes the rendered script.
	Script string
	// Log receives the job's standard output and error. It may contain
	// {job} and {index} (array index), replaced by the engine's own
	// patterns. Relative paths are relative to the submit directory.
	Log string
	// Argv is the command the job runs; every word is quoted. Exactly one
	// of Argv and Body is set.
	Argv []string
	// Body is shell text composed by the caller with this package's
	// quoting helpers (Quote, Words); it is emitted as is.
	Body string
	// Env is exported before the body, values quoted.
	Env []EnvVar
	// After lists job ids that must all succeed before this job starts;
	// if one fails, this job is cancelled by the engine.
	After []string
	// Shape of the allocation; zero values mean 1 node, 1 rank per node,
	// 1 core per rank, no accelerators.
	Nodes, RanksPerNode, CoresPerRank, AcceleratorsPerNode int
	// Walltime is this job's limit; 0 means the profile's walltime.
	Walltime time.Duration
	// Array > 0 makes a job array of Array tasks; each sees its 0-based
	// index in $SQUALL_ARRAY_INDEX. ArrayParallel caps how many run at once
	// (0: no cap).
	Array, ArrayParallel int
	// Warning asks for the profile's warning signal before the walltime;
	// the prologue traps it and forwards it to the command started with
	// squall_run (and to Argv), so the command can checkpoint.
	Warning bool
	// Exclusive asks for whole nodes.
	Exclusive bool
}

// EnvVar is one exported variable.
type EnvVar struct{ Name, Value string }

// State is an engine-neutral job state.
type State string

const (
	Pending   State = "pending"
	Running   State = "running"
	Succeeded State = "succeeded"
	Failed    State = "failed"
	Cancelled State = "cancelled"
	Unknown   State = "unknown"
)

// Done reports whether the state is final.
func (s State) Done() bool { return s == Succeeded || s == Failed || s == Cancelled }

// Status is what an engine knows about one job.
type Status struct {
	ID    string `json:"id"`
	State State  `json:"state"`
	// Reason is the engine's word for why ("DependencyNeverSatisfied",
	// "NonZeroExitCode"), "" when it gives none.
	Reason string `json:"reason,omitempty"`
	// ExitCode is the job script's exit status when known, -1 otherwise.
	ExitCode int `json:"exit_code"`
	// Raw is the engine's own state word ("COMPLETED", "F", "EXIT").
	Raw string `json:"raw,omitempty"`
}

func (s Status) String() string {
	out := fmt.Sprintf("%s %s", s.ID, s.State)
	if s.Reason != "" {
		out += " (" + s.Reason + ")"
	}
	if s.ExitCode >= 0 && s.State.Done() {
		out += fmt.Sprintf(" exit %d", s.ExitCode)
	}
	return out
}

// Aggregate folds the statuses of an array's tasks into one: failed if any
// failed, cancelled if any was cancelled, running while any runs, pending
// while any waits, succeeded when all did.
func Aggregate(id string, tasks []Status) Status {
	out := Status{ID: id, State: Unknown, ExitCode: -1}
	rank := map[State]int{Unknown: 0, Succeeded: 1, Pending: 2, Running: 3, Cancelled: 4, Failed: 5}
	for _, t := range tasks {
		if rank[t.State] > rank[out.State] {
			out.State, out.Reason, out.Raw = t.State, t.Reason, t.Raw
		}
		if t.ExitCode > out.ExitCode {
			out.ExitCode = t.ExitCode
		}
	}
	return out
}
