package normalize

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/stream"
)

// FitKind is the fit-stats stage kind (register normalize.FitKind{}): one
// instance for the whole campaign that fits per-channel statistics on the
// training years' fields.nc files and writes stats.json.
type FitKind struct{}

var (
	_ pipeline.Kind        = FitKind{}
	_ pipeline.Checker     = FitKind{}
	_ pipeline.SectionUser = FitKind{}
)

// Name implements pipeline.Kind.
func (FitKind) Name() string { return "fit-stats" }

// Version implements pipeline.Kind.
func (FitKind) Version() int { return 1 }

// Doc implements pipeline.Kind.
func (FitKind) Doc() string {
	return "Fits per-channel mean, standard deviation, minimum, maximum and quantiles on the training years " +
		"only (the campaign's split, or a subset of it), in one streaming pass over the fields.nc of those years, " +
		"optionally weighted by cell area; refuses test or validation years as leakage. Writes " + StatsFile + "."
}

// Fan implements pipeline.Kind: one instance sees every block.
func (FitKind) Fan() pipeline.Fan { return pipeline.FanCampaign }

// CampaignSections implements pipeline.SectionUser.
func (FitKind) CampaignSections() []string { return []string{pipeline.SectionSplit} }

// DefaultQuantiles are the quantile levels fitted by default: the tails
// robust scaling uses and the quartiles.
var DefaultQuantiles = []float64{0.001, 0.01, 0.05, 0.25, 0.5, 0.75, 0.95, 0.99, 0.999}

// Settings implements pipeline.Kind.
func (FitKind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "years", Type: pipeline.TypeInts, Default: []int{},
			Doc: "years to fit on, all of which must be training years; empty: every year of the campaign's split.train"},
		{Name: "weighting", Type: pipeline.TypeString, Default: "none", Choices: []string{"none", "cell_area"},
			Doc: "none: every grid point counts once (what a network sees); cell_area: points weighted by the area of their cell on the sphere (needs a regular grid)"},
		{Name: "quantiles", Type: pipeline.TypeFloats, Default: append([]float64(nil), DefaultQuantiles...), Min: pipeline.Bound(0), Max: pipeline.Bound(1),
			Doc: "quantile levels to estimate (fixed-memory t-digest)"},
		{Name: "compression", Type: pipeline.TypeFloat, Default: 200.0, Min: pipeline.Bound(20), Max: pipeline.Bound(5000),
			Doc: "t-digest compression: about this many centroids per channel; 200 gives rank errors near 1e-3 at the median (Dunning & Ertl 2019)"},
	}
}

// LeakageError is returned when a configuration would fit statistics on
// test or validation years.
type LeakageError struct {
	Stage string
	Year  int
	Set   string // "test" or "validate"
	From  string // where the year came from
}

func (e *LeakageError) Error() string {
	return fmt.Sprintf("leakage: stage %q would fit normalisation statistics on %d, a %s year of the campaign's split (%s); "+
		"statistics fitted on %s data leak it into training (hint: fit on training years only: leave the years setting empty to use split.train, or list training years)",
		e.Stage, e.Year, e.Set, e.From, e.Set)
}

// inPeriods reports whether year lies in one of ps.
func inPeriods(ps []pipeline.Period, year int) bool {
	for _, p := range ps {
		if p.Contains(year) {
			return true
		}
	}
	return false
}

// fitYears returns the years to fit on, refusing test and validation
// years (checked against each list separately, so an overlap between
// train and test in a hand-built split is caught too).
func fitYears(stage string, s pipeline.Values, split pipeline.Split) ([]int, error) {
	years := intList(s, "years")
	from := "setting years"
	if len(years) == 0 {
		from = "split.train"
		for _, p := range split.Train {
			for y := p.First; y <= p.Last; y++ {
				years = append(years, y)
			}
		}
	}
	if len(years) == 0 {
		return nil, fmt.Errorf("stage %q: no training years to fit on (hint: add split: train: to the campaign, or list years in the stage's years setting)", stage)
	}
	for _, y := range years {
		if inPeriods(split.Test, y) {
			return nil, &LeakageError{Stage: stage, Year: y, Set: "test", From: from}
		}
		if inPeriods(split.Validate, y) {
			return nil, &LeakageError{Stage: stage, Year: y, Set: "validate", From: from}
		}
		if len(split.Train) > 0 && !inPeriods(split.Train, y) {
			return nil, fmt.Errorf("stage %q: year %d in the years setting is not a training year of the campaign's split (hint: list only years of split.train)", stage, y)
		}
	}
	slices.Sort(years)
	return slices.Compact(years), nil
}

// intList reads a list-of-int setting; pipeline.Values.Ints does not accept
// the []int form a default has before a JSON round trip.
func intList(s pipeline.Values, name string) []int {
	if xs, ok := s[name].([]int); ok {
		return append([]int(nil), xs...)
	}
	return s.Ints(name)
}

// CheckStage implements pipeline.Checker: the leakage rule at load time.
func (FitKind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	_, err := fitYears(stage, s, c.Split)
	return err
}

// channelAcc accumulates one channel.
type channelAcc struct {
	fv      *fieldVar
	m       stream.Moments
	d       *stream.Digest
	missing int64
}

// Run implements pipeline.Kind.
func (k FitKind) Run(ctx context.Context, job *pipeline.Job) error {
	years, err := fitYears(job.Stage, job.Settings, job.Campaign.Split)
	if err != nil {
		return err
	}
	weighting := job.Settings.String("weighting")
	levels := job.Settings.Floats("quantiles")
	compression := job.Settings.Float("compression")
	workers := max(1, runtime.NumCPU()-1) // compute goroutines; cannot change outputs
	// The inputs to read: fields.nc of training years, in a fixed order.
	type use struct {
		ref  BlockRef
		path string
	}
	var uses []use
	var seen []string
	for _, in := range job.Inputs {
		path := fileNamed(in.Files, FieldsFile)
		if path == "" {
			continue
		}
		seen = append(seen, in.Scenario+"/"+in.Block)
		y, err := strconv.Atoi(in.Block)
		if err != nil || !slices.Contains(years, y) {
			continue
		}
		// Again at run time: a training input must not be a test or
		// validation year, whatever the settings said.
		if inPeriods(job.Campaign.Split.Test, y) {
			return &LeakageError{Stage: job.Stage, Year: y, Set: "test", From: "input " + in.From}
		}
		if inPeriods(job.Campaign.Split.Validate, y) {
			return &LeakageError{Stage: job.Stage, Year: y, Set: "validate", From: "input " + in.From}
		}
		uses = append(uses, use{BlockRef{in.Scenario, in.Block, in.Member}, path})
	}
	if len(uses) == 0 {
		return fmt.Errorf("fit-stats: none of the inputs' %s files is from a training year %v (inputs: %s) (hint: the inputs must include a subset stage covering the training years)",
			FieldsFile, years, strings.Join(seen, ", "))
	}
	sort.Slice(uses, func(i, j int) bool {
		a, b := uses[i].ref, uses[j].ref
		if a.Scenario != b.Scenario {
			return a.Scenario < b.Scenario
		}
		if a.Block != b.Block {
			return a.Block < b.Block
		}
		return a.Member < b.Member
	})
	var accs []*channelAcc
	var first *fieldsFile
	usedYears := map[int]bool{}
	for _, u := range uses {
		ff, err := openFields(u.path)
		if err != nil {
			return fmt.Errorf("fit-stats: %w", err)
		}
		if accs == nil {
			first = ff
			for _, fv := range ff.vars {
				accs = append(accs, &channelAcc{fv: fv, d: stream.NewDigest(compression)})
			}
		} else if err := sameChannels(first, ff); err != nil {
			ff.close()
			return err
		}
		err = fitFile(ctx, ff, accs, weighting, workers, compression)
		if ff != first {
			ff.close()
		}
		if err != nil {
			return err
		}
		y, _ := strconv.Atoi(u.ref.Block)
		usedYears[y] = true
		job.Logf("fit-stats: read %s/%s (%d time steps)", u.ref.Scenario, u.ref.Block, ff.nt)
	}
	first.close()
	st := &Stats{Format: StatsFormat, Kind: k.Name(), KindVersion: k.Version(), Weighting: weighting,
		QuantileLevels: levels, Compression: compression}
	for y := range usedYears {
		st.Years = append(st.Years, y)
	}
	slices.Sort(st.Years)
	for _, u := range uses {
		st.Blocks = append(st.Blocks, u.ref)
	}
	for _, a := range accs {
		cs, err := a.finish(levels)
		if err != nil {
			return err
		}
		st.Channels = append(st.Channels, cs)
		job.Logf("fit-stats: %s: n=%d mean=%.6g std=%.6g min=%.6g max=%.6g", cs.Name, cs.Count, cs.Mean, cs.Std, cs.Min, cs.Max)
	}
	return WriteStats(filepath.Join(job.OutDir, StatsFile), st)
}

func fileNamed(files []string, name string) string {
	for _, f := range files {
		if filepath.Base(f) == name {
			return f
		}
	}
	return ""
}

func sameChannels(a, b *fieldsFile) error {
	if len(a.vars) != len(b.vars) || !sameCoords(a.lat, b.lat) || !sameCoords(a.lon, b.lon) {
		return fmt.Errorf("fit-stats: %s and %s differ in channels or grid (%s; %s) (hint: every block must come from the same subset settings)",
			a.path, b.path, a.describe(), b.describe())
	}
	for i, v := range a.vars {
		w := b.vars[i]
		if v.name != w.name || v.quantity != w.quantity || v.levelPa != w.levelPa || v.units != w.units {
			return fmt.Errorf("fit-stats: channel %q differs between %s and %s (%s; %s)", v.name, a.path, b.path, a.describe(), b.describe())
		}
	}
	return nil
}

func sameCoords(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > 1e-6 {
			return false
		}
	}
	return true
}

// fitFile streams one file: I/O on this goroutine, per-step partial
// moments and digests on workers, merged in time order.
func fitFile(ctx context.Context, ff *fieldsFile, accs []*channelAcc, weighting string, workers int, compression float64) error {
	var weights []float64
	if weighting == "cell_area" {
		g, err := grid.New(ff.lat, ff.lon)
		if err != nil {
			return fmt.Errorf("fit-stats: cell-area weighting of %s: %v (hint: set weighting: none for this grid)", ff.path, err)
		}
		weights = g.CellAreas()
	}
	type partial struct {
		m       stream.Moments
		d       *stream.Digest
		missing int64
	}
	return stream.Steps(ctx, ff.nt, workers,
		func(t int) ([]plane, error) {
			ps := make([]plane, len(accs))
			for i, a := range accs {
				p, err := ff.read(a.fv, t)
				if err != nil {
					return nil, fmt.Errorf("fit-stats: %w", err)
				}
				ps[i] = p
			}
			return ps, nil
		},
		func(t int, ps []plane) ([]partial, error) {
			out := make([]partial, len(ps))
			for i, p := range ps {
				d := stream.NewDigest(compression)
				var n int
				if p.f32 != nil {
					out[i].m.AddFloat32s(p.f32, weights)
					d.AddFloat32s(p.f32, weights)
					n = len(p.f32)
				} else {
					out[i].m.AddFloat64s(p.f64, weights)
					d.AddFloat64s(p.f64, weights)
					n = len(p.f64)
				}
				out[i].d = d
				out[i].missing = int64(n) - out[i].m.N
			}
			return out, nil
		},
		func(t int, out []partial) error {
			for i, p := range out {
				accs[i].m.Merge(p.m)
				accs[i].d.Merge(p.d)
				accs[i].missing += p.missing
			}
			return nil
		})
}

// finish maps packed statistics back to physical values and collects them.
func (a *channelAcc) finish(levels []float64) (ChannelStats, error) {
	fv := a.fv
	cs := ChannelStats{Name: fv.name, Quantity: fv.quantity, LevelPa: fv.levelPa, Units: fv.units, Missing: a.missing}
	if a.m.N == 0 {
		return cs, fmt.Errorf("fit-stats: channel %q has no valid value in the training years (all %d values are fill)", fv.name, a.missing)
	}
	m := a.m
	if fv.packed {
		m = m.Affine(fv.scale, fv.offset)
	}
	cs.Count, cs.Weight = m.N, m.W
	cs.Mean, cs.Std, cs.Min, cs.Max = m.Mean(), m.Std(), m.Min, m.Max
	if m.N < 2 {
		cs.Std = 0
	}
	for _, q := range levels {
		v := 0.0
		if fv.packed && fv.scale < 0 {
			v = fv.scale*a.d.Quantile(1-q) + fv.offset
		} else {
			v = fv.scale*a.d.Quantile(q) + fv.offset
		}
		cs.Quantiles = append(cs.Quantiles, v)
	}
	for _, x := range append([]float64{cs.Mean, cs.Std, cs.Min, cs.Max}, cs.Quantiles...) {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return cs, errors.New("fit-stats: channel " + fv.name + " gave a non-finite statistic")
		}
	}
	return cs, nil
}
