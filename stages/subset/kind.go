package subset

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// FieldsFile is the name of the file every subset instance writes.
const FieldsFile = "fields.nc"

// Kind is the subset stage kind. Register it as subset.Kind{}.
type Kind struct{}

var (
	_ pipeline.Kind        = Kind{}
	_ pipeline.Checker     = Kind{}
	_ pipeline.SectionUser = Kind{}
)

// Name implements pipeline.Kind.
func (Kind) Name() string { return "subset" }

// Version implements pipeline.Kind. Bump it whenever the same inputs and
// settings would give different bytes.
func (Kind) Version() int { return 1 }

// Doc implements pipeline.Kind.
func (Kind) Doc() string {
	return "Cuts the campaign's channels out of a scenario's raw model files for one year: variables by CF " +
		"standard_name (then name, with the campaign's variables mapping), pressure levels (hybrid " +
		"sigma-pressure levels interpolated linearly in log pressure, never extrapolated below the surface), " +
		"a latitude-longitude box (may cross 0 or 180 degrees), months and a time stride; derives wind speed, " +
		"850 hPa relative vorticity, IWV and IVT. Writes " + FieldsFile + " (CF netCDF-4, one time step per chunk)."
}

// Fan implements pipeline.Kind: one instance per scenario, year and member.
func (Kind) Fan() pipeline.Fan { return pipeline.FanBlock }

// CampaignSections implements pipeline.SectionUser.
func (Kind) CampaignSections() []string {
	return []string{pipeline.SectionScenarios, pipeline.SectionVariables, pipeline.SectionChannels}
}

// Settings implements pipeline.Kind.
func (Kind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "lat_min", Type: pipeline.TypeFloat, Unit: "degrees_north", Default: -90.0, Min: pipeline.Bound(-90), Max: pipeline.Bound(90),
			Doc: "southern edge of the box (inclusive)"},
		{Name: "lat_max", Type: pipeline.TypeFloat, Unit: "degrees_north", Default: 90.0, Min: pipeline.Bound(-90), Max: pipeline.Bound(90),
			Doc: "northern edge of the box (inclusive)"},
		{Name: "lon_min", Type: pipeline.TypeFloat, Unit: "degrees_east", Default: 0.0, Min: pipeline.Bound(-360), Max: pipeline.Bound(360),
			Doc: "western edge of the box (inclusive), in either convention; lon_min > lon_max crosses 0 or 180 degrees"},
		{Name: "lon_max", Type: pipeline.TypeFloat, Unit: "degrees_east", Default: 360.0, Min: pipeline.Bound(-360), Max: pipeline.Bound(360),
			Doc: "eastern edge of the box (inclusive); lon_max - lon_min = 360 keeps every longitude"},
		{Name: "months", Type: pipeline.TypeInts, Default: []int{}, Min: pipeline.Bound(1), Max: pipeline.Bound(12),
			Doc: "calendar months to keep (e.g. 6..11 for a cyclone season); empty keeps the whole year"},
		{Name: "time_stride", Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(1),
			Doc: "keep every n-th time step of the year, counted from its first kept step"},
		{Name: "ivt_bottom", Type: pipeline.TypeFloat, Unit: "Pa", Default: 100000.0, Min: pipeline.Bound(1), Max: pipeline.Bound(110000),
			Doc: "lower (high-pressure) limit of the IWV/IVT integral; 1000 hPa after the AMS Glossary's surface-to-300 hPa IVT"},
		{Name: "ivt_top", Type: pipeline.TypeFloat, Unit: "Pa", Default: 30000.0, Min: pipeline.Bound(1), Max: pipeline.Bound(110000),
			Doc: "upper (low-pressure) limit of the IWV/IVT integral; 300 hPa (AMS Glossary, Ralph et al. 2018)"},
		{Name: "vorticity_level", Type: pipeline.TypeFloat, Unit: "Pa", Default: 85000.0, Min: pipeline.Bound(1), Max: pipeline.Bound(110000),
			Doc: "level of a relative_vorticity channel that gives none; 850 hPa after Bengtsson et al. (1995)"},
		{Name: "land_fraction", Type: pipeline.TypeBool, Default: true,
			Doc: "copy land_area_fraction (as a fraction, 0..1) when the raw files have it"},
		{Name: "deflate", Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(0), Max: pipeline.Bound(9),
			Doc: "zlib level of " + FieldsFile + " (0: none); level 1 with shuffle costs little and halves most fields"},
		{Name: "shuffle", Type: pipeline.TypeBool, Default: true, Doc: "byte-shuffle filter before zlib"},
	}
}

// CheckStage implements pipeline.Checker: settings that can be judged
// before any file is read.
func (Kind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	o, err := readOptions(s)
	if err != nil {
		return fmt.Errorf("stage %q: %w", stage, err)
	}
	if len(c.Channels) == 0 {
		return fmt.Errorf("stage %q: the campaign lists no channels (hint: add a channels: section; subset writes one variable per channel)", stage)
	}
	for _, ch := range c.Channels {
		if err := checkChannel(ch, o); err != nil {
			return fmt.Errorf("stage %q: %w", stage, err)
		}
	}
	return nil
}

// options are the decoded settings.
type options struct {
	box               box
	months            [13]bool
	anyMonth          bool
	stride            int
	ivtBottom, ivtTop float64
	vortLevel         float64
	landFraction      bool
	deflate           int
	shuffle           bool
	workers           int
	settingsCanonical map[string]string
}

func readOptions(s pipeline.Values) (*options, error) {
	o := &options{
		box: box{latMin: s.Float("lat_min"), latMax: s.Float("lat_max"),
			lonMin: s.Float("lon_min"), lonMax: s.Float("lon_max")},
		stride:       s.Int("time_stride"),
		ivtBottom:    s.Float("ivt_bottom"),
		ivtTop:       s.Float("ivt_top"),
		vortLevel:    s.Float("vorticity_level"),
		landFraction: s.Bool("land_fraction"),
		deflate:      s.Int("deflate"),
		shuffle:      s.Bool("shuffle"),
		workers:      computeWorkers(),
	}
	if o.box.latMin > o.box.latMax {
		return nil, fmt.Errorf("setting lat_min %v is north of lat_max %v (hint: latitudes are given south to north whatever the file's order)", o.box.latMin, o.box.latMax)
	}
	if o.box.lonMax-o.box.lonMin > 360 {
		return nil, fmt.Errorf("settings lon_min %v and lon_max %v span more than 360 degrees", o.box.lonMin, o.box.lonMax)
	}
	if o.ivtTop >= o.ivtBottom {
		return nil, fmt.Errorf("setting ivt_top %v Pa must be a lower pressure than ivt_bottom %v Pa (hint: top 30000, bottom 100000)", o.ivtTop, o.ivtBottom)
	}
	ms := intList(s, "months")
	o.anyMonth = len(ms) == 0
	for _, m := range ms {
		if m < 1 || m > 12 {
			return nil, fmt.Errorf("setting months: %d is not a month 1..12", m)
		}
		o.months[m] = true
	}
	o.settingsCanonical = canonicalSettings(s)
	return o, nil
}

// computeWorkers is the number of compute goroutines beside the I/O
// goroutine: one fewer than the CPUs, at least one. It is not a setting
// because it cannot change the output and would only split the cache.
func computeWorkers() int {
	if testWorkers > 0 {
		return testWorkers
	}
	return max(1, runtime.NumCPU()-1)
}

// testWorkers lets tests force the number of compute goroutines.
var testWorkers int

// intList reads a list-of-int setting. pipeline.Values.Ints does not
// accept the []int form a default takes before any JSON round trip, so
// that form is handled here.
func intList(s pipeline.Values, name string) []int {
	if xs, ok := s[name].([]int); ok {
		return append([]int(nil), xs...)
	}
	return s.Ints(name)
}

// canonicalSettings prints settings for the history attribute, leaving
// out those that cannot change the output.
func canonicalSettings(s pipeline.Values, skip ...string) map[string]string {
	out := map[string]string{}
outer:
	for k, v := range s {
		for _, sk := range skip {
			if k == sk {
				continue outer
			}
		}
		out[k] = formatValue(v)
	}
	return out
}

func formatValue(v any) string {
	switch x := v.(type) {
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case []any:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = formatValue(e)
		}
		return strings.Join(parts, ",")
	case []int:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = strconv.Itoa(e)
		}
		return strings.Join(parts, ",")
	case []float64:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = formatValue(e)
		}
		return strings.Join(parts, ",")
	case []string:
		return strings.Join(x, ",")
	}
	return fmt.Sprint(v)
}

// Run implements pipeline.Kind.
func (k Kind) Run(ctx context.Context, job *pipeline.Job) error {
	o, err := readOptions(job.Settings)
	if err != nil {
		return err
	}
	year, err := strconv.Atoi(job.Block)
	if err != nil {
		return fmt.Errorf("subset: block %q is not a year (hint: subset runs per year block)", job.Block)
	}
	var files []string
	for _, in := range job.InputsOfKind("scenario") {
		files = append(files, in.Files...)
	}
	if len(files) == 0 {
		return fmt.Errorf("subset: no raw files for scenario %q block %s (hint: list a scenario in the stage's inputs)", job.Scenario, job.Block)
	}
	var expectCal string
	for _, sc := range job.Campaign.Scenarios {
		if sc.Name == job.Scenario {
			expectCal = sc.Calendar
		}
	}
	p, err := plan(job.Campaign.Channels, job.Campaign.Variables, files, year, expectCal, o)
	if p != nil {
		defer p.close()
	}
	if err != nil {
		return err
	}
	for _, note := range p.notes {
		job.Logf("subset: %s", note)
	}
	out := filepath.Join(job.OutDir, FieldsFile)
	prov := ncio.Provenance{Tool: "squall", Kind: k.Name(), KindVersion: strconv.Itoa(k.Version()),
		Settings: o.settingsCanonical}
	for _, f := range files {
		// Sizes, not digests: the cache already hashes raw inputs, and
		// hashing them here would read every byte a second time.
		d := "size unknown"
		if fi, err := os.Stat(f); err == nil {
			d = fmt.Sprintf("%d bytes", fi.Size())
		}
		prov.Inputs = append(prov.Inputs, ncio.InputDigest{Name: filepath.Base(f), Digest: d})
	}
	n, err := p.write(ctx, out, prov, o)
	if err != nil {
		return err
	}
	job.Logf("subset: wrote %s: %d channels x %d time steps x %d x %d", FieldsFile, len(p.channels), n, len(p.lat), len(p.lon))
	return nil
}
