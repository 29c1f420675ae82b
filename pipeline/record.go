package pipeline

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/squall-climate/squall/cache"
)

// Instance states in a run record.
const (
	StateRan     = "ran"
	StateReused  = "reused"
	StateFailed  = "failed"
	StateBlocked = "blocked" // an input failed, so it did not run
	StateNotRun  = "not run" // interrupted or stopped after a failure
)

// RunRecord is the reproducibility record of one run: resolved settings,
// the tool version, every input and output digest. A reviewer reruns the
// campaign and compares two records with CompareRecords.
type RunRecord struct {
	ID           string           `json:"id"`
	Campaign     string           `json:"campaign"`
	CampaignFile string           `json:"campaign_file"`
	Tool         string           `json:"tool"`
	Started      time.Time        `json:"started"`
	Finished     time.Time        `json:"finished"`
	Seconds      float64          `json:"seconds"`
	Status       string           `json:"status"` // ok, failed, interrupted
	Jobs         int              `json:"jobs"`
	Counts       map[string]int   `json:"counts"`
	Info         CampaignInfo     `json:"campaign_context"`
	Stages       []StageRecord    `json:"stages"`
	Instances    []InstanceRecord `json:"instances"`
}

// StageRecord is a stage with its resolved settings.
type StageRecord struct {
	Name        string   `json:"name"`
	Kind        string   `json:"kind"`
	KindVersion int      `json:"kind_version"`
	Fan         string   `json:"fan"`
	Inputs      []string `json:"inputs"`
	Settings    Values   `json:"settings"`
}

// InstanceRecord is what happened to one instance.
type InstanceRecord struct {
	ID           string              `json:"id"`
	Label        string              `json:"label"`
	Stage        string              `json:"stage"`
	Kind         string              `json:"kind"`
	Scenario     string              `json:"scenario,omitempty"`
	Block        string              `json:"block,omitempty"`
	Member       string              `json:"member,omitempty"`
	State        string              `json:"state"`
	Reason       string              `json:"reason,omitempty"`
	Key          string              `json:"key,omitempty"`
	OutputDir    string              `json:"output_dir,omitempty"`
	Inputs       []cache.InputDigest `json:"inputs,omitempty"`
	Outputs      []cache.OutputFile  `json:"outputs,omitempty"`
	OutputDigest string              `json:"output_digest,omitempty"`
	Seconds      float64             `json:"seconds"`
	Error        string              `json:"error,omitempty"`
	LogTail      string              `json:"log_tail,omitempty"`
	LogFile      string              `json:"log_file,omitempty"`
}

// SaveRunRecord writes runs/<id>.json and runs/last.json in the store.
func SaveRunRecord(storeDir string, r *RunRecord) error {
	// Compact: a record of 100,000 instances is read by machines (and
	// `squall record` prints it indented).
	b, err := json.Marshal(r)
	if err != nil {
		return err
	}
	dir := filepath.Join(storeDir, "runs")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	path := filepath.Join(dir, r.ID+".json")
	if err := writeAtomic(path, b); err != nil {
		return err
	}
	// last.json is a second name for the same file, replaced atomically.
	tmp := filepath.Join(dir, "last.json.tmp")
	os.Remove(tmp)
	if err := os.Link(path, tmp); err != nil {
		return writeAtomic(filepath.Join(dir, "last.json"), b)
	}
	return os.Rename(tmp, filepath.Join(dir, "last.json"))
}

// LoadRunRecord reads a run record file.
func LoadRunRecord(path string) (*RunRecord, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var r RunRecord
	if err := json.Unmarshal(b, &r); err != nil {
		return nil, fmt.Errorf("%s is not a run record: %w", path, err)
	}
	return &r, nil
}

// LastRunRecord reads the newest run record of a store.
func LastRunRecord(storeDir string) (*RunRecord, error) {
	p := filepath.Join(storeDir, "runs", "last.json")
	if _, err := os.Stat(p); err != nil {
		return nil, fmt.Errorf("no run recorded in %s yet: run `squall run` first", storeDir)
	}
	return LoadRunRecord(p)
}

// Difference is one way two run records disagree.
type Difference struct {
	Instance string `json:"instance"`
	What     string `json:"what"`
}

// CompareRecords lists the instances whose outputs (or settings, or
// inputs) differ between two run records. Timings and paths are ignored.
func CompareRecords(a, b *RunRecord) []Difference {
	var out []Difference
	bi := map[string]InstanceRecord{}
	for _, x := range b.Instances {
		bi[x.ID] = x
	}
	seen := map[string]bool{}
	for _, x := range a.Instances {
		seen[x.ID] = true
		y, ok := bi[x.ID]
		switch {
		case !ok:
			out = append(out, Difference{x.Label, "only in the first record"})
		case x.OutputDigest == "" || y.OutputDigest == "":
			out = append(out, Difference{x.Label, fmt.Sprintf("no outputs to compare (%s vs %s)", x.State, y.State)})
		case x.OutputDigest != y.OutputDigest:
			what := "outputs differ"
			ys := map[string]string{}
			for _, o := range y.Outputs {
				ys[o.Name] = o.Digest.String()
			}
			for _, o := range x.Outputs {
				if ys[o.Name] != o.Digest.String() {
					what += ": " + o.Name
					break
				}
			}
			out = append(out, Difference{x.Label, what})
		}
	}
	for _, y := range b.Instances {
		if !seen[y.ID] {
			out = append(out, Difference{y.Label, "only in the second record"})
		}
	}
	return out
}
