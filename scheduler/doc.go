// Package scheduler holds site profiles and the Engine interface that batch
// systems implement (scheduler/slurm, scheduler/pbs, scheduler/lsf,
// scheduler/local; listed in scheduler/all), plus the shell quoting and the
// script prologue all engines share. It knows nothing of any stage's
// science.
//
// # Site profiles
//
// A profile is a YAML file of our own keys (see Profile): engine,
// partition, account, node shape (cores, accelerators, memory, peak rate,
// node-local scratch path and size), walltime limit, set-up lines, launcher
// template, warning signal and lead, extra directives. Load does Default ->
// strict Decode (an unknown key is an error with its line and the closest
// valid key) -> Validate (every error a *FieldError naming field, value and
// a hint). The campaign file never names a site.
//
// # Engines for a coordinator
//
// `squall run --site PROFILE` can drive any engine with four calls:
//
//	p, e, err := all.Load(profilePath)
//	id, err := e.Submit(ctx, &scheduler.JobSpec{
//		Name:   "subset-hist-1990",            // [A-Za-z0-9_.-], <= 64
//		Dir:    instanceWorkDir,               // absolute; the job cds here
//		Script: filepath.Join(jobDir, "job.sh"),
//		Log:    filepath.Join(jobDir, "job.log"),
//		Argv:   []string{self, "child", "--job", jobJSON}, // quoted word by word
//		After:  []string{idOfEachUpstreamJob},  // afterok; a failure cancels this job
//	})
//	st, err := e.States(ctx, allIDs) // one to three scheduler calls, any number of ids
//	err = e.Cancel(ctx, ids)
//
// Status.State is pending, running, succeeded, failed, cancelled or unknown;
// a job whose dependency failed ends cancelled (Slurm's reason
// "DependencyNeverSatisfied"), never pending for ever: Slurm gets
// --kill-on-invalid-dep=yes, LSF -ti, PBS deletes such jobs itself, and the
// local engine cancels them. Paths and argv travel on the submit command
// line (no shell) as well as in the script, so any path is safe. Poll
// States every few seconds: each call costs a fixed number of processes.
// Job ids are strings; keep them in receipts to find jobs again after a
// coordinator restart (the local engine keeps its records in files for
// the same reason). No job touches the cache index: a job writes its own
// receipt and the coordinator folds it in.
//
// # Scripts
//
// Every script is bash: directives, a fixed prologue (set -eo pipefail,
// the profile's set-up lines verbatim, set -u, SQUALL_JOB_ID,
// SQUALL_JOB_DIR, SQUALL_ARRAY_INDEX for arrays, cd to the job directory),
// then the body. Every value we write is quoted with Quote (single quotes)
// or validated (names, ids, numbers); directive lines only ever carry
// validated names, numbers and "plain" paths (PlainPath), so no value can
// inject a directive or a command. The only text emitted verbatim is what
// the site's user wrote as a command: set-up lines and extra directives.
// The helper squall_run runs a command in the background so the warning
// trap can forward the signal to it (engines with no warning directive get
// a timer); SQUALL_WARNED is 1 after the signal arrived.
//
// Costs: Render is pure string work; Submit, States and Cancel each start
// one to three processes (sbatch/squeue/sacct, qsub/qstat, bsub/bjobs).
package scheduler
