package catalog

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// Output files of the catalog kind (see doc.go for their columns).
const (
	EventsFile  = "events.csv"
	PointsFile  = "track_points.csv"
	GeoJSONFile = "events.geojson"
	TracksFile  = "tracks.nc"
	MaskName    = "mask.nc"
	FieldsName  = "fields.nc"
)

const version = 1

// Kind is the catalog stage kind.
type Kind struct{}

var (
	_ pipeline.Kind        = Kind{}
	_ pipeline.Checker     = Kind{}
	_ pipeline.SectionUser = Kind{}
)

func (Kind) Name() string      { return "catalog" }
func (Kind) Version() int      { return version }
func (Kind) Fan() pipeline.Fan { return pipeline.FanScenario }

// CampaignSections: only the regions reach the outputs.
func (Kind) CampaignSections() []string { return []string{pipeline.SectionRegions} }

func (Kind) Doc() string {
	return "Builds an event catalog per scenario from class masks (mask.nc) and fields (fields.nc): " +
		"connected regions per time step on the sphere (8-connected, periodic in longitude), linked through time by overlap " +
		"(the larger overlap keeps the identity at splits and merges); per event its track of area-weighted centroids, " +
		"duration, area, intensity (TC: minimum SLP, maximum 10 m wind and Saffir-Simpson category; AR: maximum and mean IVT, " +
		"maximum IWV), first landfall and regions touched. Writes events.csv, track_points.csv, events.geojson (RFC 7946) " +
		"and tracks.nc (CF trajectories). Detections from model output are research results, not warnings."
}

func (Kind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "masks", Type: pipeline.TypeString, Default: "",
			Doc: "input stage whose mask.nc holds the class masks; empty: every input that has a mask.nc (there must be one such stage)"},
		{Name: "fields", Type: pipeline.TypeString, Default: "",
			Doc: "input stage whose fields.nc gives intensities and land_area_fraction; empty: any input with a fields.nc, or none (intensity columns stay empty)"},
		{Name: "land_mask", Type: pipeline.TypeFiles, Default: "",
			Doc: "netCDF land mask or land fraction file (may use {scenario}); empty: land_area_fraction from fields.nc or mask.nc; with neither, no landfall is reported"},
		{Name: "land_mask_variable", Type: pipeline.TypeString, Default: "",
			Doc: "variable of the land mask file; empty: standard_name land_area_fraction, else the file's only 2-D variable"},
		{Name: "land_values", Type: pipeline.TypeFloats, Default: []float64{},
			Doc: "values of the land variable that mean land (for category masks, e.g. 1, 2, 3, 4); empty: a land fraction compared with land_fraction_min"},
		{Name: "land_fraction_min", Type: pipeline.TypeFloat, Unit: "1", Default: 0.5, Min: pipeline.Bound(0), Max: pipeline.Bound(1),
			Doc: "a cell is land when its land area fraction is at least this (0.5: the majority of the cell; common practice)"},
		{Name: "land_mask_regrid", Type: pipeline.TypeString, Default: RegridNearest, Choices: []string{RegridNearest, RegridRefuse},
			Doc: "a land mask on another grid than the masks: nearest takes the source cell containing each mask cell centre; refuse stops with an error"},
		{Name: "min_steps", Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(1),
			Doc: "drop events seen at fewer time steps than this"},
		{Name: "min_area_km2", Type: pipeline.TypeFloat, Unit: "km2", Default: 0.0, Min: pipeline.Bound(0),
			Doc: "drop events whose largest area is below this"},
		{Name: "tc_link_km_per_6h", Type: pipeline.TypeFloat, Unit: "km", Default: 400.0, Min: pipeline.Bound(0),
			Doc: "cyclone objects that do not overlap between steps are linked when their centroids are at most this far apart per 6 hours (400 km per 6 h: a common tracking limit, from memory; 0: overlap only)"},
		{Name: "ar_link_km_per_6h", Type: pipeline.TypeFloat, Unit: "km", Default: 0.0, Min: pipeline.Bound(0),
			Doc: "the same for river objects (0: overlap only; rivers are large and overlap from step to step)"},
		{Name: "max_gap_factor", Type: pipeline.TypeFloat, Unit: "1", Default: 1.5, Min: pipeline.Bound(1),
			Doc: "events end where two consecutive time steps are further apart than this many times the usual time step (missing data)"},
	}
}

// CheckStage validates settings at load time.
func (Kind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	if s.Has("land_values") {
		for _, v := range s.Floats("land_values") {
			if math.IsNaN(v) {
				return fmt.Errorf("stage %s: land_values holds NaN", stage)
			}
		}
	}
	return nil
}

// config is the settings of one run.
type config struct {
	masks, fields, landVar, regrid string
	rule                           LandRule
	filter                         Filter
	gapFactor                      float64
	linkKm                         [3]float64
}

func readConfig(v pipeline.Values) config {
	return config{
		masks: v.String("masks"), fields: v.String("fields"), landVar: v.String("land_mask_variable"),
		regrid:    v.String("land_mask_regrid"),
		rule:      LandRule{Values: v.Floats("land_values"), MinFraction: v.Float("land_fraction_min")},
		filter:    Filter{MinSteps: v.Int("min_steps"), MinAreaKm2: v.Float("min_area_km2")},
		gapFactor: v.Float("max_gap_factor"),
		linkKm:    [3]float64{0, v.Float("tc_link_km_per_6h"), v.Float("ar_link_km_per_6h")},
	}
}

// settingsText renders the settings for the history attribute, sorted.
func settingsText(k pipeline.Kind, v pipeline.Values) map[string]string {
	out := map[string]string{}
	for _, s := range k.Settings() {
		if x, ok := v[s.Name]; ok {
			out[s.Name] = fmt.Sprint(x)
		}
	}
	return out
}

// fileNamed returns the input's file with that base name, or "".
func fileNamed(in pipeline.Input, name string) string {
	for _, f := range in.Files {
		if filepath.Base(f) == name {
			return f
		}
	}
	return ""
}

// block is one mask file with its fields file.
type block struct {
	in     pipeline.Input
	mask   string
	fields string
}

// Run builds the catalog of one scenario (every block and sweep member).
func (k Kind) Run(ctx context.Context, job *pipeline.Job) error {
	cfg := readConfig(job.Settings)
	var maskIns []pipeline.Input
	for _, in := range job.Inputs {
		if in.Kind == "file" {
			continue
		}
		if cfg.masks != "" && in.From != cfg.masks {
			continue
		}
		if fileNamed(in, MaskName) != "" {
			maskIns = append(maskIns, in)
		}
	}
	if len(maskIns) == 0 {
		if cfg.masks != "" {
			return fmt.Errorf("catalog: input stage %q (setting masks) has no %s for scenario %q; check the stage's inputs", cfg.masks, MaskName, job.Scenario)
		}
		return fmt.Errorf("catalog: no input has a %s for scenario %q; list a label (or prediction) stage under inputs", MaskName, job.Scenario)
	}
	froms := map[string]bool{}
	for _, in := range maskIns {
		froms[in.From] = true
	}
	if len(froms) > 1 {
		var names []string
		for n := range froms {
			names = append(names, n)
		}
		sort.Strings(names)
		return fmt.Errorf("catalog: several input stages have %s (%s); say which with the setting masks", MaskName, strings.Join(names, ", "))
	}
	// Fields by (scenario, block, member); a fields instance without a
	// member serves every member.
	fieldsFor := func(m pipeline.Input) string {
		best := ""
		for _, in := range job.Inputs {
			if in.Kind == "file" || (cfg.fields != "" && in.From != cfg.fields) {
				continue
			}
			f := fileNamed(in, FieldsName)
			if f == "" || in.Scenario != m.Scenario || in.Block != m.Block {
				continue
			}
			if in.Member == m.Member {
				return f
			}
			if in.Member == "" {
				best = f
			}
		}
		return best
	}
	groups := map[string][]block{}
	var members []string
	for _, in := range maskIns {
		if _, ok := groups[in.Member]; !ok {
			members = append(members, in.Member)
		}
		groups[in.Member] = append(groups[in.Member], block{in: in, mask: fileNamed(in, MaskName), fields: fieldsFor(in)})
	}
	sort.Strings(members)
	if cfg.fields != "" {
		for _, m := range members {
			for _, b := range groups[m] {
				if b.fields == "" {
					return fmt.Errorf("catalog: input stage %q (setting fields) has no %s for scenario %q block %q", cfg.fields, FieldsName, b.in.Scenario, b.in.Block)
				}
			}
		}
	}
	var landFiles []string
	for _, in := range job.InputsFrom("land_mask") {
		if in.Kind == "file" {
			landFiles = append(landFiles, in.Files...)
		}
	}
	sort.Strings(landFiles)
	if len(landFiles) > 1 {
		// One land mask per scenario: several blocks may resolve to the
		// same file; distinct files are ambiguous.
		uniq := landFiles[:1]
		for _, f := range landFiles[1:] {
			if f != uniq[len(uniq)-1] {
				uniq = append(uniq, f)
			}
		}
		if len(uniq) > 1 {
			return fmt.Errorf("catalog: the land_mask pattern matches %d files (%s); a scenario needs one land mask", len(uniq), strings.Join(uniq, ", "))
		}
		landFiles = uniq
	}
	cat := &Catalog{}
	clock := &Clock{}
	nextID := 0
	var landSource string
	for _, m := range members {
		bl := groups[m]
		sort.Slice(bl, func(i, j int) bool { return bl[i].in.Block < bl[j].in.Block })
		evs, src, err := buildSeries(ctx, job, cfg, bl, landFiles, clock)
		if err != nil {
			return err
		}
		landSource = src
		for _, e := range evs {
			e.ID += nextID
			if e.SplitFrom > 0 {
				e.SplitFrom += nextID
			}
			if e.MergedInto > 0 {
				e.MergedInto += nextID
			}
		}
		nextID += len(evs)
		cat.Groups = append(cat.Groups, Group{Labels: Labels{Scenario: job.Scenario, Member: m}, Events: evs})
		job.Logf("catalog: scenario %s member %q: %d blocks, %d events", job.Scenario, m, len(bl), len(evs))
	}
	if landSource == "" {
		job.Logf("catalog: no land information (no land_mask setting, no land_area_fraction in fields.nc or mask.nc): landfall columns are empty")
	}
	out := job.OutDir
	if err := cat.WriteCSV(filepath.Join(out, EventsFile), filepath.Join(out, PointsFile)); err != nil {
		return err
	}
	if err := WriteGeoJSON(filepath.Join(out, GeoJSONFile), cat.Features()); err != nil {
		return err
	}
	units := "hours since " + clock.Ref().String()
	cal := string(clock.Calendar())
	if cal == "" {
		cal = "standard"
	}
	var ins []ncio.InputDigest
	for _, in := range job.Inputs {
		for _, f := range in.Files {
			ins = append(ins, ncio.InputDigest{Name: in.From + ":" + filepath.Base(f), Digest: in.Scenario + "/" + in.Block + "/" + in.Member})
		}
	}
	tf := TrackFile{TimeUnits: units, Calendar: cal, Title: "squall event catalog, scenario " + job.Scenario,
		Provenance: ncio.Provenance{Tool: "squall", Kind: k.Name(), KindVersion: fmt.Sprint(version),
			Settings: settingsText(k, job.Settings), Inputs: ins}}
	return cat.WriteTracks(filepath.Join(out, TracksFile), tf)
}

// buildSeries reads the blocks of one member in time order and returns
// its events, and where land came from ("" for nowhere).
func buildSeries(ctx context.Context, job *pipeline.Job, cfg config, bl []block, landFiles []string, clock *Clock) ([]*Event, string, error) {
	var b *Builder
	var g *grid.Grid
	var firstMask string
	var landSource string
	var maskBuf []byte
	var fields Fields
	step := 0
	prevHours, dt := math.NaN(), math.NaN()
	for _, blk := range bl {
		mf, err := OpenMask(blk.mask)
		if err != nil {
			return nil, "", err
		}
		err = func() error {
			defer mf.Close()
			var ff *FieldsFile
			if blk.fields != "" {
				if ff, err = OpenFields(blk.fields); err != nil {
					return err
				}
				defer ff.Close()
				if err := SameGrid(mf.Grid, ff.Grid, blk.mask, blk.fields); err != nil {
					return err
				}
				if err := SameTimes(mf.Times, ff.Times, blk.mask, blk.fields); err != nil {
					return err
				}
			}
			if b == nil {
				g, firstMask = mf.Grid, blk.mask
				var land []bool
				switch {
				case len(landFiles) == 1:
					if land, err = ReadLandMask(landFiles[0], cfg.landVar, cfg.rule, g, cfg.regrid); err != nil {
						return err
					}
					landSource = landFiles[0]
				case ff != nil && ff.Land != nil:
					land, landSource = cfg.rule.Apply(ff.Land), blk.fields
				default:
					lf, err := ReadLandFraction(mf.File, g)
					if err != nil {
						return err
					}
					if lf != nil {
						land, landSource = cfg.rule.Apply(lf), blk.mask
					}
				}
				regions, err := RegionMasks(g, job.Campaign.Regions)
				if err != nil {
					return err
				}
				if b, err = NewBuilder(g, land, regions); err != nil {
					return err
				}
				b.LinkKmPer6h = cfg.linkKm
				maskBuf = make([]byte, g.Len())
			} else if err := SameGrid(g, mf.Grid, firstMask, blk.mask); err != nil {
				return err
			}
			for i := 0; i < mf.NSteps(); i++ {
				if err := ctx.Err(); err != nil {
					return err
				}
				t, err := clock.Time(mf.Times, i, blk.mask)
				if err != nil {
					return err
				}
				if !math.IsNaN(prevHours) {
					d := t.Hours - prevHours
					if d <= 0 {
						return fmt.Errorf("%s: time %s does not come after the previous step %s (overlapping or repeated blocks?)", blk.mask, t.ISO, describeHours(prevHours, clock))
					}
					// The usual step is the smallest seen so far; a step
					// much longer than it is a gap (missing data).
					if math.IsNaN(dt) || d < dt {
						dt = d
					}
					if d > cfg.gapFactor*dt {
						b.Break()
					}
				}
				prevHours = t.Hours
				if err := mf.Read(i, maskBuf); err != nil {
					return err
				}
				if ff != nil {
					if err := ff.Read(i, &fields); err != nil {
						return err
					}
				}
				if err := b.Step(step, t, maskBuf, fields); err != nil {
					return fmt.Errorf("%s: %w", blk.mask, err)
				}
				step++
			}
			return nil
		}()
		if err != nil {
			return nil, "", err
		}
	}
	if b == nil {
		return nil, "", nil
	}
	return b.Events(cfg.filter), landSource, nil
}

func describeHours(h float64, c *Clock) string {
	return fmt.Sprintf("%g hours after %s", h, c.Ref())
}
