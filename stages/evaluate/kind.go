package evaluate

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/catalog"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// Output files (columns in doc.go).
const (
	ScoresFile    = "scores.json"
	PixelFile     = "pixel_scores.csv"
	ConfusionFile = "confusion.csv"
	EventFile     = "event_scores.csv"
	MaskName      = "mask.nc"
)

const version = 1

// Kind is the evaluate stage kind.
type Kind struct{}

var (
	_ pipeline.Kind        = Kind{}
	_ pipeline.Checker     = Kind{}
	_ pipeline.SectionUser = Kind{}
)

func (Kind) Name() string      { return "evaluate" }
func (Kind) Version() int      { return version }
func (Kind) Fan() pipeline.Fan { return pipeline.FanCampaign }

// CampaignSections: only the regions reach the outputs.
func (Kind) CampaignSections() []string { return []string{pipeline.SectionRegions} }

func (Kind) Doc() string {
	return "Scores candidate class masks against reference masks (a stage's mask.nc or files such as truth masks), " +
		"over the whole campaign: per pixel (confusion matrix, IoU, precision, recall, F1; by count and by cell area) " +
		"and per event (space-time events matched one-to-one by overlap; POD, FAR, CSI, bias, Heidke, Peirce, Gilbert, " +
		"odds ratio), by scenario, region, season, class and sweep member, with hit/miss/false-alarm frequency maps. " +
		"Writes scores.json, pixel_scores.csv, confusion.csv, event_scores.csv and maps_<scenario>[_<member>].nc."
}

func (Kind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "candidate", Type: pipeline.TypeString,
			Doc: "input stage whose mask.nc is scored (a network's predictions, or a labelling)"},
		{Name: "reference", Type: pipeline.TypeString, Default: "",
			Doc: "input stage whose mask.nc is the reference; give this or reference_files"},
		{Name: "reference_files", Type: pipeline.TypeFiles, Default: "",
			Doc: "reference masks in the shared mask.nc format, a pattern with {scenario} and {block} (e.g. world/{scenario}/truth_{block}.nc); give this or reference"},
		{Name: "event_iou_min", Type: pipeline.TypeFloat, Unit: "1", Default: 0.0, Min: pipeline.Bound(0), Max: pipeline.Bound(1),
			Doc: "two events match when their space-time IoU (overlap / union of area x steps) is at least this; 0: any shared cell at one step"},
		{Name: "tc_link_km_per_6h", Type: pipeline.TypeFloat, Unit: "km", Default: 400.0, Min: pipeline.Bound(0),
			Doc: "as in catalog: cyclone objects that do not overlap between steps are linked when their centroids are at most this far apart per 6 hours (from memory: a common tracking limit); 0: overlap only"},
		{Name: "ar_link_km_per_6h", Type: pipeline.TypeFloat, Unit: "km", Default: 0.0, Min: pipeline.Bound(0),
			Doc: "the same for river objects (0: overlap only)"},
		{Name: "max_gap_factor", Type: pipeline.TypeFloat, Unit: "1", Default: 1.5, Min: pipeline.Bound(1),
			Doc: "events end where consecutive time steps are further apart than this many times the usual step (missing data)"},
	}
}

// CheckStage requires exactly one reference.
func (Kind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	ref, files := s.String("reference"), s.String("reference_files")
	switch {
	case ref == "" && files == "":
		return fmt.Errorf("stage %s: give the reference masks, either reference (an input stage) or reference_files (a file pattern)", stage)
	case ref != "" && files != "":
		return fmt.Errorf("stage %s: give either reference (%q) or reference_files (%q), not both", stage, ref, files)
	case ref != "" && ref == s.String("candidate"):
		return fmt.Errorf("stage %s: candidate and reference are the same stage %q", stage, ref)
	}
	return nil
}

func fileNamed(in pipeline.Input, name string) string {
	for _, f := range in.Files {
		if filepath.Base(f) == name {
			return f
		}
	}
	return ""
}

type pairFiles struct {
	member, scenario, block string
	cand, ref               string
}

// pairs finds, for each candidate mask, its reference: same scenario and
// block, and the same sweep member when the reference has members (a
// reference without a member serves every candidate member).
func pairs(job *pipeline.Job) ([]pairFiles, error) {
	candStage := job.Settings.String("candidate")
	refStage := job.Settings.String("reference")
	var out []pairFiles
	for _, in := range job.InputsFrom(candStage) {
		if in.Kind == "file" {
			continue
		}
		cf := fileNamed(in, MaskName)
		if cf == "" {
			return nil, fmt.Errorf("evaluate: candidate stage %q has no %s for %s/%s (files: %s); is it a label or prediction stage?",
				candStage, MaskName, in.Scenario, in.Block, strings.Join(in.Files, ", "))
		}
		p := pairFiles{member: in.Member, scenario: in.Scenario, block: in.Block, cand: cf}
		if refStage != "" {
			var best string
			for _, r := range job.InputsFrom(refStage) {
				rf := fileNamed(r, MaskName)
				if rf == "" || r.Scenario != in.Scenario || r.Block != in.Block {
					continue
				}
				if r.Member == in.Member {
					best = rf
					break
				}
				if r.Member == "" {
					best = rf
				}
			}
			if best == "" {
				return nil, fmt.Errorf("evaluate: reference stage %q has no %s for scenario %q block %q member %q", refStage, MaskName, in.Scenario, in.Block, in.Member)
			}
			p.ref = best
		} else {
			for _, r := range job.InputsFrom("reference_files") {
				if (r.Scenario == "" || r.Scenario == in.Scenario) && (r.Block == "" || r.Block == in.Block) {
					if len(r.Files) != 1 {
						return nil, fmt.Errorf("evaluate: reference_files matches %d files for scenario %q block %q (%s); the pattern must give one mask per scenario and block",
							len(r.Files), in.Scenario, in.Block, strings.Join(r.Files, ", "))
					}
					if p.ref != "" && p.ref != r.Files[0] {
						return nil, fmt.Errorf("evaluate: reference_files gives two files for scenario %q block %q: %s and %s", in.Scenario, in.Block, p.ref, r.Files[0])
					}
					p.ref = r.Files[0]
				}
			}
			if p.ref == "" {
				return nil, fmt.Errorf("evaluate: reference_files has no file for scenario %q block %q; use {scenario} and {block} in the pattern", in.Scenario, in.Block)
			}
		}
		out = append(out, p)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("evaluate: the candidate stage %q gave no inputs; list it under the stage's inputs", candStage)
	}
	sort.Slice(out, func(i, j int) bool {
		a, b := out[i], out[j]
		if a.member != b.member {
			return a.member < b.member
		}
		if a.scenario != b.scenario {
			return a.scenario < b.scenario
		}
		return a.block < b.block
	})
	return out, nil
}

// Run scores every candidate mask against its reference.
func (k Kind) Run(ctx context.Context, job *pipeline.Job) error {
	if err := k.CheckStage(job.Stage, job.Settings, &job.Campaign); err != nil {
		return err
	}
	ps, err := pairs(job)
	if err != nil {
		return err
	}
	gapFactor := job.Settings.Float("max_gap_factor")
	var ev *Evaluator
	var g *grid.Grid
	var firstFile string
	type state struct {
		clock    *catalog.Clock
		prev, dt float64
	}
	states := map[[2]string]*state{}
	var ref, cand []byte
	for _, p := range ps {
		err := func() error {
			rf, err := catalog.OpenMask(p.ref)
			if err != nil {
				return err
			}
			defer rf.Close()
			cf, err := catalog.OpenMask(p.cand)
			if err != nil {
				return err
			}
			defer cf.Close()
			if err := catalog.SameGrid(rf.Grid, cf.Grid, p.ref, p.cand); err != nil {
				return err
			}
			if err := catalog.SameTimes(rf.Times, cf.Times, p.ref, p.cand); err != nil {
				return err
			}
			if ev == nil {
				g, firstFile = cf.Grid, p.cand
				masks, err := catalog.RegionMasks(g, job.Campaign.Regions)
				if err != nil {
					return err
				}
				var regions []Region
				for _, m := range masks {
					r := Region{Name: m.Name}
					for c, in := range m.In {
						if in {
							r.Cells = append(r.Cells, c)
						}
					}
					regions = append(regions, r)
				}
				ev = NewEvaluator(g, regions)
				ev.LinkKmPer6h = [K]float64{0, job.Settings.Float("tc_link_km_per_6h"), job.Settings.Float("ar_link_km_per_6h")}
				ref, cand = make([]byte, g.Len()), make([]byte, g.Len())
			} else if err := catalog.SameGrid(g, cf.Grid, firstFile, p.cand); err != nil {
				return fmt.Errorf("%w (one evaluate stage scores one grid; use one stage per grid)", err)
			}
			key := [2]string{p.member, p.scenario}
			st := states[key]
			if st == nil {
				st = &state{clock: &catalog.Clock{}, prev: math.NaN(), dt: math.NaN()}
				states[key] = st
			}
			for i := 0; i < cf.NSteps(); i++ {
				if err := ctx.Err(); err != nil {
					return err
				}
				t, err := st.clock.Time(cf.Times, i, p.cand)
				if err != nil {
					return err
				}
				if !math.IsNaN(st.prev) {
					d := t.Hours - st.prev
					if d <= 0 {
						return fmt.Errorf("%s: time %s does not come after the previous step (overlapping or repeated blocks?)", p.cand, t.ISO)
					}
					if math.IsNaN(st.dt) || d < st.dt {
						st.dt = d
					}
					if d > gapFactor*st.dt {
						ev.Gap(p.member, p.scenario)
					}
				}
				st.prev = t.Hours
				if err := rf.Read(i, ref); err != nil {
					return err
				}
				if err := cf.Read(i, cand); err != nil {
					return err
				}
				if err := ev.Step(p.member, p.scenario, t, ref, cand); err != nil {
					return fmt.Errorf("%s vs %s: %w", p.cand, p.ref, err)
				}
			}
			return nil
		}()
		if err != nil {
			return err
		}
	}
	minIoU := job.Settings.Float("event_iou_min")
	res := ev.Results(minIoU)
	if err := res.WriteCSV(job.OutDir); err != nil {
		return err
	}
	settings := map[string]any{}
	for _, s := range k.Settings() {
		settings[s.Name] = job.Settings[s.Name]
	}
	header := map[string]any{
		"kind": k.Name(), "version": version, "settings": settings,
		"classes":           catalog.ClassNames[:],
		"event_matching":    MatchingRule,
		"correct_negatives": CorrectNegativesRule,
		"weighting":         "count: pixel-steps; area: pixel-steps weighted by cell area in km2 (CF-1.13 section 7.2 on a sphere of radius 6371008.7714 m)",
		"caution":           "Scores of detections from model output are research results, not forecasts or warnings.",
	}
	if err := res.WriteJSON(filepath.Join(job.OutDir, ScoresFile), header); err != nil {
		return err
	}
	prov := ncio.Provenance{Tool: "squall", Kind: k.Name(), KindVersion: fmt.Sprint(version), Settings: map[string]string{}}
	for n, v := range settings {
		prov.Settings[n] = fmt.Sprint(v)
	}
	if err := ev.WriteMaps(job.OutDir, prov); err != nil {
		return err
	}
	job.Logf("evaluate: %d mask pairs, %d series", len(ps), len(ev.series))
	return nil
}

// MatchingRule documents event matching (also in doc.go and scores.json).
const MatchingRule = "Events are space-time objects: per class, 8-connected regions per step (periodic in longitude) linked " +
	"through consecutive steps by overlap, the larger overlap keeping the identity at splits and merges, and objects that " +
	"overlap nothing linked by centroid distance up to tc_link_km_per_6h / ar_link_km_per_6h (as in the catalog). " +
	"A reference and a candidate event of the same class are a candidate pair when they share a cell at a step; their " +
	"score is the space-time IoU, overlap / (area-steps of one + of the other - overlap), in km2 x steps. Pairs are " +
	"matched one-to-one, greedily by decreasing IoU, when the IoU is at least event_iou_min. A matched reference event is " +
	"a hit, an unmatched one a miss, an unmatched candidate event a false alarm. An event counts in its first step's season " +
	"and in every region it touches; a hit counts where its reference event does."

// CorrectNegativesRule documents the d cell of the event table.
const CorrectNegativesRule = "Events have no natural 'no' count; d is the number of time steps in which neither mask has " +
	"any pixel of the class in the region (quiet steps). Scores that use d (POFD, proportion correct, Heidke, Peirce, " +
	"Gilbert, odds ratio) depend on this choice; POD, FAR, CSI and frequency bias do not."

// safeName keeps letters, digits, '.', '_' and '-' of a label for a file
// name, and replaces the rest by '-'.
func safeName(s string) string {
	b := []byte(s)
	for i, c := range b {
		ok := c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '.' || c == '_' || c == '-'
		if !ok {
			b[i] = '-'
		}
	}
	return string(b)
}

// MapsName is the file name of the maps of one series.
func MapsName(scenario, member string) string {
	if member == "" {
		return "maps_" + safeName(scenario) + ".nc"
	}
	return "maps_" + safeName(scenario) + "_" + safeName(member) + ".nc"
}

// WriteMaps writes, per (scenario, member), the frequency per cell of
// pixel hits (both masks have the class), misses (reference only) and
// false alarms (candidate only), as fractions of the series' time steps,
// with dims (class, lat, lon) and class = 1, 2 (flag values).
func (e *Evaluator) WriteMaps(dir string, prov ncio.Provenance) error {
	seen := map[string]bool{}
	for _, s := range e.series {
		name := MapsName(s.scenario, s.member)
		if seen[name] {
			return fmt.Errorf("evaluate: two series map to the file name %s; rename a scenario or member", name)
		}
		seen[name] = true
		w, err := ncio.Create(filepath.Join(dir, name))
		if err != nil {
			return err
		}
		w.DefDim("class", len(eventClasses))
		w.DefVar(ncio.VarSpec{Name: "class", Type: ncio.Byte, Dims: []string{"class"}, Attrs: []ncio.Attr{
			{Name: "long_name", Value: "event class"}, {Name: "flag_values", Value: []int8{catalog.TropicalCyclone, catalog.AtmosphericRiver}},
			{Name: "flag_meanings", Value: catalog.ClassNames[1] + " " + catalog.ClassNames[2]}}})
		w.DefLat(e.g.Lat)
		w.DefLon(e.g.Lon)
		dims := []string{"class", "lat", "lon"}
		for _, v := range []struct{ name, long string }{
			{"hit_frequency", "fraction of time steps where both masks have the class"},
			{"miss_frequency", "fraction of time steps where the reference has the class and the candidate does not"},
			{"false_alarm_frequency", "fraction of time steps where the candidate has the class and the reference does not"},
		} {
			w.DefVar(ncio.VarSpec{Name: v.name, Type: ncio.Float, Dims: dims, Deflate: 1, Shuffle: true,
				Chunks: []int{1, e.g.NLat(), e.g.NLon()}, Attrs: []ncio.Attr{
					{Name: "long_name", Value: v.long}, {Name: "units", Value: "1"}, {Name: "cell_methods", Value: "time: mean"}}})
		}
		w.PutConventions("squall evaluation maps, scenario "+s.scenario+memberSuffix(s.member), prov)
		w.PutGlobalAttr("scenario", s.scenario)
		w.PutGlobalAttr("member", s.member)
		w.PutGlobalAttr("time_steps", int32(s.steps))
		if err := w.EndDef(); err != nil {
			w.Abort()
			return err
		}
		w.WriteInt8("class", nil, nil, []int8{catalog.TropicalCyclone, catalog.AtmosphericRiver})
		n := e.g.Len()
		for ci, k := range eventClasses {
			for _, v := range []struct {
				name string
				c    []int32
			}{{"hit_frequency", s.hit[k]}, {"miss_frequency", s.miss[k]}, {"false_alarm_frequency", s.fa[k]}} {
				f := make([]float32, n)
				for i, c := range v.c {
					f[i] = float32(float64(c) / float64(s.steps))
				}
				if err := w.WriteFloat32(v.name, []int{ci, 0, 0}, []int{1, e.g.NLat(), e.g.NLon()}, f); err != nil {
					w.Abort()
					return err
				}
			}
		}
		if err := w.Close(); err != nil {
			return err
		}
	}
	return nil
}

func memberSuffix(m string) string {
	if m == "" {
		return ""
	}
	return ", member " + m
}
