package pipeline

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/squall-climate/squall/cache"
)

// ErrInterrupted is returned when a run was stopped by a signal.
var ErrInterrupted = errors.New("interrupted")

// StageFailedError says how many instances failed in a run.
type StageFailedError struct {
	Failed  int
	Blocked int
	First   string // label and error of the first failure
}

func (e *StageFailedError) Error() string {
	return fmt.Sprintf("%d instance(s) failed, %d not run because an input failed; first: %s", e.Failed, e.Blocked, e.First)
}

// Event reports progress to a display.
type Event struct {
	Type    string // "start" or "finish"
	Step    *Step
	State   string // for finish
	Done    int
	Total   int
	Running int
	Elapsed time.Duration
	Err     string
}

// RunOptions tune Execute.
type RunOptions struct {
	Jobs     int  // parallel instances; <= 0 means 1
	FailFast bool // stop starting new instances after the first failure
	Tool     string
	OnEvent  func(Event)
	// ChildCommand builds the command that runs one instance from its job
	// file. The CLI re-executes its own binary; tests re-execute the test
	// binary.
	ChildCommand func(jobFile string) *exec.Cmd
	// KillGrace is how long a child has to stop after SIGTERM.
	KillGrace time.Duration
}

// SelfCommand runs `<this executable> exec-instance <job>`.
func SelfCommand(jobFile string) *exec.Cmd {
	self, err := os.Executable()
	if err != nil {
		self = os.Args[0]
	}
	return exec.Command(self, "exec-instance", jobFile)
}

type result struct {
	st      *Step
	state   string
	err     error
	seconds float64
	logTail string
	logFile string
}

// Execute runs a plan: reused instances are confirmed, the rest run in
// child processes, at most opt.Jobs at once, in dependency order. It
// always returns a run record (also on failure), saved in the store.
func Execute(ctx context.Context, p *Plan, s *cache.Store, opt RunOptions) (*RunRecord, error) {
	if opt.Jobs <= 0 {
		opt.Jobs = 1
	}
	if opt.ChildCommand == nil {
		opt.ChildCommand = SelfCommand
	}
	if opt.KillGrace == 0 {
		opt.KillGrace = 5 * time.Second
	}
	start := time.Now()
	rec := p.newRunRecord(start, opt.Tool, opt.Jobs)
	n := len(p.Steps)
	remaining := make([]int, n)
	states := make([]string, n)
	results := make([]result, n)
	var ready []*Step
	for i, st := range p.Steps {
		remaining[i] = len(st.Upstream)
		if remaining[i] == 0 {
			ready = append(ready, st)
		}
	}
	done := make(chan result)
	running, finished := 0, 0
	var firstFailure string
	stopping := false
	emit := func(e Event) {
		if opt.OnEvent != nil {
			e.Total, e.Done, e.Running, e.Elapsed = n, finished, running, time.Since(start)
			opt.OnEvent(e)
		}
	}
	for len(ready) > 0 || running > 0 {
		var r result
		launched := false
		for !stopping && running < opt.Jobs && len(ready) > 0 {
			st := ready[0]
			ready = ready[1:]
			if st.Action == ActionReuse && st.Record != nil {
				// Decided at plan time with every input known: no worker,
				// no event storm, just its dependents released.
				r, launched = result{st: st, state: StateReused}, true
				break
			}
			running++
			emit(Event{Type: "start", Step: st})
			go func() { done <- runStep(ctx, p, s, st, opt) }()
		}
		if !launched {
			if running == 0 {
				break // stopping with work left: it stays "not run"
			}
			select {
			case r = <-done:
			case <-ctx.Done():
				stopping = true
				r = <-done
			}
			running--
		}
		finished++
		i := r.st.index
		states[i], results[i] = r.state, r
		errText := ""
		if r.err != nil {
			errText = r.err.Error()
		}
		emit(Event{Type: "finish", Step: r.st, State: r.state, Err: errText})
		switch r.state {
		case StateRan, StateReused:
			for _, d := range r.st.dependents {
				remaining[d.index]--
				if remaining[d.index] == 0 {
					ready = append(ready, p.Steps[d.index])
				}
			}
		case StateFailed:
			if firstFailure == "" {
				firstFailure = r.st.Label() + ": " + firstLine(errText)
			}
			if opt.FailFast {
				stopping = true
			}
		case StateNotRun:
			stopping = true
		}
		if ctx.Err() != nil {
			stopping = true
		}
	}
	err := p.finishRecord(rec, s, states, results, ctx.Err() != nil, firstFailure, start)
	return rec, err
}

// newRunRecord starts the record of a run.
func (p *Plan) newRunRecord(start time.Time, tool string, jobs int) *RunRecord {
	rec := &RunRecord{
		ID: start.UTC().Format("20060102T150405.000000000Z"), Campaign: p.Campaign.Info.Name,
		CampaignFile: p.Campaign.File, Tool: tool, Started: start.UTC(), Jobs: jobs,
		Info: p.Campaign.Info,
	}
	for _, st := range p.Campaign.Stages {
		rec.Stages = append(rec.Stages, StageRecord{Name: st.Name, Kind: st.Kind.Name(), KindVersion: st.Kind.Version(),
			Fan: st.Kind.Fan().String(), Inputs: st.Inputs, Settings: st.Settings})
	}
	return rec
}

// finishRecord fills in every instance's outcome, the counts and the
// status, saves the record in the store and returns the run's error.
func (p *Plan) finishRecord(rec *RunRecord, s *cache.Store, states []string, results []result, interrupted bool, firstFailure string, start time.Time) error {
	blocked, failed := 0, 0
	rec.Counts = map[string]int{}
	for i, st := range p.Steps {
		if states[i] == "" {
			states[i] = StateNotRun
			if blockedByFailure(st, states) {
				states[i] = StateBlocked
			}
		}
		switch states[i] {
		case StateBlocked:
			blocked++
		case StateFailed:
			failed++
		}
		rec.Counts[states[i]]++
		r := results[i]
		ir := InstanceRecord{ID: st.ID(), Label: st.Label(), Stage: st.Stage.Name, Kind: st.Stage.Kind.Name(),
			Scenario: st.Scenario, Block: st.Block, Member: st.Member, State: states[i], Reason: st.Reason,
			Seconds: r.seconds, LogTail: r.logTail, LogFile: r.logFile}
		if !st.Key.IsZero() {
			ir.Key = st.Key.String()
		}
		if r.err != nil {
			ir.Error = r.err.Error()
		}
		if st.Record != nil && (states[i] == StateRan || states[i] == StateReused) {
			ir.OutputDir = s.ObjectDir(st.Record.Key)
			ir.Outputs = st.Record.Outputs
			ir.OutputDigest = st.Record.OutputDigest.String()
			ir.Inputs = st.Record.Inputs
		}
		rec.Instances = append(rec.Instances, ir)
	}
	rec.Finished = time.Now().UTC()
	rec.Seconds = time.Since(start).Seconds()
	var err error
	switch {
	case interrupted:
		rec.Status, err = "interrupted", ErrInterrupted
	case failed > 0:
		rec.Status, err = "failed", &StageFailedError{Failed: failed, Blocked: blocked, First: firstFailure}
	default:
		rec.Status = "ok"
	}
	if serr := SaveRunRecord(s.Dir(), rec); serr != nil && err == nil {
		err = fmt.Errorf("save run record: %w", serr)
	}
	return err
}

func blockedByFailure(st *Step, states []string) bool {
	for _, u := range st.Upstream {
		if states[u.index] == StateFailed || states[u.index] == StateBlocked {
			return true
		}
	}
	return false
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// runStep decides again with upstream outputs now known (early cutoff),
// then reuses or runs the instance.
func runStep(ctx context.Context, p *Plan, s *cache.Store, st *Step, opt RunOptions) result {
	if ctx.Err() != nil {
		return result{st: st, state: StateNotRun}
	}
	if st.Action == ActionReuse && st.Record != nil {
		// Decided at plan time with every input known: nothing to redo.
		return result{st: st, state: StateReused}
	}
	reason := st.Reason
	if err := p.decide(st, s); err != nil {
		return result{st: st, state: StateFailed, err: err}
	}
	if st.Action == ActionReuse {
		return result{st: st, state: StateReused}
	}
	if st.Reason == "" || strings.HasPrefix(st.Reason, "upstream ") {
		st.Reason = reason
	}
	t0 := time.Now()
	rec, logTail, logFile, err := runChild(ctx, p, s, st, opt)
	secs := time.Since(t0).Seconds()
	if err != nil {
		if ctx.Err() != nil {
			return result{st: st, state: StateNotRun, err: ErrInterrupted, seconds: secs}
		}
		fr := baseRecord(p, st)
		fr.Error, fr.Seconds, fr.Finished = err.Error(), secs, time.Now().UTC()
		_ = s.RecordFailure(fr)
		return result{st: st, state: StateFailed, err: err, seconds: secs, logTail: logTail, logFile: logFile}
	}
	rec.Seconds = secs
	st.Record = rec
	return result{st: st, state: StateRan, seconds: secs, logFile: logFile}
}

func baseRecord(p *Plan, st *Step) *cache.Record {
	return &cache.Record{
		Key: st.Key, Instance: st.ID(), Stage: st.Stage.Name, Kind: st.Stage.Kind.Name(),
		KindVersion: st.Stage.Kind.Version(), Scenario: st.Scenario, Block: st.Block, Member: st.Member,
		Settings: canonicalJSON(st.Settings), Sections: cache.Sum(sectionsOf(st.Stage.Kind, &p.Campaign.Info)),
		Inputs: p.inputDigests(st),
	}
}

// JobFor builds the job description of a step whose upstream outputs are
// in the store.
func (p *Plan) JobFor(st *Step, s *cache.Store, outDir string) *Job {
	job := &Job{Stage: st.Stage.Name, Kind: st.Stage.Kind.Name(), Scenario: st.Scenario, Block: st.Block,
		Member: st.Member, Settings: st.Settings, OutDir: outDir, Campaign: p.Campaign.Info}
	for _, u := range st.Upstream {
		ur := p.byInst[u].Record
		dir := s.ObjectDir(ur.Key)
		in := Input{From: u.Stage.Name, Kind: u.Stage.Kind.Name(), Scenario: u.Scenario, Block: u.Block, Member: u.Member, Dir: dir}
		for _, o := range ur.Outputs {
			in.Files = append(in.Files, filepath.Join(dir, filepath.FromSlash(o.Name)))
		}
		job.Inputs = append(job.Inputs, in)
	}
	job.Inputs = append(job.Inputs, st.Files...)
	return job
}

func runChild(ctx context.Context, p *Plan, s *cache.Store, st *Step, opt RunOptions) (*cache.Record, string, string, error) {
	work, err := s.TempDir(st.Stage.Name)
	if err != nil {
		return nil, "", "", err
	}
	defer os.RemoveAll(work)
	out := filepath.Join(work, workOutDir)
	if err := os.Mkdir(out, 0o755); err != nil {
		return nil, "", "", err
	}
	job := p.JobFor(st, s, out)
	jb, _ := json.MarshalIndent(job, "", "  ")
	jobFile := filepath.Join(work, workJobFile)
	if err := os.WriteFile(jobFile, jb, 0o644); err != nil {
		return nil, "", "", err
	}
	logPath := filepath.Join(work, workLogFile)
	logf, err := os.Create(logPath)
	if err != nil {
		return nil, "", "", err
	}
	cmd := opt.ChildCommand(jobFile)
	// The output also stays in memory: on a full disk the log file cannot
	// be written, and the reason for the failure must still reach the user.
	ilog := &instanceLog{file: logf}
	cmd.Stdout, cmd.Stderr = ilog, ilog
	// Own process group: an interrupt reaches the whole instance, and the
	// kernel kills the child if the runner dies (kill -9 included).
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true, Pdeathsig: syscall.SIGKILL}
	if err := cmd.Start(); err != nil {
		logf.Close()
		return nil, "", "", fmt.Errorf("start instance: %w", err)
	}
	waitErr := make(chan error, 1)
	go func() { waitErr <- cmd.Wait() }()
	select {
	case err = <-waitErr:
	case <-ctx.Done():
		syscall.Kill(-cmd.Process.Pid, syscall.SIGTERM)
		select {
		case err = <-waitErr:
		case <-time.After(opt.KillGrace):
			syscall.Kill(-cmd.Process.Pid, syscall.SIGKILL)
			err = <-waitErr
		}
		if err == nil {
			err = ErrInterrupted
		}
	}
	logf.Close()
	keep := s.LogPath(st.Key)
	if st.Key.IsZero() {
		keep = filepath.Join(s.Dir(), "logs", st.Stage.Name+".log")
	}
	_ = copyFile(logPath, keep)
	tail := ilog.tail(20)
	if err != nil {
		var ee *exec.ExitError
		if errors.As(err, &ee) {
			if ws, ok := ee.Sys().(syscall.WaitStatus); ok && ws.Signaled() {
				err = fmt.Errorf("instance process killed by signal %v", ws.Signal())
			} else {
				err = fmt.Errorf("instance process exited with status %d", ee.ExitCode())
			}
		}
		if msg := lastError(tail); msg != "" {
			err = fmt.Errorf("%w: %s", err, msg)
		} else if crash := ilog.crash(); crash != "" {
			err = fmt.Errorf("%w: %s", err, crash)
		}
		return nil, tail, keep, err
	}
	mb, err := os.ReadFile(filepath.Join(work, workManifestFile))
	if err != nil {
		return nil, tail, keep, fmt.Errorf("instance left no manifest: %w", err)
	}
	rec := baseRecord(p, st)
	if err := json.Unmarshal(mb, &rec.Outputs); err != nil {
		return nil, tail, keep, fmt.Errorf("read manifest: %w", err)
	}
	rec.OutputDigest = cache.ManifestDigest(rec.Outputs)
	rec.Finished = time.Now().UTC()
	if err := s.Commit(out, rec); err != nil {
		return nil, tail, keep, fmt.Errorf("record outputs: %w", err)
	}
	return rec, tail, keep, nil
}

func copyFile(from, to string) error {
	b, err := os.ReadFile(from)
	if err != nil {
		return err
	}
	return os.WriteFile(to, b, 0o644)
}

func tailOf(path string, lines int) string {
	b, err := os.ReadFile(path)
	if err != nil {
		return ""
	}
	b = bytes.TrimRight(b, "\n")
	parts := bytes.Split(b, []byte("\n"))
	if len(parts) > lines {
		parts = parts[len(parts)-lines:]
	}
	return string(bytes.Join(parts, []byte("\n")))
}

// lastError picks the child's own error line ("error: ...") from its log.
func lastError(tail string) string {
	lines := strings.Split(tail, "\n")
	for i := len(lines) - 1; i >= 0; i-- {
		if strings.HasPrefix(lines[i], "error: ") {
			return strings.TrimPrefix(lines[i], "error: ")
		}
	}
	return ""
}

// instanceLog keeps a child's output: in the log file when it can be
// written, and its first and last lines in memory in any case.
type instanceLog struct {
	mu        sync.Mutex
	file      *os.File
	fileBroke bool
	head      []byte // the first 8 KB: Go crash headers stand there
	last      []byte // the last 32 KB
}

const (
	logHeadMax = 8 << 10
	logTailMax = 32 << 10
)

func (l *instanceLog) Write(b []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	if !l.fileBroke {
		if _, err := l.file.Write(b); err != nil {
			l.fileBroke = true // keep going in memory
		}
	}
	if room := logHeadMax - len(l.head); room > 0 {
		l.head = append(l.head, b[:min(room, len(b))]...)
	}
	l.last = append(l.last, b...)
	if len(l.last) > logTailMax {
		l.last = append([]byte(nil), l.last[len(l.last)-logTailMax:]...)
	}
	return len(b), nil
}

func (l *instanceLog) tail(lines int) string {
	l.mu.Lock()
	defer l.mu.Unlock()
	b := bytes.TrimRight(l.last, "\n")
	parts := bytes.Split(b, []byte("\n"))
	if len(parts) > lines {
		parts = parts[len(parts)-lines:]
	}
	return string(bytes.Join(parts, []byte("\n")))
}

// crash describes a child that died without saying why in an "error:"
// line: a Go runtime crash header (for example a SIGSEGV inside the netCDF
// C library) and the last thing the stage logged before it.
func (l *instanceLog) crash() string {
	l.mu.Lock()
	texts := []string{string(l.head), string(l.last)}
	l.mu.Unlock()
	for _, text := range texts {
		lines := strings.Split(text, "\n")
		for i, line := range lines {
			if !strings.HasPrefix(line, "fatal error:") && !strings.HasPrefix(line, "SIG") && !strings.HasPrefix(line, "panic:") {
				continue
			}
			header := strings.TrimSpace(line)
			for j := i - 1; j >= 0; j-- {
				if t := strings.TrimSpace(lines[j]); t != "" {
					return fmt.Sprintf("crashed (%s) after: %s", header, t)
				}
			}
			return "crashed (" + header + ")"
		}
	}
	return ""
}
