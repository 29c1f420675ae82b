package pipeline

import (
	"fmt"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/dominikbraun/graph"
)

// Instance is one unit of work: a stage applied to one (scenario, block,
// member) slice of its inputs. Instances are created stage by stage in
// dependency order, so a plan's slice of instances is already a valid
// execution order.
type Instance struct {
	Stage    *Stage
	Scenario string
	Block    string
	Member   string
	Settings Values
	// Upstream are the instances this one reads, in a stable order.
	Upstream []*Instance
	// Files are raw inputs: scenario blocks and file-pattern settings.
	Files []Input

	index      int
	dependents []*Instance
}

// ID is the stable identity of an instance across runs.
func (in *Instance) ID() string {
	return in.Stage.Name + "/" + in.Scenario + "/" + in.Block + "/" + in.Member
}

// Label is the identity for people: stage[scenario/block/member].
func (in *Instance) Label() string {
	parts := []string{}
	for _, p := range []string{in.Scenario, in.Block, in.Member} {
		if p != "" {
			parts = append(parts, p)
		}
	}
	if len(parts) == 0 {
		return in.Stage.Name
	}
	return in.Stage.Name + "[" + strings.Join(parts, "/") + "]"
}

type coord struct{ sc, blk, mem string }

// compatible: every dimension is either unset on one side or equal.
func compatible(a, b coord) bool {
	return (a.sc == "" || b.sc == "" || a.sc == b.sc) &&
		(a.blk == "" || b.blk == "" || a.blk == b.blk) &&
		(a.mem == "" || b.mem == "" || a.mem == b.mem)
}

// covers: a is b or coarser than b.
func covers(a, b coord) bool {
	return (a.sc == "" || a.sc == b.sc) && (a.blk == "" || a.blk == b.blk) && (a.mem == "" || a.mem == b.mem)
}

type source struct {
	c        coord
	instance *Instance // nil for raw files
	raw      *Input
}

// stageOrder returns stages so that every stage follows its inputs; the
// stage graph is small, so the graph library's sort is fine here.
func (c *Campaign) stageOrder() ([]*Stage, error) {
	g := graph.New(graph.StringHash, graph.Directed(), graph.Acyclic())
	for _, st := range c.Stages {
		_ = g.AddVertex(st.Name)
	}
	for _, st := range c.Stages {
		for _, in := range st.Inputs {
			if c.StageByName(in) != nil {
				_ = g.AddEdge(in, st.Name)
			}
		}
	}
	pos := map[string]int{}
	for i, st := range c.Stages {
		pos[st.Name] = i
	}
	names, err := graph.StableTopologicalSort(g, func(a, b string) bool { return pos[a] < pos[b] })
	if err != nil {
		return nil, err
	}
	out := make([]*Stage, len(names))
	for i, n := range names {
		out[i] = c.StageByName(n)
	}
	return out, nil
}

// Expand turns the stage graph into the instance graph.
func (c *Campaign) Expand() ([]*Instance, error) {
	order, err := c.stageOrder()
	if err != nil {
		return nil, err
	}
	byStage := map[string][]*Instance{}
	var all []*Instance
	for _, st := range order {
		// Scenario inputs form one source together (each scenario covers
		// its own blocks); each stage input is a source of its own that
		// must cover every instance.
		var srcs [][]source
		var srcNames []string
		var raw []source
		var rawNames []string
		for _, in := range st.Inputs {
			if sc := c.ScenarioByName(in); sc != nil {
				for _, b := range sc.Blocks() {
					raw = append(raw, source{c: coord{sc.Name, b, ""}, raw: &Input{From: sc.Name, Kind: "scenario", Scenario: sc.Name, Block: b, Files: sc.Files[b]}})
				}
				rawNames = append(rawNames, in)
				continue
			}
			var s []source
			for _, up := range byStage[in] {
				s = append(s, source{c: coord{up.Scenario, up.Block, up.Member}, instance: up})
			}
			if len(s) == 0 {
				return nil, &InvalidError{fmt.Errorf("%s: stage %q: input %q has no instances", c.File, st.Name, in)}
			}
			srcs = append(srcs, s)
			srcNames = append(srcNames, in)
		}
		if len(raw) > 0 {
			srcs = append(srcs, raw)
			srcNames = append(srcNames, strings.Join(rawNames, ", "))
		}
		targets := targetsFor(st.Kind.Fan(), srcs)
		members := sweepMembers(st)
		idx := make([]*sourceIndex, len(srcs))
		for i, s := range srcs {
			idx[i] = newSourceIndex(s)
		}
		for _, t := range targets {
			var ups []*Instance
			var files []Input
			for i := range srcs {
				matched := idx[i].compatible(t)
				if len(matched) == 0 {
					return nil, &InvalidError{fmt.Errorf("%s: stage %q: input %q has nothing for %s", c.File, st.Name, srcNames[i], describeCoord(t))}
				}
				for _, x := range matched {
					if x.instance != nil {
						ups = append(ups, x.instance)
					} else {
						files = append(files, *x.raw)
					}
				}
			}
			for _, m := range members {
				inst := &Instance{Stage: st, Scenario: t.sc, Block: t.blk, Member: joinMember(t.mem, m.name), Settings: m.values, Upstream: ups}
				inst.Files = append(inst.Files, files...)
				pf, err := c.patternFiles(inst)
				if err != nil {
					return nil, err
				}
				inst.Files = append(inst.Files, pf...)
				inst.index = len(all)
				for _, u := range ups {
					u.dependents = append(u.dependents, inst)
				}
				all = append(all, inst)
				byStage[st.Name] = append(byStage[st.Name], inst)
			}
		}
	}
	return all, nil
}

func describeCoord(t coord) string {
	var parts []string
	if t.sc != "" {
		parts = append(parts, "scenario "+t.sc)
	}
	if t.blk != "" {
		parts = append(parts, "block "+t.blk)
	}
	if t.mem != "" {
		parts = append(parts, "member "+t.mem)
	}
	if len(parts) == 0 {
		return "the campaign"
	}
	return strings.Join(parts, ", ")
}

func joinMember(a, b string) string {
	switch {
	case a == "":
		return b
	case b == "":
		return a
	}
	return a + "," + b
}

// targetsFor picks the instance coordinates of a stage from its inputs.
func targetsFor(fan Fan, srcs [][]source) []coord {
	seen := map[coord]bool{}
	var u []coord
	for _, s := range srcs {
		for _, x := range s {
			c := x.c
			switch fan {
			case FanMembers:
				c.mem = ""
			case FanScenario:
				c.blk, c.mem = "", ""
			case FanCampaign:
				c = coord{}
			}
			if !seen[c] {
				seen[c] = true
				u = append(u, c)
			}
		}
	}
	// Keep the finest coordinates: coarser ones are broadcast into them.
	// A coordinate is coarser than another if it is one of that one's
	// generalisations (some set dimensions cleared): 7 per coordinate, so
	// this is linear in the number of input instances.
	general := map[coord]bool{}
	for _, a := range u {
		for _, g := range generalisations(a) {
			if g != a {
				general[g] = true
			}
		}
	}
	var out []coord
	for _, a := range u {
		if !general[a] {
			out = append(out, a)
		}
	}
	sort.Slice(out, func(i, j int) bool {
		a, b := out[i], out[j]
		if a.sc != b.sc {
			return a.sc < b.sc
		}
		if a.blk != b.blk {
			return a.blk < b.blk
		}
		return a.mem < b.mem
	})
	return out
}

type member struct {
	name   string
	values Values
}

// sweepMembers expands list-valued sweep settings into the cartesian
// product of their values, one member each.
func sweepMembers(st *Stage) []member {
	if len(st.Sweeps) == 0 {
		return []member{{"", st.Settings}}
	}
	ms := []member{{"", Values{}}}
	for k, v := range st.Settings {
		ms[0].values[k] = v
	}
	for _, name := range st.Sweeps {
		list := st.Settings[name].([]any)
		var next []member
		for _, m := range ms {
			for _, x := range list {
				v := Values{}
				for k, y := range m.values {
					v[k] = y
				}
				v[name] = x
				next = append(next, member{joinMember(m.name, name+"="+formatValue(x)), v})
			}
		}
		ms = next
	}
	return ms
}

func formatValue(x any) string {
	switch v := x.(type) {
	case float64:
		return strconv.FormatFloat(v, 'g', -1, 64)
	case int:
		return strconv.Itoa(v)
	}
	return fmt.Sprint(x)
}

// patternFiles resolves the file-pattern settings of an instance.
func (c *Campaign) patternFiles(inst *Instance) ([]Input, error) {
	var out []Input
	for _, s := range inst.Stage.Kind.Settings() {
		if s.Type != TypeFiles {
			continue
		}
		pat, _ := inst.Settings[s.Name].(string)
		if pat == "" {
			continue
		}
		type sb struct{ sc, blk string }
		var pairs []sb
		if inst.Scenario != "" && inst.Block != "" {
			pairs = []sb{{inst.Scenario, inst.Block}}
		} else if strings.Contains(pat, "{scenario}") || strings.Contains(pat, "{block}") {
			seen := map[sb]bool{}
			for _, sc := range c.Scenarios {
				for _, b := range sc.Blocks() {
					p := sb{sc.Name, b}
					if seen[p] || !compatible(coord{sc.Name, b, ""}, coord{inst.Scenario, inst.Block, ""}) {
						continue
					}
					seen[p] = true
					pairs = append(pairs, p)
				}
			}
		} else {
			pairs = []sb{{"", ""}}
		}
		for _, p := range pairs {
			g := strings.NewReplacer("{scenario}", p.sc, "{block}", p.blk).Replace(pat)
			matches, err := filepath.Glob(c.abs(g))
			if err != nil || len(matches) == 0 {
				return nil, &InvalidError{fmt.Errorf("%s:%d: stages.%s.settings.%s: pattern %q matches no file (paths are relative to %s)", c.File, inst.Stage.Line, inst.Stage.Name, s.Name, g, c.Info.Dir)}
			}
			sort.Strings(matches)
			out = append(out, Input{From: s.Name, Kind: "file", Scenario: p.sc, Block: p.blk, Files: matches})
		}
	}
	return out, nil
}

// generalisations lists a coordinate and every coarser one covering it,
// each once (clearing a dimension that is already empty adds nothing).
func generalisations(a coord) []coord {
	out := make([]coord, 0, 8)
	for mask := 0; mask < 8; mask++ {
		if (mask&1 != 0 && a.sc == "") || (mask&2 != 0 && a.blk == "") || (mask&4 != 0 && a.mem == "") {
			continue
		}
		g := a
		if mask&1 != 0 {
			g.sc = ""
		}
		if mask&2 != 0 {
			g.blk = ""
		}
		if mask&4 != 0 {
			g.mem = ""
		}
		out = append(out, g)
	}
	return out
}

// sourceIndex finds the instances of one input compatible with a target
// without scanning them all: coarser-or-equal ones through the target's
// generalisations, finer ones through partial keys.
type sourceIndex struct {
	all   []source
	exact map[coord][]source
	bySB  map[coord][]source // key has mem cleared
	byS   map[string][]source
	pos   map[source]int // position in all, built on first coarse lookup
	// scMembers: scenario-wide sources of one member (block unset);
	// blockOnly: sources with a block but no scenario.
	scMembers map[string][]source
	blockOnly []source
}

func newSourceIndex(srcs []source) *sourceIndex {
	ix := &sourceIndex{all: srcs, exact: map[coord][]source{}, bySB: map[coord][]source{}, byS: map[string][]source{}, scMembers: map[string][]source{}}
	for _, x := range srcs {
		if x.c.sc != "" && x.c.blk == "" && x.c.mem != "" {
			ix.scMembers[x.c.sc] = append(ix.scMembers[x.c.sc], x)
		}
		if x.c.sc == "" && x.c.blk != "" {
			ix.blockOnly = append(ix.blockOnly, x)
		}
		ix.exact[x.c] = append(ix.exact[x.c], x)
		if x.c.sc != "" {
			ix.byS[x.c.sc] = append(ix.byS[x.c.sc], x)
			if x.c.blk != "" {
				k := x.c
				k.mem = ""
				ix.bySB[k] = append(ix.bySB[k], x)
			}
		}
	}
	return ix
}

func (ix *sourceIndex) compatible(t coord) []source {
	var cand []source
	switch {
	case t.sc == "":
		cand = ix.all
	case t.blk == "":
		cand = append(cand, ix.byS[t.sc]...)
		cand = append(cand, ix.exact[coord{}]...)
		for _, g := range []coord{{"", "", t.mem}} {
			if g != (coord{}) {
				cand = append(cand, ix.exact[g]...)
			}
		}
		// Sources with an empty scenario but a block are compatible too.
		cand = append(cand, ix.blockOnly...)
	case t.mem == "":
		// Distinct groups: same (scenario, block) with any member; the
		// coarser generalisations; scenario-wide members.
		cand = append(cand, ix.bySB[coord{t.sc, t.blk, ""}]...)
		for _, g := range generalisations(coord{t.sc, t.blk, ""}) {
			if g.blk == "" || g.sc == "" {
				cand = append(cand, ix.exact[g]...)
			}
		}
		cand = append(cand, ix.scMembers[t.sc]...)
		out := cand[:0:0]
		for _, x := range cand {
			if compatible(x.c, t) {
				out = append(out, x)
			}
		}
		return out
	default:
		for _, g := range generalisations(t) {
			cand = append(cand, ix.exact[g]...)
		}
	}
	if t.sc != "" && t.blk != "" {
		// The generalisations are distinct, so no source repeats.
		return cand
	}
	// Coarse targets (fan-ins) are few: filter and de-duplicate, keeping
	// the inputs in their original order so keys and jobs are stable.
	if ix.pos == nil {
		ix.pos = make(map[source]int, len(ix.all))
		for i, x := range ix.all {
			ix.pos[x] = i
		}
	}
	keep := map[int]bool{}
	for _, x := range cand {
		if compatible(x.c, t) {
			keep[ix.pos[x]] = true
		}
	}
	order := make([]int, 0, len(keep))
	for i := range keep {
		order = append(order, i)
	}
	sort.Ints(order)
	out := make([]source, len(order))
	for i, k := range order {
		out[i] = ix.all[k]
	}
	return out
}
