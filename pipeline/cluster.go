package pipeline

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime/debug"
	"sort"
	"strings"
	"time"

	"github.com/squall-climate/squall/cache"
)

// Cluster is what the coordinator needs from a batch system. The
// scheduler package adapts its engines (Slurm, PBS, LSF, local) to it.
type Cluster interface {
	Submit(ctx context.Context, job ClusterJobSpec) (string, error)
	// States reports every id's state in a few scheduler calls.
	States(ctx context.Context, ids []string) (map[string]ClusterStatus, error)
	Cancel(ctx context.Context, ids []string) error
}

// ClusterJobSpec is one instance submitted as a job.
type ClusterJobSpec struct {
	Name   string      // [A-Za-z0-9_.-]
	Dir    string      // working directory
	Script string      // where the engine writes the job script
	Log    string      // the job's standard output and error
	Argv   []string    // the command: the same binary's exec-job entry point
	Env    [][2]string // exported before the command
	After  []string    // engine ids that must succeed first
}

// ClusterStatus is a job's state: pending, running, succeeded, failed,
// cancelled or unknown.
type ClusterStatus struct {
	State    string
	Reason   string
	ExitCode int
}

// clusterJob is the file a cluster job reads. It holds the whole Job
// except where upstream outputs live: those are learnt from the receipts
// that upstream jobs of this run leave, so no job opens the index.
type clusterJob struct {
	ID         string              `json:"id"`
	Job        Job                 `json:"job"` // Inputs: raw and file inputs only
	Upstream   []upstreamRef       `json:"upstream"`
	FileInputs []cache.InputDigest `json:"file_inputs"`
	// Settings is the canonical settings encoding that enters the key,
	// carried as bytes (base64 in JSON) so no re-encoding can alter it.
	Settings []byte       `json:"settings_canonical"`
	Sections cache.Digest `json:"sections"`
	Version  int          `json:"kind_version"`
	StoreDir string       `json:"store_dir"`
	RunDir   string       `json:"run_dir"`
}

type upstreamRef struct {
	ID       string `json:"id"`
	Label    string `json:"label"`
	Stage    string `json:"stage"`
	Kind     string `json:"kind"`
	Scenario string `json:"scenario,omitempty"`
	Block    string `json:"block,omitempty"`
	Member   string `json:"member,omitempty"`
}

// runReceipt is what a job leaves for the coordinator and for its
// downstream jobs: the record of the outputs it made or found.
type runReceipt struct {
	Record cache.Record `json:"record"`
	Reused bool         `json:"reused"`
}

func receiptName(id string) string { return cache.Sum([]byte(id)).String()[:24] }

func runReceiptPath(runDir, id string) string {
	return filepath.Join(runDir, "receipts", receiptName(id)+".json")
}

// ClusterOptions tune ExecuteCluster.
type ClusterOptions struct {
	Tool    string
	OnEvent func(Event)
	// Argv builds the command a job runs for a job file; the CLI uses its
	// own binary's `exec-job`.
	Argv func(jobFile string) []string
	Env  [][2]string
	Poll time.Duration
}

// ExecuteCluster runs a plan on a batch system: every instance that must
// run becomes one job whose dependencies are its upstream instances' jobs
// (afterok), all submitted at once; reused instances leave their receipt
// straight away. The coordinator polls job states and folds each job's
// receipt into the index. Outputs are byte-identical to a local run: the
// job runs the same entry point and computes the same cache key.
func ExecuteCluster(ctx context.Context, p *Plan, s *cache.Store, cl Cluster, opt ClusterOptions) (*RunRecord, error) {
	if opt.Poll <= 0 {
		opt.Poll = time.Second
	}
	start := time.Now()
	rec := p.newRunRecord(start, opt.Tool, 0)
	runDir := filepath.Join(s.Dir(), "runs", rec.ID)
	for _, d := range []string{"receipts", "jobs", "logs"} {
		if err := os.MkdirAll(filepath.Join(runDir, d), 0o755); err != nil {
			return nil, err
		}
	}
	n := len(p.Steps)
	states := make([]string, n)
	results := make([]result, n)
	jobIDs := make([]string, n)
	pending := map[string]*Step{}
	finished := 0
	emit := func(e Event) {
		if opt.OnEvent != nil {
			e.Total, e.Done, e.Running, e.Elapsed = n, finished, len(pending), time.Since(start)
			opt.OnEvent(e)
		}
	}
	var firstFailure string
	var submitErr error
	for _, st := range p.Steps {
		if ctx.Err() != nil {
			break
		}
		if st.Action == ActionReuse {
			if err := writeRunReceipt(runDir, st.ID(), st.Record, true); err != nil {
				return nil, err
			}
			states[st.index] = StateReused
			finished++
			emit(Event{Type: "finish", Step: st, State: StateReused})
			continue
		}
		blocked := false
		var after []string
		for _, u := range st.Upstream {
			switch states[u.index] {
			case StateFailed, StateBlocked:
				blocked = true
			case "":
				after = append(after, jobIDs[u.index])
			}
		}
		if blocked {
			states[st.index] = StateBlocked
			continue
		}
		jobFile, err := p.writeClusterJob(st, s, runDir)
		if err != nil {
			return nil, err
		}
		base := filepath.Join(runDir, "jobs", receiptName(st.ID()))
		spec := ClusterJobSpec{
			Name: jobName(st), Dir: p.Campaign.Info.Dir, Script: base + ".sh",
			Log: filepath.Join(runDir, "logs", receiptName(st.ID())+".log"), Argv: opt.Argv(jobFile),
			Env: opt.Env, After: after,
		}
		id, err := cl.Submit(ctx, spec)
		if err != nil {
			submitErr = fmt.Errorf("submit %s: %w", st.Label(), err)
			states[st.index] = StateFailed
			results[st.index] = result{st: st, state: StateFailed, err: submitErr}
			firstFailure = st.Label() + ": " + submitErr.Error()
			break
		}
		jobIDs[st.index] = id
		pending[id] = st
		emit(Event{Type: "start", Step: st})
	}
	// Follow the jobs until every one has ended.
	interrupted, cancelled := false, false
	for len(pending) > 0 {
		if (submitErr != nil || ctx.Err() != nil) && !cancelled {
			// A submission failed or the user interrupted: stop every job
			// already submitted, once.
			ids := make([]string, 0, len(pending))
			for id := range pending {
				ids = append(ids, id)
			}
			_ = cl.Cancel(context.Background(), ids)
			cancelled = true
		}
		if ctx.Err() != nil {
			interrupted = true
			break
		}
		select {
		case <-time.After(opt.Poll):
		case <-ctx.Done():
			continue
		}
		ids := make([]string, 0, len(pending))
		for id := range pending {
			ids = append(ids, id)
		}
		sort.Strings(ids)
		stats, err := cl.States(ctx, ids)
		if err != nil {
			continue // transient: ask again next round
		}
		for _, id := range ids {
			stt, ok := stats[id]
			if !ok {
				continue
			}
			st := pending[id]
			switch stt.State {
			case "succeeded":
				delete(pending, id)
				finished++
				state, rr, err := p.foldReceipt(st, s, runDir)
				if err != nil {
					states[st.index], results[st.index] = StateFailed, result{st: st, state: StateFailed, err: err}
					if firstFailure == "" {
						firstFailure = st.Label() + ": " + err.Error()
					}
				} else {
					states[st.index] = state
					results[st.index] = result{st: st, state: state, seconds: rr.Record.Seconds}
				}
				emit(Event{Type: "finish", Step: st, State: states[st.index]})
			case "failed", "cancelled":
				delete(pending, id)
				finished++
				logPath := filepath.Join(runDir, "logs", receiptName(st.ID())+".log")
				tail := tailOf(logPath, 20)
				if stt.State == "cancelled" && anyUpstreamFailed(st, states) {
					states[st.index] = StateBlocked
					emit(Event{Type: "finish", Step: st, State: StateBlocked})
					continue
				}
				err := fmt.Errorf("job %s %s (%s, exit %d)", id, stt.State, stt.Reason, stt.ExitCode)
				if msg := lastError(tail); msg != "" {
					err = fmt.Errorf("%w: %s", err, msg)
				}
				states[st.index] = StateFailed
				results[st.index] = result{st: st, state: StateFailed, err: err, logTail: tail, logFile: logPath}
				if firstFailure == "" {
					firstFailure = st.Label() + ": " + err.Error()
				}
				fr := baseRecord(p, st)
				fr.Instance, fr.Error, fr.Finished = st.ID(), err.Error(), time.Now().UTC()
				_ = s.RecordFailure(fr)
				emit(Event{Type: "finish", Step: st, State: StateFailed, Err: err.Error()})
			}
		}
	}
	err := p.finishRecord(rec, s, states, results, interrupted, firstFailure, start)
	if submitErr != nil && err == nil {
		err = submitErr
	}
	return rec, err
}

func anyUpstreamFailed(st *Step, states []string) bool {
	for _, u := range st.Upstream {
		if states[u.index] == StateFailed || states[u.index] == StateBlocked {
			return true
		}
	}
	return false
}

func jobName(st *Step) string {
	name := "squall-" + st.Stage.Name
	for _, x := range []string{st.Scenario, st.Block} {
		if x != "" {
			name += "-" + x
		}
	}
	if len(name) > 60 {
		name = name[:60]
	}
	return name
}

func writeRunReceipt(runDir, id string, rec *cache.Record, reused bool) error {
	b, err := json.Marshal(runReceipt{Record: *rec, Reused: reused})
	if err != nil {
		return err
	}
	return writeAtomic(runReceiptPath(runDir, id), b)
}

// foldReceipt reads a finished job's receipt and records it in the index.
func (p *Plan) foldReceipt(st *Step, s *cache.Store, runDir string) (string, *runReceipt, error) {
	b, err := os.ReadFile(runReceiptPath(runDir, st.ID()))
	if err != nil {
		return "", nil, fmt.Errorf("the job ended without a receipt: %w", err)
	}
	var rr runReceipt
	if err := json.Unmarshal(b, &rr); err != nil {
		return "", nil, fmt.Errorf("receipt: %w", err)
	}
	if prob := s.CheckOutputs(&rr.Record, false); prob != nil {
		return "", nil, fmt.Errorf("the job's outputs are not in the store: %s", prob)
	}
	if err := s.Fold(&rr.Record); err != nil {
		return "", nil, err
	}
	st.Key, st.Record = rr.Record.Key, &rr.Record
	if rr.Reused {
		return StateReused, &rr, nil
	}
	return StateRan, &rr, nil
}

func (p *Plan) writeClusterJob(st *Step, s *cache.Store, runDir string) (string, error) {
	cj := clusterJob{
		ID:         st.ID(),
		FileInputs: st.inputs,
		Settings:   canonicalJSON(st.Settings),
		Sections:   cache.Sum(sectionsOf(st.Stage.Kind, &p.Campaign.Info)),
		Version:    st.Stage.Kind.Version(),
		StoreDir:   s.Dir(),
		RunDir:     runDir,
		Job: Job{Stage: st.Stage.Name, Kind: st.Stage.Kind.Name(), Scenario: st.Scenario, Block: st.Block,
			Member: st.Member, Settings: st.Settings, Campaign: p.Campaign.Info, Inputs: append([]Input(nil), st.Files...)},
	}
	for _, u := range st.Upstream {
		cj.Upstream = append(cj.Upstream, upstreamRef{ID: u.ID(), Label: u.Label(), Stage: u.Stage.Name,
			Kind: u.Stage.Kind.Name(), Scenario: u.Scenario, Block: u.Block, Member: u.Member})
	}
	b, err := json.MarshalIndent(cj, "", "  ")
	if err != nil {
		return "", err
	}
	path := filepath.Join(runDir, "jobs", receiptName(st.ID())+".json")
	return path, writeAtomic(path, b)
}

// RunClusterJob is the entry point of a cluster job (`squall exec-job`):
// it finds its upstream outputs through this run's receipts, computes its
// cache key, reuses outputs already in the store under that key (early
// cutoff across jobs) or runs the stage, moves the outputs into the store
// and leaves its receipt. It never opens the index.
func RunClusterJob(ctx context.Context, jobPath string, reg *Registry, log io.Writer) (err error) {
	b, err := os.ReadFile(jobPath)
	if err != nil {
		return fmt.Errorf("read job: %w", err)
	}
	var cj clusterJob
	if err := json.Unmarshal(b, &cj); err != nil {
		return fmt.Errorf("job %s: %w", jobPath, err)
	}
	kind, ok := reg.Lookup(cj.Job.Kind)
	if !ok {
		return fmt.Errorf("job %s: this squall has no stage kind %q", jobPath, cj.Job.Kind)
	}
	// Upstream outputs, from the receipts of this run.
	ins := append([]cache.InputDigest(nil), cj.FileInputs...)
	var upstream []Input
	for _, u := range cj.Upstream {
		rb, err := os.ReadFile(runReceiptPath(cj.RunDir, u.ID))
		if err != nil {
			return fmt.Errorf("upstream %s left no receipt (did it finish?): %w", u.Label, err)
		}
		var rr runReceipt
		if err := json.Unmarshal(rb, &rr); err != nil {
			return fmt.Errorf("upstream %s receipt: %w", u.Label, err)
		}
		dir := cache.ObjectDirIn(cj.StoreDir, rr.Record.Key)
		in := Input{From: u.Stage, Kind: u.Kind, Scenario: u.Scenario, Block: u.Block, Member: u.Member, Dir: dir}
		for _, o := range rr.Record.Outputs {
			in.Files = append(in.Files, filepath.Join(dir, filepath.FromSlash(o.Name)))
		}
		upstream = append(upstream, in)
		ins = append(ins, cache.InputDigest{Label: "upstream " + u.Label, Digest: rr.Record.OutputDigest})
	}
	sort.Slice(ins, func(i, j int) bool { return ins[i].Label < ins[j].Label })
	job := cj.Job
	job.Inputs = append(upstream, job.Inputs...)
	key := instanceKey(job.Kind, cj.Version, job.Scenario, job.Block, job.Member, cj.Settings, cj.Sections, ins)
	rec := &cache.Record{Key: key, Instance: cj.ID, Stage: job.Stage, Kind: job.Kind, KindVersion: cj.Version,
		Scenario: job.Scenario, Block: job.Block, Member: job.Member, Settings: cj.Settings, Sections: cj.Sections, Inputs: ins}
	// Outputs already in the store under this key: reuse them.
	if old, err := cache.ReadReceipt(cache.ReceiptPathIn(cj.StoreDir, key)); err == nil && cache.CheckOutputsIn(cj.StoreDir, old, true) == nil {
		return writeRunReceipt(cj.RunDir, cj.ID, old, true)
	}
	work, err := os.MkdirTemp(filepath.Join(cj.StoreDir, "tmp"), "job-"+job.Stage+"-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(work)
	job.OutDir = filepath.Join(work, workOutDir)
	if err := os.Mkdir(job.OutDir, 0o755); err != nil {
		return err
	}
	job.Log = log
	t0 := time.Now()
	if err := runKind(ctx, kind, &job); err != nil {
		return err
	}
	if rec.Outputs, err = cache.BuildManifest(job.OutDir); err != nil {
		return fmt.Errorf("hash outputs: %w", err)
	}
	rec.OutputDigest = cache.ManifestDigest(rec.Outputs)
	rec.Seconds, rec.Finished = time.Since(t0).Seconds(), time.Now().UTC()
	if err := cache.CommitFiles(cj.StoreDir, job.OutDir, rec); err != nil {
		return err
	}
	return writeRunReceipt(cj.RunDir, cj.ID, rec, false)
}

// runKind runs a stage, turning a panic into an error with a trace.
func runKind(ctx context.Context, kind Kind, job *Job) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("stage %s crashed: %v\n%s", job.Stage, r, strings.TrimSpace(string(debug.Stack())))
		}
	}()
	return kind.Run(ctx, job)
}
