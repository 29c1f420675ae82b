package trends

import (
	"context"
	"fmt"
	"path/filepath"
	"sort"
	"strconv"

	"github.com/squall-climate/squall/pipeline"
)

// Kind is the "trends" stage kind.
type Kind struct{}

var (
	_ pipeline.Kind        = Kind{}
	_ pipeline.SectionUser = Kind{}
	_ pipeline.Checker     = Kind{}
)

// version changes whenever the same inputs and settings would give
// different outputs.
const version = 2 // 2: exact Mann-Kendall p for short untied series, p_method column

func (Kind) Name() string      { return "trends" }
func (Kind) Version() int      { return version }
func (Kind) Fan() pipeline.Fan { return pipeline.FanCampaign }
func (Kind) CampaignSections() []string {
	return []string{pipeline.SectionScenarios, pipeline.SectionRegions}
}

func (Kind) Doc() string {
	return "Annual series per region, class and scenario (event counts, event-days, landfalls, mean and " +
		"maximum intensity) from the catalogs of every scenario; Mann-Kendall trend tests (tie-corrected, " +
		"exact p for short untied series, optionally Hamed-Rao corrected for serial correlation), Sen slopes with Gilbert confidence " +
		"intervals and least-squares slopes, all per decade; scenario differences with seeded bootstrap " +
		"intervals and rank-sum p-values; event-frequency maps and their differences as CF netCDF. " +
		"Writes trends.json, trends.csv, series.csv, differences.csv and maps.nc. Research output, not a forecast."
}

// Setting names.
const (
	setMinYears    = "min_years"
	setConfidence  = "confidence"
	setCorrection  = "serial_correction"
	setResamples   = "bootstrap_resamples"
	setSeed        = "seed"
	setBaseline    = "baseline_scenario"
	setWholeRegion = "whole_domain_region"
	setMapRes      = "map_resolution"
	setExactMaxN   = "mk_exact_max_n"
)

func (Kind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: setMinYears, Type: pipeline.TypeInt, Default: 10, Min: pipeline.Bound(3), Max: pipeline.Bound(100000),
			Doc: "fewest years with a value for a trend or a scenario difference to be computed; shorter series " +
				"say \"too few years\" instead of a p-value. The normal approximation of the Mann-Kendall S is " +
				"usually recommended from about n = 10 (Gilbert 1987, ch. 16; from memory)"},
		{Name: setExactMaxN, Type: pipeline.TypeInt, Default: DefaultExactMaxN, Min: pipeline.Bound(0), Max: pipeline.Bound(MaxExactN),
			Doc: "longest series (years with a value) whose Mann-Kendall p-value comes from the exact null " +
				"distribution of S (permutation counts) instead of the normal approximation, when no two values " +
				"are tied and serial_correction is none; 0 for the normal approximation always. Default 10: " +
				"Gilbert (1987) tabulates exact probabilities up to n = 10 (from memory); at most 18, where the " +
				"counts stop being exact in double precision. The USEPA Unified Guidance examples use the " +
				"normal approximation at n = 10; set 9 to reproduce them"},
		{Name: setConfidence, Type: pipeline.TypeFloat, Default: 0.95, Min: pipeline.Bound(0.5), Max: pipeline.Bound(0.999),
			Doc: "confidence level of the Sen-slope and bootstrap intervals; the Hamed-Rao lags are judged at 1 - confidence"},
		{Name: setCorrection, Type: pipeline.TypeString, Default: CorrectionNone,
			Choices: []string{CorrectionNone, CorrectionHamedRao},
			Doc: "serial-correlation correction of the Mann-Kendall variance: none, or hamed-rao-1998 " +
				"(Hamed & Rao 1998, J. Hydrology 204, 182-196: variance inflated by the significant " +
				"autocorrelations of the ranks of the Sen-detrended series)"},
		{Name: setResamples, Type: pipeline.TypeInt, Default: 2000, Min: pipeline.Bound(100), Max: pipeline.Bound(1000000),
			Doc: "bootstrap resamples for the intervals of scenario differences and ratios"},
		{Name: setSeed, Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(0),
			Doc: "seed of the bootstrap; each comparison draws from its own stream derived from this seed and its names"},
		{Name: setBaseline, Type: pipeline.TypeString, Default: "",
			Doc: "scenario the others are compared with; empty means the first scenario of the campaign"},
		{Name: setWholeRegion, Type: pipeline.TypeString, Default: "domain",
			Doc: "name of the implicit region holding every event (the whole domain of the catalog); empty to leave it out"},
		{Name: setMapRes, Type: pipeline.TypeFloat, Unit: "degree", Default: 2.5, Min: pipeline.Bound(0.1), Max: pipeline.Bound(30),
			Doc: "grid spacing of track-density maps, used only when no mask inputs are given (180 and 360 must be multiples of it)"},
	}
}

// CheckStage refuses a baseline that is not a scenario and a map spacing
// that does not divide the globe, before anything runs.
func (Kind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	if b := s.String(setBaseline); b != "" && c != nil {
		found := false
		var names []string
		for _, sc := range c.Scenarios {
			names = append(names, sc.Name)
			found = found || sc.Name == b
		}
		if !found {
			return fmt.Errorf("stage %s: %s %q is not a scenario of the campaign (scenarios: %v)", stage, setBaseline, b, names)
		}
	}
	if r := s.Float(setMapRes); !divides(180, r) || !divides(360, r) {
		return fmt.Errorf("stage %s: %s = %g degrees does not divide 180 and 360 (try 0.5, 1, 2, 2.5 or 5)", stage, setMapRes, r)
	}
	if c != nil {
		if _, err := buildRegions(c, s.String(setWholeRegion)); err != nil {
			return fmt.Errorf("stage %s: %w", stage, err)
		}
	}
	return nil
}

func divides(total, step float64) bool {
	n := total / step
	return n >= 1 && n-float64(int(n+0.5)) < 1e-9 && float64(int(n+0.5))-n < 1e-9
}

// config is the settings of one run, read once.
type config struct {
	minYears   int
	alpha      float64
	correction string
	resamples  int
	seed       uint64
	baseline   string
	whole      string
	mapRes     float64
	exactMaxN  int
}

func readConfig(v pipeline.Values) config {
	return config{
		minYears:   v.Int(setMinYears),
		alpha:      1 - v.Float(setConfidence),
		correction: v.String(setCorrection),
		resamples:  v.Int(setResamples),
		seed:       uint64(v.Int(setSeed)),
		baseline:   v.String(setBaseline),
		whole:      v.String(setWholeRegion),
		mapRes:     v.Float(setMapRes),
		exactMaxN:  v.Int(setExactMaxN),
	}
}

// sample is one (scenario, member): its years and events.
type sample struct {
	Scenario, Member string
	years            map[int]bool
	events           []*event
	hasPoints        bool
	masks            []string // mask.nc files, for frequency maps
}

func (s *sample) label() string {
	if s.Member == "" {
		return s.Scenario
	}
	return s.Scenario + "/" + s.Member
}

func (s *sample) sortedYears() []int {
	ys := make([]int, 0, len(s.years))
	for y := range s.years {
		ys = append(ys, y)
	}
	sort.Ints(ys)
	return ys
}

// Run reads every catalog input, builds the series and writes the outputs.
func (Kind) Run(ctx context.Context, job *pipeline.Job) error {
	cfg := readConfig(job.Settings)
	regions, err := buildRegions(&job.Campaign, cfg.whole)
	if err != nil {
		return err
	}
	samples, err := gatherSamples(job)
	if err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	res, err := analyse(ctx, cfg, regions, samples, &job.Campaign)
	if err != nil {
		return err
	}
	m, err := frequencyMaps(ctx, cfg, samples, res.baselineIndex)
	if err != nil {
		return err
	}
	res.out.Maps = m.describe()
	if err := writeOutputs(job.OutDir, res.out); err != nil {
		return err
	}
	if m != nil {
		if err := m.write(filepath.Join(job.OutDir, MapsFile), settingsText(job.Settings)); err != nil {
			return err
		}
	}
	job.Logf("trends: %d samples, %d regions, %d series, %d differences", len(samples), len(regions), len(res.out.Trends), len(res.out.Differences))
	return nil
}

// gatherSamples groups the inputs by (scenario, member): catalogs (any
// input holding events.csv) and masks (any input holding mask.nc).
func gatherSamples(job *pipeline.Job) ([]*sample, error) {
	byKey := map[[2]string]*sample{}
	get := func(scn, member string, in pipeline.Input) (*sample, error) {
		if scn == "" {
			return nil, fmt.Errorf("input from %s (%s) has no scenario and its rows name none: trends compares scenarios, "+
				"so connect it to per-scenario or per-block catalog instances", in.From, in.Dir)
		}
		key := [2]string{scn, member}
		s := byKey[key]
		if s == nil {
			s = &sample{Scenario: scn, Member: member, years: map[int]bool{}}
			byKey[key] = s
		}
		return s, nil
	}
	catalogs := 0
	wholeScenario := map[[2]string]bool{}
	for _, in := range job.Inputs {
		var evFile, maskFile bool
		for _, f := range in.Files {
			switch filepath.Base(f) {
			case EventsFile:
				evFile = true
			case MaskFile:
				maskFile = true
			}
		}
		if maskFile {
			s, err := get(in.Scenario, in.Member, in)
			if err != nil {
				return nil, err
			}
			for _, f := range in.Files {
				if filepath.Base(f) == MaskFile {
					s.masks = append(s.masks, f)
				}
			}
		}
		if !evFile {
			continue
		}
		catalogs++
		evs, pts, err := readCatalog(in.Files)
		if err != nil {
			return nil, err
		}
		// Rows name their scenario and member when the catalog holds
		// several (a whole-campaign catalog, or every sweep member); the
		// input's labels fill in what a row leaves empty.
		touched := map[*sample]bool{}
		for _, e := range evs {
			scn, mem := e.scenario, e.member
			if scn == "" {
				scn = in.Scenario
			}
			if mem == "" {
				mem = in.Member
			}
			s, err := get(scn, mem, in)
			if err != nil {
				return nil, err
			}
			s.events = append(s.events, e)
			touched[s] = true
		}
		if in.Scenario != "" {
			s, _ := get(in.Scenario, in.Member, in)
			touched[s] = true
		}
		for s := range touched {
			s.hasPoints = s.hasPoints || pts
			if in.Block != "" {
				y, err := strconv.Atoi(in.Block)
				if err != nil {
					return nil, fmt.Errorf("input from %s: block %q is not a year", in.From, in.Block)
				}
				s.years[y] = true
			} else {
				wholeScenario[[2]string{s.Scenario, s.Member}] = true
			}
		}
	}
	if catalogs == 0 {
		return nil, fmt.Errorf("trends found no %s among its inputs: list a catalog stage under inputs", EventsFile)
	}
	// A catalog covering a whole scenario spans the scenario's blocks (or
	// its first..last year); years without an event must count as zero.
	for key := range wholeScenario {
		s := byKey[key]
		for _, sc := range job.Campaign.Scenarios {
			if sc.Name != s.Scenario {
				continue
			}
			n := 0
			for _, b := range sc.Blocks {
				if y, err := strconv.Atoi(b); err == nil {
					s.years[y] = true
					n++
				}
			}
			if n == 0 && sc.LastYear >= sc.FirstYear && sc.FirstYear != 0 {
				for y := sc.FirstYear; y <= sc.LastYear; y++ {
					s.years[y] = true
				}
			}
		}
	}
	for _, s := range byKey {
		for _, e := range s.events {
			s.years[e.year] = true
		}
	}
	// Campaign order of scenarios, then member name.
	rank := map[string]int{}
	for i, sc := range job.Campaign.Scenarios {
		rank[sc.Name] = i
	}
	out := make([]*sample, 0, len(byKey))
	for _, s := range byKey {
		out = append(out, s)
	}
	sort.Slice(out, func(a, b int) bool {
		ra, oka := rank[out[a].Scenario]
		rb, okb := rank[out[b].Scenario]
		if oka != okb {
			return oka
		}
		if ra != rb {
			return ra < rb
		}
		if out[a].Scenario != out[b].Scenario {
			return out[a].Scenario < out[b].Scenario
		}
		return out[a].Member < out[b].Member
	})
	return out, nil
}
