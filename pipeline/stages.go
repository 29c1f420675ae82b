package pipeline

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/dominikbraun/graph"
	"github.com/dominikbraun/graph/draw"
	"gopkg.in/yaml.v3"
)

func (c *Campaign) loadStages(l *loader, n *yaml.Node) {
	if n.Kind != yaml.MappingNode {
		l.errf(n, "stages", "", "expected a mapping of stage names, got %s", describe(n))
		return
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		field := "stages." + k.Value
		if !l.name(k, field, "stage") {
			continue
		}
		st := &Stage{Name: k.Value, Line: k.Line, node: v}
		for _, o := range c.Stages {
			if o.Name == st.Name {
				l.errf(k, field, "", "stage %q given twice", st.Name)
			}
		}
		for _, sc := range c.Scenarios {
			if sc.Name == st.Name {
				l.errf(k, field, "stage and scenario names share one namespace in inputs", "stage %q has the name of a scenario", st.Name)
			}
		}
		if st.Name == reservedInputAll {
			l.errf(k, field, "it names every scenario in a stage's inputs", "%q is a reserved word", st.Name)
		}
		p := l.pairs(v, field, []string{"kind", "inputs", "settings"})
		kn, ok := p["kind"]
		if !ok {
			l.errf(v, field+".kind", "`squall kinds` lists them", "a stage needs a kind")
			continue
		}
		kindName, _ := l.str(kn, field+".kind")
		kind, ok := c.registry.Lookup(kindName)
		if !ok {
			hint := "known kinds: " + strings.Join(c.registry.Names(), ", ")
			if cl := closest(kindName, c.registry.Names()); cl != "" {
				hint = "did you mean " + strconv.Quote(cl) + "?"
			}
			l.errf(kn, field+".kind", hint, "unknown stage kind %q", kindName)
			continue
		}
		st.Kind = kind
		if in, ok := p["inputs"]; ok {
			st.Inputs = l.strList(in, field+".inputs")
		} else {
			l.errf(v, field+".inputs", `name stages or scenarios, or "scenarios" for all of them`, "a stage needs inputs")
		}
		var sn *yaml.Node
		if s, ok := p["settings"]; ok {
			sn = s
		}
		st.Settings, st.Sweeps = l.settings(sn, v, field+".settings", kind)
		c.Stages = append(c.Stages, st)
	}
}

// settings checks and resolves a stage's settings against its kind.
func (l *loader) settings(n, parent *yaml.Node, field string, kind Kind) (Values, []string) {
	decl := kind.Settings()
	names := make([]string, len(decl))
	for i, s := range decl {
		names[i] = s.Name
	}
	given := map[string]*yaml.Node{}
	if n != nil && !(n.Kind == yaml.ScalarNode && n.Tag == "!!null") {
		given = l.pairs(n, field, names)
	}
	vals := Values{}
	var sweeps []string
	for _, s := range decl {
		v, ok := given[s.Name]
		if !ok {
			if s.Default == nil {
				at := parent
				if n != nil {
					at = n
				}
				l.errf(at, join(field, s.Name), s.describe(), "setting %q is required", s.Name)
				continue
			}
			vals[s.Name] = s.Default
			continue
		}
		f := join(field, s.Name)
		if s.Sweep && v.Kind == yaml.SequenceNode && !strings.HasPrefix(string(s.Type), "list") {
			if len(v.Content) == 0 {
				l.errf(v, f, "", "a sweep needs at least one value")
				continue
			}
			list := make([]any, 0, len(v.Content))
			for _, e := range v.Content {
				if x, ok := l.scalar(e, f, s); ok {
					list = append(list, x)
				}
			}
			vals[s.Name] = list
			sweeps = append(sweeps, s.Name)
			continue
		}
		if x, ok := l.value(v, f, s); ok {
			vals[s.Name] = x
		}
	}
	return vals, sweeps
}

func (s Setting) describe() string {
	d := string(s.Type)
	if s.Unit != "" {
		d += " in " + s.Unit
	}
	if s.Min != nil || s.Max != nil {
		lo, hi := "-inf", "+inf"
		if s.Min != nil {
			lo = strconv.FormatFloat(*s.Min, 'g', -1, 64)
		}
		if s.Max != nil {
			hi = strconv.FormatFloat(*s.Max, 'g', -1, 64)
		}
		d += fmt.Sprintf(" from %s to %s", lo, hi)
	}
	if len(s.Choices) > 0 {
		d += ", one of " + strings.Join(s.Choices, ", ")
	}
	return "expected " + d
}

func (l *loader) value(n *yaml.Node, field string, s Setting) (any, bool) {
	if strings.HasPrefix(string(s.Type), "list") {
		if n.Kind != yaml.SequenceNode {
			l.errf(n, field, s.describe(), "expected a list, got %s", describe(n))
			return nil, false
		}
		elem := s
		elem.Type = map[SettingType]SettingType{TypeFloats: TypeFloat, TypeInts: TypeInt, TypeStrings: TypeString}[s.Type]
		ok := true
		switch s.Type {
		case TypeFloats:
			out := []float64{}
			for _, e := range n.Content {
				x, good := l.scalar(e, field, elem)
				if good {
					out = append(out, x.(float64))
				}
				ok = ok && good
			}
			return out, ok
		case TypeInts:
			out := []int{}
			for _, e := range n.Content {
				x, good := l.scalar(e, field, elem)
				if good {
					out = append(out, x.(int))
				}
				ok = ok && good
			}
			return out, ok
		default:
			out := []string{}
			for _, e := range n.Content {
				x, good := l.scalar(e, field, elem)
				if good {
					out = append(out, x.(string))
				}
				ok = ok && good
			}
			return out, ok
		}
	}
	return l.scalar(n, field, s)
}

func (l *loader) scalar(n *yaml.Node, field string, s Setting) (any, bool) {
	if n.Kind != yaml.ScalarNode || n.Tag == "!!null" {
		l.errf(n, field, s.describe(), "got %s", describe(n))
		return nil, false
	}
	switch s.Type {
	case TypeFloat, TypeInt:
		f, err := strconv.ParseFloat(n.Value, 64)
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			l.errf(n, field, s.describe(), "%q is not a number", n.Value)
			return nil, false
		}
		if (s.Min != nil && f < *s.Min) || (s.Max != nil && f > *s.Max) {
			l.errf(n, field, s.describe(), "%s is out of range", strings.TrimSpace(n.Value+" "+s.Unit))
			return nil, false
		}
		if s.Type == TypeInt {
			if f != math.Trunc(f) {
				l.errf(n, field, s.describe(), "%q is not a whole number", n.Value)
				return nil, false
			}
			return int(f), true
		}
		return f, true
	case TypeBool:
		switch n.Value {
		case "true", "yes", "on":
			return true, true
		case "false", "no", "off":
			return false, true
		}
		l.errf(n, field, "true or false", "%q is not true or false", n.Value)
		return nil, false
	default: // strings and file patterns
		if len(s.Choices) > 0 && !contains(s.Choices, n.Value) {
			hint := s.describe()
			if c := closest(n.Value, s.Choices); c != "" {
				hint = "did you mean " + strconv.Quote(c) + "?"
			}
			l.errf(n, field, hint, "%q is not allowed", n.Value)
			return nil, false
		}
		return n.Value, true
	}
}

// checkGraph validates inputs and cycles with the graph library.
func (c *Campaign) checkGraph(l *loader) {
	g := graph.New(graph.StringHash, graph.Directed(), graph.PreventCycles())
	scen := map[string]bool{}
	for _, sc := range c.Scenarios {
		scen[sc.Name] = true
	}
	stage := map[string]*Stage{}
	for _, st := range c.Stages {
		stage[st.Name] = st
		_ = g.AddVertex(st.Name)
	}
	all := make([]string, 0, len(scen)+len(stage)+1)
	all = append(all, reservedInputAll)
	for n := range scen {
		all = append(all, n)
	}
	for n := range stage {
		all = append(all, n)
	}
	sort.Strings(all)
	for _, st := range c.Stages {
		var expanded []string
		seen := map[string]bool{}
		add := func(s string) {
			if !seen[s] {
				seen[s] = true
				expanded = append(expanded, s)
			}
		}
		for i, in := range st.Inputs {
			field := fmt.Sprintf("stages.%s.inputs[%d]", st.Name, i)
			at := st.node
			switch {
			case in == reservedInputAll:
				for _, sc := range c.Scenarios {
					add(sc.Name)
				}
			case scen[in]:
				add(in)
			case stage[in] != nil:
				if in == st.Name {
					l.errf(at, field, "", "stage %q reads its own output", in)
					continue
				}
				add(in)
				if err := g.AddEdge(in, st.Name); err != nil {
					if errors.Is(err, graph.ErrEdgeCreatesCycle) {
						path, _ := graph.ShortestPath(g, st.Name, in)
						path = append(path, st.Name)
						l.errf(at, field, "a stage may not depend on its own results", "input %q closes a cycle: %s", in, strings.Join(path, " -> "))
					} else if !errors.Is(err, graph.ErrEdgeAlreadyExists) {
						l.errf(at, field, "", "%v", err)
					}
				}
			default:
				hint := "inputs name stages, scenarios, or \"scenarios\""
				if cl := closest(in, all); cl != "" {
					hint = "did you mean " + strconv.Quote(cl) + "?"
				}
				l.errf(at, field, hint, "no stage or scenario is called %q", in)
			}
		}
		st.Inputs = expanded
	}
}

// checkKinds lets kinds validate settings against the campaign.
func (c *Campaign) checkKinds(l *loader) {
	c.Info.Scenarios = nil
	for _, sc := range c.Scenarios {
		c.Info.Scenarios = append(c.Info.Scenarios, ScenarioInfo{
			Name: sc.Name, FirstYear: sc.Period.First, LastYear: sc.Period.Last,
			Calendar: sc.Calendar, Blocks: sc.Blocks(),
		})
	}
	for _, st := range c.Stages {
		ch, ok := st.Kind.(Checker)
		if !ok {
			continue
		}
		// Each sweep member is checked with its own scalar values.
		for _, m := range sweepMembers(st) {
			if err := checkStage(ch, st.Name, m.values, &c.Info); err != nil {
				at := ""
				if m.name != "" {
					at = " (sweep member " + m.name + ")"
				}
				l.errf(st.node, "stages."+st.Name, "", "%v%s", err, at)
				break
			}
		}
	}
}

// StageByName finds a stage.
func (c *Campaign) StageByName(name string) *Stage {
	for _, st := range c.Stages {
		if st.Name == name {
			return st
		}
	}
	return nil
}

// ScenarioByName finds a scenario.
func (c *Campaign) ScenarioByName(name string) *Scenario {
	for _, sc := range c.Scenarios {
		if sc.Name == name {
			return sc
		}
	}
	return nil
}

// WriteDOT draws the stage graph (scenarios as sources) in Graphviz DOT
// with the graph library's renderer.
func (c *Campaign) WriteDOT(w io.Writer) error {
	g := graph.New(graph.StringHash, graph.Directed())
	for _, sc := range c.Scenarios {
		_ = g.AddVertex("scenario:"+sc.Name, graph.VertexAttributes(map[string]string{
			"shape": "folder", "label": fmt.Sprintf("%s %d-%d", sc.Name, sc.Period.First, sc.Period.Last)}))
	}
	for _, st := range c.Stages {
		_ = g.AddVertex(st.Name, graph.VertexAttributes(map[string]string{
			"shape": "box", "label": fmt.Sprintf("%s (%s)", st.Name, st.Kind.Name())}))
	}
	for _, st := range c.Stages {
		for _, in := range st.Inputs {
			from := in
			if c.ScenarioByName(in) != nil {
				from = "scenario:" + in
			}
			_ = g.AddEdge(from, st.Name)
		}
	}
	return draw.DOT(g, w, draw.GraphAttribute("rankdir", "LR"))
}

// checkStage calls a kind's Checker, turning a panic (a kind's bug) into
// an error that names the stage rather than a stack trace.
func checkStage(ch Checker, name string, v Values, info *CampaignInfo) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("internal error while checking stage %q: %v", name, r)
		}
	}()
	return ch.CheckStage(name, v, info)
}
