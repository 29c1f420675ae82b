package pipeline

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// Campaign is a loaded, validated campaign file.
type Campaign struct {
	File      string // absolute path of the campaign file
	Info      CampaignInfo
	StoreDir  string
	Scenarios []*Scenario
	Stages    []*Stage // in file order
	registry  *Registry
}

// Scenario is one set of model output files.
type Scenario struct {
	Name        string
	Globs       []string
	Period      Period
	Calendar    string
	YearPattern *regexp.Regexp
	// Files maps a block (year) to its files, sorted.
	Files map[string][]string
	Line  int
}

// Stage is one node of the stage graph as written in the campaign.
type Stage struct {
	Name     string
	Kind     Kind
	Inputs   []string // stage or scenario names, "scenarios" expanded
	Settings Values   // resolved: defaults filled in; sweep settings hold their lists
	Sweeps   []string // names of settings given as lists (one member per value)
	Line     int
	node     *yaml.Node
}

// reservedInputAll names every scenario in an inputs list.
const reservedInputAll = "scenarios"

var nameRE = regexp.MustCompile(`^[a-z0-9][a-z0-9_-]*$`)

var defaultYearRE = regexp.MustCompile(`(?:^|[^0-9])((?:1[0-9]|2[0-9]|[3-9][0-9])[0-9]{2})(?:[^0-9]|$)`)

type loader struct {
	file string
	errs SpecErrors
}

func (l *loader) errf(n *yaml.Node, field, hint, format string, args ...any) {
	e := &SpecError{File: l.file, Field: field, Msg: fmt.Sprintf(format, args...), Hint: hint}
	if n != nil {
		e.Line, e.Col = n.Line, n.Column
	}
	l.errs = append(l.errs, e)
}

// pairs returns the key/value nodes of a mapping, reporting unknown keys.
func (l *loader) pairs(n *yaml.Node, field string, allowed []string) map[string]*yaml.Node {
	out := map[string]*yaml.Node{}
	if n.Kind != yaml.MappingNode {
		l.errf(n, field, "", "expected a mapping of keys, got %s", describe(n))
		return out
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		if allowed != nil && !contains(allowed, k.Value) {
			hint := "valid keys: " + strings.Join(allowed, ", ")
			if c := closest(k.Value, allowed); c != "" {
				hint = "did you mean " + strconv.Quote(c) + "?"
			}
			l.errf(k, join(field, k.Value), hint, "unknown key %q", k.Value)
			continue
		}
		if _, dup := out[k.Value]; dup {
			l.errf(k, join(field, k.Value), "", "key %q given twice", k.Value)
			continue
		}
		out[k.Value] = v
	}
	return out
}

func join(a, b string) string {
	if a == "" {
		return b
	}
	return a + "." + b
}

func contains(xs []string, s string) bool {
	for _, x := range xs {
		if x == s {
			return true
		}
	}
	return false
}

func describe(n *yaml.Node) string {
	switch n.Kind {
	case yaml.MappingNode:
		return "a mapping"
	case yaml.SequenceNode:
		return "a list"
	case yaml.ScalarNode:
		if n.Tag == "!!null" {
			return "nothing"
		}
		return strconv.Quote(n.Value)
	}
	return "something else"
}

func (l *loader) str(n *yaml.Node, field string) (string, bool) {
	if n.Kind != yaml.ScalarNode || n.Tag == "!!null" {
		l.errf(n, field, "", "expected a text value, got %s", describe(n))
		return "", false
	}
	return n.Value, true
}

func (l *loader) strList(n *yaml.Node, field string) []string {
	if n.Kind == yaml.ScalarNode {
		s, ok := l.str(n, field)
		if !ok {
			return nil
		}
		return []string{s}
	}
	if n.Kind != yaml.SequenceNode {
		l.errf(n, field, "", "expected a text value or a list, got %s", describe(n))
		return nil
	}
	var out []string
	for i, e := range n.Content {
		if s, ok := l.str(e, fmt.Sprintf("%s[%d]", field, i)); ok {
			out = append(out, s)
		}
	}
	return out
}

func (l *loader) name(n *yaml.Node, field, what string) bool {
	if !nameRE.MatchString(n.Value) || len(n.Value) > 64 {
		l.errf(n, field, "names become file names and script words: use a-z, 0-9, _ and -, starting with a letter or digit, at most 64 characters",
			"%s name %q is not allowed", what, n.Value)
		return false
	}
	return true
}

var periodRE = regexp.MustCompile(`^\s*(-?\d{1,5})\s*(?:-|to|\.\.)\s*(-?\d{1,5})\s*$`)

func (l *loader) period(n *yaml.Node, field string) (Period, bool) {
	s, ok := l.str(n, field)
	if !ok {
		return Period{}, false
	}
	if y, err := strconv.Atoi(strings.TrimSpace(s)); err == nil {
		return Period{y, y}, true
	}
	m := periodRE.FindStringSubmatch(s)
	if m == nil {
		l.errf(n, field, `write a year or an inclusive range such as "1990-1999"`, "%q is not a period", s)
		return Period{}, false
	}
	a, _ := strconv.Atoi(m[1])
	b, _ := strconv.Atoi(m[2])
	if b < a {
		l.errf(n, field, "the first year comes first", "period %q ends before it starts", s)
		return Period{}, false
	}
	return Period{a, b}, true
}

func (l *loader) periods(n *yaml.Node, field string) []Period {
	var nodes []*yaml.Node
	if n.Kind == yaml.SequenceNode {
		nodes = n.Content
	} else {
		nodes = []*yaml.Node{n}
	}
	var out []Period
	for i, e := range nodes {
		if p, ok := l.period(e, fmt.Sprintf("%s[%d]", field, i)); ok {
			out = append(out, p)
		}
	}
	return out
}

// Load reads, validates and resolves a campaign file. Every mistake found
// is returned together as SpecErrors; nothing is written anywhere.
func Load(path string, reg *Registry) (*Campaign, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, &InvalidError{err}
	}
	data, err := os.ReadFile(abs)
	if err != nil {
		return nil, &InvalidError{fmt.Errorf("read campaign: %w", err)}
	}
	return Parse(abs, data, reg)
}

// Parse is Load on bytes already read; file names the source in messages
// and anchors relative paths.
func Parse(file string, data []byte, reg *Registry) (*Campaign, error) {
	l := &loader{file: file}
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return nil, &InvalidError{fmt.Errorf("%s: not valid YAML: %v", file, strings.TrimPrefix(err.Error(), "yaml: "))}
	}
	if doc.Kind != yaml.DocumentNode || len(doc.Content) == 0 {
		return nil, &InvalidError{fmt.Errorf("%s: the campaign file is empty", file)}
	}
	c := &Campaign{File: file, registry: reg}
	c.Info.Dir = filepath.Dir(file)
	top := l.pairs(doc.Content[0], "", []string{"campaign", "store", "scenarios", "variables", "channels", "split", "regions", "stages"})
	if n, ok := top["campaign"]; ok {
		if s, ok := l.str(n, "campaign"); ok && l.name(n, "campaign", "campaign") {
			c.Info.Name = s
		}
	} else {
		l.errf(doc.Content[0], "campaign", `add a line such as "campaign: tc-study"`, "the campaign needs a name")
	}
	c.StoreDir = filepath.Join(c.Info.Dir, ".squall")
	if n, ok := top["store"]; ok {
		if s, ok := l.str(n, "store"); ok {
			c.StoreDir = c.abs(s)
		}
	}
	if n, ok := top["scenarios"]; ok {
		c.loadScenarios(l, n)
	} else {
		l.errf(doc.Content[0], "scenarios", "", "the campaign lists no scenarios")
	}
	if n, ok := top["variables"]; ok {
		c.Info.Variables = map[string]string{}
		for k, v := range l.pairs(n, "variables", nil) {
			if s, ok := l.str(v, "variables."+k); ok {
				c.Info.Variables[k] = s
			}
		}
	}
	if n, ok := top["channels"]; ok {
		c.loadChannels(l, n)
	}
	if n, ok := top["split"]; ok {
		c.loadSplit(l, n)
	}
	if n, ok := top["regions"]; ok {
		c.loadRegions(l, n)
	}
	if n, ok := top["stages"]; ok {
		c.loadStages(l, n)
	} else {
		l.errf(doc.Content[0], "stages", "", "the campaign has no stages")
	}
	if len(l.errs) == 0 {
		c.checkGraph(l)
	}
	if len(l.errs) == 0 {
		c.checkKinds(l)
	}
	if len(l.errs) > 0 {
		return nil, &InvalidError{l.errs}
	}
	return c, nil
}

func (c *Campaign) abs(p string) string {
	if filepath.IsAbs(p) {
		return filepath.Clean(p)
	}
	return filepath.Join(c.Info.Dir, p)
}

func (c *Campaign) loadScenarios(l *loader, n *yaml.Node) {
	if n.Kind != yaml.MappingNode {
		l.errf(n, "scenarios", "", "expected a mapping of scenario names, got %s", describe(n))
		return
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		field := "scenarios." + k.Value
		if !l.name(k, field, "scenario") {
			continue
		}
		if k.Value == reservedInputAll {
			l.errf(k, field, "it names every scenario in a stage's inputs", "%q is a reserved word", k.Value)
			continue
		}
		sc := &Scenario{Name: k.Value, Line: k.Line, YearPattern: defaultYearRE}
		p := l.pairs(v, field, []string{"files", "period", "calendar", "year_pattern"})
		if f, ok := p["files"]; ok {
			sc.Globs = l.strList(f, field+".files")
		} else {
			l.errf(v, field+".files", `e.g. files: data/control/*.nc`, "a scenario needs a files glob")
		}
		if f, ok := p["period"]; ok {
			sc.Period, _ = l.period(f, field+".period")
		} else {
			l.errf(v, field+".period", `e.g. period: 1990-1999`, "a scenario needs a period")
		}
		if f, ok := p["calendar"]; ok {
			if s, ok := l.str(f, field+".calendar"); ok {
				cals := []string{"standard", "gregorian", "proleptic_gregorian", "noleap", "365_day", "all_leap", "366_day", "360_day", "julian"}
				if !contains(cals, s) {
					l.errf(f, field+".calendar", "CF calendars: "+strings.Join(cals, ", "), "unknown calendar %q", s)
				}
				sc.Calendar = s
			}
		}
		if f, ok := p["year_pattern"]; ok {
			if s, ok := l.str(f, field+".year_pattern"); ok {
				re, err := regexp.Compile(s)
				if err != nil || re.NumSubexp() != 1 {
					l.errf(f, field+".year_pattern", "a regular expression with exactly one group capturing the year", "bad pattern %q", s)
				} else {
					sc.YearPattern = re
				}
			}
		}
		for _, o := range c.Scenarios {
			if o.Name == sc.Name {
				l.errf(k, field, "", "scenario %q given twice", sc.Name)
			}
		}
		c.Scenarios = append(c.Scenarios, sc)
		if len(sc.Globs) > 0 && sc.Period.Last != 0 {
			c.findFiles(l, k, sc)
		}
	}
}

// findFiles resolves a scenario's globs and assigns each file to the year
// block its name carries.
func (c *Campaign) findFiles(l *loader, at *yaml.Node, sc *Scenario) {
	field := "scenarios." + sc.Name + ".files"
	sc.Files = map[string][]string{}
	seen := map[string]bool{}
	for _, g := range sc.Globs {
		matches, err := filepath.Glob(c.abs(g))
		if err != nil {
			l.errf(at, field, "", "bad glob %q: %v", g, err)
			continue
		}
		if len(matches) == 0 {
			l.errf(at, field, "paths are relative to the campaign file's folder "+c.Info.Dir, "glob %q matches no file", g)
			continue
		}
		for _, m := range matches {
			if seen[m] {
				continue
			}
			seen[m] = true
			fi, err := os.Stat(m)
			if err != nil || !fi.Mode().IsRegular() {
				continue
			}
			year, ok := yearOf(sc.YearPattern, filepath.Base(m))
			if !ok {
				l.errf(at, field, "name files with their year (e.g. fields_1990.nc) or set year_pattern", "cannot tell the year of %s", m)
				continue
			}
			if !sc.Period.Contains(year) {
				continue // outside the period: not part of this campaign
			}
			b := strconv.Itoa(year)
			sc.Files[b] = append(sc.Files[b], m)
		}
	}
	if len(sc.Files) == 0 && len(l.errs) == 0 {
		l.errf(at, field, "check the period against the years in the file names", "no file of scenario %q falls in %d-%d", sc.Name, sc.Period.First, sc.Period.Last)
	}
	for _, fs := range sc.Files {
		sort.Strings(fs)
	}
}

func yearOf(re *regexp.Regexp, base string) (int, bool) {
	m := re.FindStringSubmatch(base)
	if m == nil {
		return 0, false
	}
	y, err := strconv.Atoi(m[1])
	return y, err == nil
}

// Blocks lists a scenario's blocks in order.
func (sc *Scenario) Blocks() []string {
	out := make([]string, 0, len(sc.Files))
	for b := range sc.Files {
		out = append(out, b)
	}
	sort.Strings(out)
	return out
}

var levelRE = regexp.MustCompile(`^\s*([0-9.]+)\s*(hPa|Pa|mbar|mb)\s*$`)

func (c *Campaign) loadChannels(l *loader, n *yaml.Node) {
	if n.Kind != yaml.SequenceNode {
		l.errf(n, "channels", "", "expected a list of channels, got %s", describe(n))
		return
	}
	derived := []string{"wind_speed", "relative_vorticity", "ivt", "ivt_u", "ivt_v", "iwv"}
	seen := map[string]bool{}
	for i, e := range n.Content {
		field := fmt.Sprintf("channels[%d]", i)
		p := l.pairs(e, field, []string{"name", "standard_name", "variable", "level", "units", "derived"})
		var ch Channel
		if v, ok := p["name"]; ok {
			if s, ok := l.str(v, field+".name"); ok && l.name(v, field+".name", "channel") {
				ch.Name = s
				if seen[s] {
					l.errf(v, field+".name", "", "channel %q given twice", s)
				}
				seen[s] = true
			}
		} else {
			l.errf(e, field+".name", "", "a channel needs a name")
		}
		if v, ok := p["standard_name"]; ok {
			ch.StandardName, _ = l.str(v, field+".standard_name")
		}
		if v, ok := p["variable"]; ok {
			ch.Variable, _ = l.str(v, field+".variable")
		}
		if v, ok := p["units"]; ok {
			ch.Units, _ = l.str(v, field+".units")
		}
		if v, ok := p["derived"]; ok {
			if s, ok := l.str(v, field+".derived"); ok {
				if !contains(derived, s) {
					hint := "derived channels: " + strings.Join(derived, ", ")
					l.errf(v, field+".derived", hint, "unknown derived quantity %q", s)
				}
				ch.Derived = s
			}
		}
		if v, ok := p["level"]; ok {
			if s, ok := l.str(v, field+".level"); ok {
				m := levelRE.FindStringSubmatch(s)
				if m == nil {
					l.errf(v, field+".level", `write the unit, e.g. "850 hPa" or "85000 Pa"`, "cannot read level %q", s)
				} else {
					x, _ := strconv.ParseFloat(m[1], 64)
					if m[2] != "Pa" {
						x *= 100
					}
					if x <= 0 || x > 110000 {
						l.errf(v, field+".level", "pressure levels lie between 0 and 1100 hPa", "level %q is out of range", s)
					}
					ch.LevelPa = x
				}
			}
		}
		ids := 0
		for _, s := range []string{ch.StandardName, ch.Variable, ch.Derived} {
			if s != "" {
				ids++
			}
		}
		if ids != 1 {
			l.errf(e, field, "", "channel %q needs exactly one of standard_name, variable or derived", ch.Name)
		}
		c.Info.Channels = append(c.Info.Channels, ch)
	}
}

func (c *Campaign) loadSplit(l *loader, n *yaml.Node) {
	p := l.pairs(n, "split", []string{"train", "validate", "test", "gap_days"})
	if v, ok := p["train"]; ok {
		c.Info.Split.Train = l.periods(v, "split.train")
	}
	if v, ok := p["validate"]; ok {
		c.Info.Split.Validate = l.periods(v, "split.validate")
	}
	if v, ok := p["test"]; ok {
		c.Info.Split.Test = l.periods(v, "split.test")
	}
	if v, ok := p["gap_days"]; ok {
		f, err := strconv.ParseFloat(v.Value, 64)
		if v.Kind != yaml.ScalarNode || err != nil || f < 0 {
			l.errf(v, "split.gap_days", "a number of days, 0 or more", "got %s", describe(v))
		}
		c.Info.Split.GapDays = f
	}
	// A year in two sets is leakage by construction.
	sets := map[string][]Period{"train": c.Info.Split.Train, "validate": c.Info.Split.Validate, "test": c.Info.Split.Test}
	names := []string{"train", "validate", "test"}
	for i := range names {
		for j := i + 1; j < len(names); j++ {
			for _, a := range sets[names[i]] {
				for _, b := range sets[names[j]] {
					if a.First <= b.Last && b.First <= a.Last {
						l.errf(n, "split", "each year may belong to one set only", "%s %d-%d overlaps %s %d-%d", names[i], a.First, a.Last, names[j], b.First, b.Last)
					}
				}
			}
		}
	}
}

func (c *Campaign) loadRegions(l *loader, n *yaml.Node) {
	if n.Kind != yaml.SequenceNode {
		l.errf(n, "regions", "", "expected a list of regions, got %s", describe(n))
		return
	}
	for i, e := range n.Content {
		field := fmt.Sprintf("regions[%d]", i)
		p := l.pairs(e, field, []string{"name", "lat", "lon", "file"})
		if f, ok := p["file"]; ok {
			if s, ok := l.str(f, field+".file"); ok {
				regs, err := readGeoJSONRegions(c.abs(s))
				if err != nil {
					l.errf(f, field+".file", "a GeoJSON FeatureCollection of Polygon or MultiPolygon features with a \"name\" property", "%v", err)
				}
				c.Info.Regions = append(c.Info.Regions, regs...)
			}
			continue
		}
		var r Region
		if v, ok := p["name"]; ok && l.name(v, field+".name", "region") {
			r.Name = v.Value
		}
		lat, okLat := p["lat"]
		lon, okLon := p["lon"]
		if !okLat || !okLon || r.Name == "" {
			l.errf(e, field, "e.g. {name: east-coast, lat: [20, 40], lon: [280, 300]}, or {file: regions.geojson}", "a region needs a name, lat and lon ranges, or a file")
			continue
		}
		la := l.floatPair(lat, field+".lat", -90, 90)
		lo := l.floatPair(lon, field+".lon", -360, 360)
		if la[0] > la[1] {
			l.errf(lat, field+".lat", "south first", "latitude range %v runs north to south", la)
		}
		r.Box = &Box{LatMin: la[0], LatMax: la[1], LonMin: lo[0], LonMax: lo[1]}
		c.Info.Regions = append(c.Info.Regions, r)
	}
	seen := map[string]bool{}
	for _, r := range c.Info.Regions {
		if seen[r.Name] {
			l.errf(n, "regions", "", "region %q given twice", r.Name)
		}
		seen[r.Name] = true
	}
}

func (l *loader) floatPair(n *yaml.Node, field string, lo, hi float64) [2]float64 {
	var out [2]float64
	if n.Kind != yaml.SequenceNode || len(n.Content) != 2 {
		l.errf(n, field, "", "expected two numbers [from, to] in degrees, got %s", describe(n))
		return out
	}
	for i, e := range n.Content {
		f, err := strconv.ParseFloat(e.Value, 64)
		if err != nil || f < lo || f > hi {
			l.errf(e, field, "", "expected degrees between %g and %g, got %s", lo, hi, describe(e))
		}
		out[i] = f
	}
	return out
}
