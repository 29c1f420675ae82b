package pipeline

import (
	"context"
	"fmt"
	"io"
	"sort"
)

// Fan says how a stage's instances are formed from the instances of its
// inputs. Every instance is identified by (stage, scenario, block, member);
// an empty scenario, block or member means "all of them" (a fan-in).
type Fan int

const (
	// FanBlock makes one instance per (scenario, block, member) found among
	// the inputs. Inputs that are coarser (a fan-in instance with an empty
	// block or scenario) are broadcast to every instance they cover.
	FanBlock Fan = iota
	// FanMembers makes one instance per (scenario, block) and hands it every
	// sweep member of its inputs (for agreement fields across a sweep).
	FanMembers
	// FanScenario makes one instance per scenario and hands it every block.
	FanScenario
	// FanCampaign makes a single instance that sees every input instance.
	FanCampaign
)

func (f Fan) String() string {
	switch f {
	case FanBlock:
		return "per block"
	case FanMembers:
		return "per block, all sweep members"
	case FanScenario:
		return "per scenario"
	case FanCampaign:
		return "whole campaign"
	}
	return fmt.Sprintf("Fan(%d)", int(f))
}

// SettingType names the YAML shapes a setting accepts.
type SettingType string

const (
	TypeInt     SettingType = "int"
	TypeFloat   SettingType = "float"
	TypeString  SettingType = "string"
	TypeBool    SettingType = "bool"
	TypeFloats  SettingType = "list of float"
	TypeInts    SettingType = "list of int"
	TypeStrings SettingType = "list of string"
	// TypeFiles is a glob relative to the campaign file's directory that may
	// contain {scenario} and {block}. The pipeline expands it per instance,
	// hashes the files into the cache key, and hands them to Run as an Input
	// with Kind "file" and From set to the setting's name; the setting's
	// value in Values stays the pattern text. An empty pattern means none.
	TypeFiles SettingType = "file pattern"
)

// Setting declares one typed setting of a stage kind. Default is the Go
// value the stage sees when the campaign leaves the setting out: int,
// float64, string, bool, []float64, []int or []string; nil means required.
type Setting struct {
	Name    string
	Type    SettingType
	Unit    string   // SI or CF unit string, "" when dimensionless
	Default any      // nil: the campaign must give it
	Min     *float64 // inclusive bounds for numbers (each element of a list)
	Max     *float64
	Choices []string // allowed values for strings
	// Sweep allows a scalar setting to be given as a list; the stage then
	// runs one member per value, each cached on its own.
	Sweep bool
	Doc   string // what it means, and where its default comes from
}

// Bound is a helper for Setting.Min and Setting.Max.
func Bound(x float64) *float64 { return &x }

// Kind is a stage kind: a pure function of (kind, version, settings, input
// contents) that writes files into a directory it owns. Implementations
// live under stages/ and are listed in stages/all; they never touch the
// cache or a scheduler.
type Kind interface {
	Name() string
	// Version changes whenever the same inputs and settings would give
	// different outputs; it is part of every cache key.
	Version() int
	// Doc is one paragraph for `squall kinds`.
	Doc() string
	Fan() Fan
	Settings() []Setting
	// Run does the work of one instance. It must write only below job.OutDir
	// and must not assume it runs in the same process as the planner.
	Run(ctx context.Context, job *Job) error
}

// Checker is implemented by kinds that validate their settings against the
// campaign beyond types and ranges (for example a leakage rule). It runs at
// load time, before anything is planned, so mistakes cost nothing.
type Checker interface {
	CheckStage(stage string, s Values, c *CampaignInfo) error
}

// Job is everything one instance needs. It is serialised to JSON and handed
// to a child process (or a cluster job), so it holds only plain data.
type Job struct {
	Stage    string       `json:"stage"`
	Kind     string       `json:"kind"`
	Scenario string       `json:"scenario,omitempty"`
	Block    string       `json:"block,omitempty"`
	Member   string       `json:"member,omitempty"`
	Settings Values       `json:"settings"`
	Inputs   []Input      `json:"inputs"`
	OutDir   string       `json:"out_dir"`
	Campaign CampaignInfo `json:"campaign"`
	// Log receives the instance's diagnostics (the child's stderr).
	Log io.Writer `json:"-"`
}

// Input is one upstream instance (or one scenario block of raw files) that
// an instance reads.
type Input struct {
	From     string `json:"from"` // stage or scenario name
	Kind     string `json:"kind"` // stage kind, or "scenario" for raw files
	Scenario string `json:"scenario,omitempty"`
	Block    string `json:"block,omitempty"`
	Member   string `json:"member,omitempty"`
	// Dir is the upstream output directory ("" for raw files).
	Dir string `json:"dir,omitempty"`
	// Files are absolute paths: the raw files of a scenario block, or every
	// output file of the upstream instance, sorted.
	Files []string `json:"files"`
}

// InputsFrom returns the inputs whose From is name, in plan order.
func (j *Job) InputsFrom(name string) []Input {
	var out []Input
	for _, in := range j.Inputs {
		if in.From == name {
			out = append(out, in)
		}
	}
	return out
}

// InputsOfKind returns the inputs produced by a stage of the given kind
// ("scenario" for raw files).
func (j *Job) InputsOfKind(kind string) []Input {
	var out []Input
	for _, in := range j.Inputs {
		if in.Kind == kind {
			out = append(out, in)
		}
	}
	return out
}

// Logf writes a line to the instance log.
func (j *Job) Logf(format string, args ...any) {
	if j.Log != nil {
		fmt.Fprintf(j.Log, format+"\n", args...)
	}
}

// Registry is the explicit list of stage kinds a binary knows.
type Registry struct {
	kinds map[string]Kind
}

// NewRegistry builds a registry; a duplicate name is a programming error.
func NewRegistry(kinds ...Kind) *Registry {
	r := &Registry{kinds: map[string]Kind{}}
	for _, k := range kinds {
		if _, dup := r.kinds[k.Name()]; dup {
			panic("pipeline: stage kind registered twice: " + k.Name())
		}
		r.kinds[k.Name()] = k
	}
	return r
}

// Lookup returns the kind with the given name.
func (r *Registry) Lookup(name string) (Kind, bool) {
	k, ok := r.kinds[name]
	return k, ok
}

// Names lists the registered kinds in sorted order.
func (r *Registry) Names() []string {
	names := make([]string, 0, len(r.kinds))
	for n := range r.kinds {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}
