package label

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// FieldsFile is the subset kind's output this stage reads.
const FieldsFile = "fields.nc"

// ClimatologyFile is the ivt-climatology kind's output, read in relative
// threshold mode.
const ClimatologyFile = "ivt_climatology.nc"

// Kind is the "label" stage kind.
type Kind struct{}

var _ pipeline.Kind = Kind{}
var _ pipeline.Checker = Kind{}
var _ pipeline.SectionUser = Kind{}

// KindName is the kind's name in campaign files.
const KindName = "label"

// Version of the label kind; bump whenever the same inputs and settings
// would give different outputs.
const Version = 1

func (Kind) Name() string      { return KindName }
func (Kind) Version() int      { return Version }
func (Kind) Fan() pipeline.Fan { return pipeline.FanBlock }
func (Kind) Settings() []pipeline.Setting {
	return settings()
}

func (Kind) Doc() string {
	return "Heuristic class masks from published criteria: tropical cyclones (SLP minima with 850 hPa vorticity, " +
		"warm core, wind thresholds after Bengtsson et al. 1995 / Vitart et al. 1997 / Walsh et al. 2007, stitched into tracks) " +
		"and atmospheric rivers (IVT >= 250 kg m-1 s-1 after the AMS Glossary, or a per-cell monthly percentile, " +
		"with length, width and latitude rules on the sphere). Reads fields.nc from a subset input " +
		"(and ivt_climatology.nc in relative mode); writes mask.nc (class_mask 0 background, 1 tropical_cyclone, " +
		"2 atmospheric_river), tc_candidates.csv, tc_tracks.csv and ar_objects.csv. Threshold settings accept lists " +
		"(one member per value) for label-uncertainty studies. Labels are research output, not warnings."
}

// CampaignSections: the label stage reads nothing from the campaign beyond
// its inputs and settings.
func (Kind) CampaignSections() []string { return []string{} }

// CheckStage validates the settings at load time.
// At load time a swept setting still holds its list of values; each value
// was type- and range-checked by the loader, and ParseConfig's own checks
// concern settings that cannot be swept, so each list is checked through
// its first value.
func (Kind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	one := pipeline.Values{}
	for k, x := range s {
		if l, ok := x.([]any); ok && sweepable(k) && len(l) > 0 {
			x = l[0]
		}
		one[k] = x
	}
	if _, err := ParseConfig(one); err != nil {
		return fmt.Errorf("stage %s: %w", stage, err)
	}
	return nil
}

func sweepable(name string) bool {
	for _, s := range settings() {
		if s.Name == name {
			return s.Sweep
		}
	}
	return false
}

// Run labels every time step of the instance's fields.nc.
func (k Kind) Run(ctx context.Context, job *pipeline.Job) error {
	cfg, err := ParseConfig(job.Settings)
	if err != nil {
		return err
	}
	fieldsPath, err := inputFile(job, FieldsFile, true)
	if err != nil {
		return err
	}
	climPath, err := inputFile(job, ClimatologyFile, false)
	if err != nil {
		return err
	}
	fl, err := OpenFields(fieldsPath)
	if err != nil {
		return err
	}
	defer fl.Close()
	res, err := Label(ctx, fl, &cfg, climPath, job.Logf)
	if err != nil {
		return err
	}
	return res.Write(job.OutDir, fl, Provenance(KindName, Version, job))
}

// inputFile finds the one input file of that base name among the job's
// inputs. A required file that is absent, or a file given twice, is an
// error naming the inputs.
func inputFile(job *pipeline.Job, name string, required bool) (string, error) {
	var found []string
	var from []string
	for _, in := range job.Inputs {
		for _, f := range in.Files {
			if filepath.Base(f) == name {
				found = append(found, f)
				from = append(from, in.From)
			}
		}
	}
	switch {
	case len(found) == 1:
		return found[0], nil
	case len(found) > 1:
		return "", fmt.Errorf("stage %s: %d inputs provide %s (from %v); give the label stage exactly one", job.Stage, len(found), name, from)
	case required:
		var names []string
		for _, in := range job.Inputs {
			names = append(names, in.From+" ("+in.Kind+")")
		}
		return "", fmt.Errorf("stage %s: no input provides %s (inputs: %v); list a subset stage among its inputs", job.Stage, name, names)
	}
	return "", nil
}

// Result is what Label found in one block: candidates per step, kept
// tracks and AR objects; the mask is streamed to disk by Write.
type Result struct {
	cfg        *Config
	Candidates [][]Candidate
	Tracks     []Track
	windMin    float64
	tc         *tcPlan
	ar         *arSource
	clim       *Climatology
	ctx        context.Context
	logf       func(string, ...any)
}

// Label runs the tropical-cyclone detection over every step (the first
// pass: candidates, then tracks) and prepares the AR detection. The masks
// are made in the second pass, by Write, one step at a time, so memory
// stays a few fields whatever the length of the block.
func Label(ctx context.Context, fl *Fields, cfg *Config, climPath string, logf func(string, ...any)) (*Result, error) {
	if logf == nil {
		logf = func(string, ...any) {}
	}
	r := &Result{cfg: cfg, ctx: ctx, logf: logf}
	var errs []error
	if cfg.TC {
		p, err := planTC(fl, &cfg.TCConf, !cfg.TracksOnly)
		if err != nil {
			errs = append(errs, err)
		}
		r.tc = p
	}
	if cfg.AR {
		s, err := planAR(fl, &cfg.ARConf)
		if err != nil {
			errs = append(errs, err)
		}
		r.ar = s
		if err == nil && cfg.ARConf.Threshold == ThresholdRelative {
			if climPath == "" {
				errs = append(errs, fmt.Errorf("setting ar_threshold is relative but no input provides %s; add an ivt-climatology stage to the label stage's inputs, or use ar_threshold: absolute", ClimatologyFile))
			} else {
				c, err := ReadClimatology(climPath)
				if err == nil {
					err = c.Check(fl, s.quantity)
				}
				if err != nil {
					errs = append(errs, err)
				}
				r.clim = c
			}
		}
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}
	nt := fl.Time.Len()
	r.Candidates = make([][]Candidate, nt)
	if cfg.TC {
		c := &cfg.TCConf
		r.windMin = c.WindMin
		if r.windMin == 0 {
			r.windMin = WindThreshold(fl.Grid)
		}
		logf("label: tropical cyclones with 10 m wind threshold %.2f m s-1 (grid spacing %.0f km)", r.windMin, GridSpacing(fl.Grid)/1e3)
		bufs := newTCBuffers(fl.Grid.Len())
		for s := range nt {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			f, err := r.readTC(fl, s, bufs)
			if err != nil {
				return nil, err
			}
			r.Candidates[s], err = FindCandidates(fl.Grid, f, c, r.windMin, s, fl.Hours[s])
			if err != nil {
				return nil, err
			}
		}
		r.Tracks = Stitch(r.Candidates, fl.Hours, TrackRules{
			MaxSpeed: c.MaxSpeed, MaxGapSteps: c.MaxGapSteps, MinLifetime: c.MinLifetime,
			GenesisMaxLat: c.GenesisMaxLat, CheckGenesis: c.Has(CritGenesisLat),
		})
		n := 0
		for _, cs := range r.Candidates {
			n += len(cs)
		}
		logf("label: %d candidates, %d tracks kept", n, len(r.Tracks))
	}
	return r, nil
}

type tcBuffers struct {
	slp, vort, w10, t850, t700, t500, t300, w850, w300, tmp []float64
}

func newTCBuffers(n int) *tcBuffers {
	mk := func() []float64 { return make([]float64, n) }
	return &tcBuffers{mk(), mk(), mk(), mk(), mk(), mk(), mk(), mk(), mk(), mk()}
}

// readTC reads the fields of one step that the TC detection uses.
func (r *Result) readTC(fl *Fields, s int, b *tcBuffers) (*TCStep, error) {
	p := r.tc
	f := &TCStep{}
	var err error
	read := func(c *Channel, buf []float64) []float64 {
		if c == nil || err != nil {
			return nil
		}
		var x []float64
		x, err = fl.Read(c, s, buf)
		return x
	}
	readSpeed := func(sp *speed, buf []float64) []float64 {
		if sp == nil || err != nil {
			return nil
		}
		var x []float64
		x, err = fl.readSpeed(sp, s, buf, b.tmp)
		return x
	}
	f.SLP = read(p.slp, b.slp)
	if p.vort != nil {
		if p.vort.c != nil {
			f.Vort850 = read(p.vort.c, b.vort)
		} else {
			u := read(p.vort.u, b.vort)
			v := read(p.vort.v, b.tmp)
			if err == nil {
				f.Vort850, err = fl.Grid.RelativeVorticity(u, v)
			}
		}
	}
	f.Wind10 = readSpeed(p.wind10, b.w10)
	f.T850, f.T700 = read(p.t850, b.t850), read(p.t700, b.t700)
	f.T500, f.T300 = read(p.t500, b.t500), read(p.t300, b.t300)
	f.Wind850, f.Wind300 = readSpeed(p.wind850, b.w850), readSpeed(p.wind300, b.w300)
	if err != nil {
		return nil, err
	}
	if f.T850 == nil || f.T700 == nil || f.T500 == nil || f.T300 == nil {
		f.T850, f.T700, f.T500, f.T300 = nil, nil, nil, nil
	}
	return f, nil
}

// Write makes the masks step by step (TC footprints of kept track points,
// AR objects, overlap precedence) and writes mask.nc and the CSV tables
// into dir.
func (r *Result) Write(dir string, fl *Fields, prov ncio.Provenance) error {
	if r.cfg.TracksOnly {
		return errors.New("label: a tracks-only result has no masks to write")
	}
	return r.write(dir, fl, prov)
}

// thresholds fills thr with the AR threshold per pixel for step s.
func (r *Result) thresholds(fl *Fields, s int, thr []float64) {
	c := &r.cfg.ARConf
	abs, floor := c.IVTMin, c.IVTFloor
	if r.ar.quantity == QIWV {
		abs, floor = c.IWVMin, c.IWVMin
	}
	if r.clim == nil {
		for i := range thr {
			thr[i] = abs
		}
		return
	}
	month := fl.Time.Times[s].Month
	pc := r.clim.Month(month)
	for i := range thr {
		if math.IsNaN(pc[i]) {
			thr[i] = abs // too few samples: fall back to the absolute threshold
		} else {
			thr[i] = math.Max(pc[i], floor)
		}
	}
}
