package pipeline

import (
	"encoding/json"
	"fmt"
	"path/filepath"
	"sort"
	"strings"

	"github.com/squall-climate/squall/cache"
)

// Action is what a plan does with an instance.
type Action string

const (
	ActionRun   Action = "run"
	ActionReuse Action = "reuse"
)

// Step is one instance in a plan with its decision.
type Step struct {
	*Instance
	Action Action
	Reason string        // why it runs; empty for reuse
	Key    cache.Digest  // zero while an upstream instance has yet to run
	Record *cache.Record // the outputs: set when reused, or once it has run
	inputs []cache.InputDigest
}

// Plan is the instance graph with a decision per instance.
type Plan struct {
	Campaign *Campaign
	Steps    []*Step // in execution order
	byInst   map[*Instance]*Step
}

// NewPlan expands the campaign and decides, for every instance, whether
// its recorded outputs can be reused and, if not, why it must run.
func NewPlan(c *Campaign, s *cache.Store) (*Plan, error) {
	insts, err := c.Expand()
	if err != nil {
		return nil, err
	}
	p := &Plan{Campaign: c, byInst: map[*Instance]*Step{}}
	h := s.NewHasher()
	var paths []string
	for _, in := range insts {
		for _, f := range in.Files {
			paths = append(paths, f.Files...)
		}
	}
	h.Prefetch(paths) // one index transaction for every memo
	digests := map[string]cache.Digest{}
	for _, in := range insts {
		st := &Step{Instance: in}
		p.Steps = append(p.Steps, st)
		p.byInst[in] = st
		for _, f := range in.Files {
			for _, path := range f.Files {
				if _, ok := digests[path]; ok {
					continue
				}
				d, err := h.File(path)
				if err != nil {
					return nil, &InvalidError{fmt.Errorf("hash input %s: %w", path, err)}
				}
				digests[path] = d
			}
		}
	}
	if err := h.Flush(); err != nil {
		return nil, fmt.Errorf("record input digests: %w", err)
	}
	for _, st := range p.Steps {
		st.inputs = p.fileInputs(st.Instance, digests)
		if err := p.decide(st, s); err != nil {
			return nil, err
		}
	}
	return p, nil
}

// fileInputs lists raw-file inputs with labels relative to the campaign.
func (p *Plan) fileInputs(in *Instance, digests map[string]cache.Digest) []cache.InputDigest {
	var out []cache.InputDigest
	for _, f := range in.Files {
		for _, path := range f.Files {
			rel, err := filepath.Rel(p.Campaign.Info.Dir, path)
			if err != nil || strings.HasPrefix(rel, "..") {
				rel = path
			}
			out = append(out, cache.InputDigest{Label: "file " + f.From + ":" + filepath.ToSlash(rel), Digest: digests[path]})
		}
	}
	return out
}

// decide sets a step's action from what the store knows. It is called at
// plan time and again at run time once upstream outputs are known.
func (p *Plan) decide(st *Step, s *cache.Store) error {
	for _, u := range st.Upstream {
		if p.byInst[u].Record == nil {
			st.Action, st.Key = ActionRun, cache.Digest{}
			_, hasLatest, err := s.Latest(st.ID())
			if err != nil {
				return err
			}
			if !hasLatest {
				st.Reason = "never run"
			} else {
				st.Reason = "upstream " + u.Label() + " will run"
			}
			return nil
		}
	}
	st.Key = p.key(st)
	rec, ok, err := s.Lookup(st.Key)
	if err != nil {
		return err
	}
	if ok {
		if prob := s.CheckOutputs(rec, false); prob != nil {
			st.Action, st.Reason = ActionRun, "output "+prob.String()
			return nil
		}
		st.Action, st.Record, st.Reason = ActionReuse, rec, ""
		return nil
	}
	// Only an instance that must run needs its history, to say why.
	st.Action = ActionRun
	latest, hasLatest, err := s.Latest(st.ID())
	if err != nil {
		return err
	}
	if !hasLatest {
		st.Reason = "never run"
		return nil
	}
	st.Reason = p.why(st, latest)
	return nil
}

// inputDigests lists every input of a step with its digest, upstream
// outputs first. Upstream records must be known.
func (p *Plan) inputDigests(st *Step) []cache.InputDigest {
	var out []cache.InputDigest
	for _, u := range st.Upstream {
		out = append(out, cache.InputDigest{Label: "upstream " + u.Label(), Digest: p.byInst[u].Record.OutputDigest})
	}
	out = append(out, st.inputs...)
	sort.Slice(out, func(i, j int) bool { return out[i].Label < out[j].Label })
	return out
}

func canonicalJSON(v any) []byte {
	b, err := json.Marshal(v) // maps are written with sorted keys
	if err != nil {
		panic(err)
	}
	return b
}

// sections returns the canonical campaign context a kind's key includes.
func sectionsOf(k Kind, info *CampaignInfo) []byte {
	secs := []string{SectionVariables, SectionChannels, SectionSplit, SectionRegions}
	if su, ok := k.(SectionUser); ok {
		secs = su.CampaignSections()
	}
	m := map[string]any{}
	for _, s := range secs {
		switch s {
		case SectionScenarios:
			m[s] = scenariosFor(k, info.Scenarios)
		case SectionVariables:
			m[s] = info.Variables
		case SectionChannels:
			m[s] = info.Channels
		case SectionSplit:
			m[s] = info.Split
		case SectionRegions:
			m[s] = info.Regions
		}
	}
	return canonicalJSON(m)
}

// scenariosFor is the scenarios section as a kind's key sees it. A
// per-block kind already has its own scenario and block in the key, so it
// sees only names and calendars: adding a year to a scenario must not rerun
// the other years. A fan-in kind sees periods and blocks too (a year with
// no events still counts as a zero in a trend).
func scenariosFor(k Kind, scs []ScenarioInfo) any {
	if f := k.Fan(); f != FanBlock && f != FanMembers {
		return scs
	}
	type stable struct {
		Name     string `json:"name"`
		Calendar string `json:"calendar,omitempty"`
	}
	out := make([]stable, len(scs))
	for i, sc := range scs {
		out[i] = stable{sc.Name, sc.Calendar}
	}
	return out
}

func (p *Plan) key(st *Step) cache.Digest {
	return instanceKey(st.Stage.Kind.Name(), st.Stage.Kind.Version(), st.Scenario, st.Block, st.Member,
		canonicalJSON(st.Settings), cache.Sum(sectionsOf(st.Stage.Kind, &p.Campaign.Info)), p.inputDigests(st))
}

// instanceKey is the cache key of an instance; cluster jobs compute it
// too, from the receipts of their upstream instances. ins must be sorted
// by label.
func instanceKey(kind string, version int, scenario, block, member string, settings []byte, sections cache.Digest, ins []cache.InputDigest) cache.Digest {
	k := cache.NewKey("instance/v1")
	k.String(kind).Int(int64(version))
	k.String(scenario).String(block).String(member)
	k.Bytes(settings)
	k.Digest(sections)
	k.Int(int64(len(ins)))
	for _, in := range ins {
		k.String(in.Label).Digest(in.Digest)
	}
	return k.Sum()
}

// why explains what differs from the last attempt of the same instance.
func (p *Plan) why(st *Step, last *cache.Record) string {
	var reasons []string
	if last.KindVersion != st.Stage.Kind.Version() || last.Kind != st.Stage.Kind.Name() {
		reasons = append(reasons, fmt.Sprintf("stage kind changed (%s v%d -> %s v%d)", last.Kind, last.KindVersion, st.Stage.Kind.Name(), st.Stage.Kind.Version()))
	}
	var old map[string]any
	_ = json.Unmarshal(last.Settings, &old)
	var cur map[string]any
	_ = json.Unmarshal(canonicalJSON(st.Settings), &cur)
	var names []string
	for n := range cur {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		a, b := string(canonicalJSON(old[n])), string(canonicalJSON(cur[n]))
		if a != b {
			reasons = append(reasons, fmt.Sprintf("setting %s changed (%s -> %s)", n, a, b))
		}
	}
	if last.Sections != cache.Sum(sectionsOf(st.Stage.Kind, &p.Campaign.Info)) {
		reasons = append(reasons, "campaign context changed (channels, variables, split or regions)")
	}
	prev := map[string]cache.Digest{}
	for _, in := range last.Inputs {
		prev[in.Label] = in.Digest
	}
	now := p.inputDigests(st)
	seen := map[string]bool{}
	for _, in := range now {
		seen[in.Label] = true
		d, ok := prev[in.Label]
		switch {
		case !ok:
			reasons = append(reasons, "new input "+strings.TrimPrefix(in.Label, "file "))
		case d != in.Digest:
			if strings.HasPrefix(in.Label, "upstream ") {
				reasons = append(reasons, strings.TrimPrefix(in.Label, "upstream ")+" output changed")
			} else {
				reasons = append(reasons, "input file "+strings.TrimPrefix(in.Label, "file ")+" changed")
			}
		}
	}
	for _, in := range last.Inputs {
		if !seen[in.Label] {
			reasons = append(reasons, "input removed: "+strings.TrimPrefix(in.Label, "file "))
		}
	}
	if last.Failed && len(reasons) == 0 {
		return "failed last time"
	}
	if len(reasons) == 0 {
		return "outputs no longer in the store"
	}
	if len(reasons) > 3 {
		reasons = append(reasons[:3], fmt.Sprintf("and %d more changes", len(reasons)-3))
	}
	return strings.Join(reasons, "; ")
}

// Counts tallies actions.
func (p *Plan) Counts() (run, reuse int) {
	for _, st := range p.Steps {
		if st.Action == ActionRun {
			run++
		} else {
			reuse++
		}
	}
	return
}

// ReferencedKeys lists the store keys a campaign still uses: the keys of
// its reusable instances and of each instance's last successful attempt.
func ReferencedKeys(c *Campaign, s *cache.Store) (map[cache.Digest]bool, error) {
	p, err := NewPlan(c, s)
	if err != nil {
		return nil, err
	}
	keep := map[cache.Digest]bool{}
	for _, st := range p.Steps {
		if st.Record != nil {
			keep[st.Record.Key] = true
		}
		if last, ok, _ := s.Latest(st.ID()); ok && !last.Failed {
			keep[last.Key] = true
		}
	}
	return keep, nil
}
