package world

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"time"
)

// Summary reports what Generate wrote and the planted truth.
type Summary struct {
	Dir   string
	Files []File
	// RawBytes counts the uncompressed bytes of field values written to
	// the fields files; MBPerSecond is RawBytes/1e6 over Seconds, the wall
	// time of the whole generation (not written to any file).
	RawBytes    int64
	Seconds     float64
	MBPerSecond float64
	Years       []YearTruth
	Trends      []Trend
	Events      []*Event
}

// File is one file written.
type File struct {
	Path     string
	Kind     string // fields, truth, events, tracks, regions, summary, trends
	Scenario string
	Year     int // 0 for files that are not per year
	Bytes    int64
}

// YearTruth counts the planted events of one scenario-year that reached
// the truth (events with at least one truth pixel).
type YearTruth struct {
	Scenario        string
	Year            int
	PlannedTC       int // from the scenario's Rate
	PlannedAR       int
	TC, AR          int // events with truth pixels in the season and domain
	TCLandfalls     int
	ARLandfalls     int
	MeanTCPeakWind  float64 // m/s
	MeanTCMinPress  float64 // Pa
	MeanARPeakIVT   float64 // kg m-1 s-1
	TCPixels        int     // truth pixels summed over steps
	ARPixels        int
	RegionTC        []int // per Regions entry: cyclones touching it
	RegionAR        []int
	MeanPeakDeficit float64 // planned, Pa: the intensity knob before life cycles
	MeanARMoisture  float64 // planned plume moisture, kg/kg
}

// Trend is a quantity's change per year within a scenario: what the
// options planted and the least-squares slope of the realized truth.
type Trend struct {
	Scenario string
	Quantity string  // tc_count, ar_count, tc_peak_wind, ar_peak_ivt, tc_landfalls, ar_landfalls
	Planted  float64 // per year, in the quantity's units; NaN when only indirectly planted
	Realized float64 // OLS slope of the yearly values per year
	First    float64 // value in the first year
	Last     float64 // value in the last year
}

// Generate writes the invented world described by o: per scenario and
// year a fields file and a truth mask file, per scenario truth catalogs,
// and the regions, summary and trend files at the top. Files are
// deterministic: the same options give byte-identical files.
func Generate(ctx context.Context, o Options) (Summary, error) {
	if o.BelowSurface == "" {
		o.BelowSurface = "extrapolate"
	}
	if err := o.Validate(); err != nil {
		return Summary{}, err
	}
	start := time.Now()
	sum := Summary{Dir: o.Dir}
	if err := os.MkdirAll(o.Dir, 0o755); err != nil {
		return sum, fmt.Errorf("world: create output directory: %w", err)
	}
	workers := o.Workers
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	gj, err := RegionsGeoJSON()
	if err != nil {
		return sum, err
	}
	if err := sum.writeFile(filepath.Join(o.Dir, "regions.geojson"), "regions", "", 0, gj); err != nil {
		return sum, err
	}
	g := newGrid(&o)
	for _, sc := range o.Scenarios {
		dir := filepath.Join(o.Dir, sc.Name)
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return sum, fmt.Errorf("world: create scenario directory: %w", err)
		}
		var events []*Event
		for yi := range sc.Years() {
			s := newSeason(&o, g, sc, yi)
			ev, err := sum.season(ctx, s, dir, workers)
			if err != nil {
				return sum, err
			}
			events = append(events, ev...)
			sum.Years = append(sum.Years, yearTruth(s, ev))
		}
		sum.Events = append(sum.Events, events...)
		var b bytes.Buffer
		if err := writeEventsCSV(&b, events); err != nil {
			return sum, err
		}
		if err := sum.writeFile(filepath.Join(dir, "truth_events.csv"), "events", sc.Name, 0, b.Bytes()); err != nil {
			return sum, err
		}
		b.Reset()
		if err := writeTracksCSV(&b, events); err != nil {
			return sum, err
		}
		if err := sum.writeFile(filepath.Join(dir, "truth_tracks.csv"), "tracks", sc.Name, 0, b.Bytes()); err != nil {
			return sum, err
		}
	}
	sum.Trends = trends(o.Scenarios, sum.Years)
	if err := sum.writeFile(filepath.Join(o.Dir, "truth_summary.csv"), "summary", "", 0, []byte(summaryCSV(sum.Years))); err != nil {
		return sum, err
	}
	if err := sum.writeFile(filepath.Join(o.Dir, "truth_trends.csv"), "trends", "", 0, []byte(trendsCSV(sum.Trends))); err != nil {
		return sum, err
	}
	sum.Seconds = time.Since(start).Seconds()
	if sum.Seconds > 0 {
		sum.MBPerSecond = float64(sum.RawBytes) / 1e6 / sum.Seconds
	}
	return sum, nil
}

func (sum *Summary) writeFile(path, kind, scenario string, year int, data []byte) error {
	if err := os.WriteFile(path, data, 0o644); err != nil {
		return fmt.Errorf("world: write %s: %w", path, err)
	}
	sum.Files = append(sum.Files, File{Path: path, Kind: kind, Scenario: scenario, Year: year, Bytes: int64(len(data))})
	return nil
}

// season writes one scenario-year. One goroutine computes steps (itself
// fanning rows out to workers) while this one writes the previous step:
// all netCDF calls stay on this goroutine.
func (sum *Summary) season(ctx context.Context, s *season, dir string, workers int) ([]*Event, error) {
	fpath := filepath.Join(dir, fmt.Sprintf("fields_%d.nc", s.year))
	tpath := filepath.Join(dir, fmt.Sprintf("truth_%d.nc", s.year))
	fw, err := s.createFields(fpath)
	if err != nil {
		return nil, err
	}
	defer fw.Abort()
	tw, err := s.createTruth(tpath)
	if err != nil {
		return nil, err
	}
	defer tw.Abort()
	log := newTruthLog(s)
	n, nlev := s.g.points(), s.nlev()
	free := make(chan *fields, 2)
	full := make(chan *fields, 2)
	free <- newFields(n, nlev)
	free <- newFields(n, nlev)
	stop := make(chan struct{})
	defer close(stop)
	go func() {
		defer close(full)
		for st := 0; st < s.steps; st++ {
			var f *fields
			select {
			case f = <-free:
			case <-stop:
				return
			}
			s.compute(f, float64(st*s.opt.StepHours), workers)
			log.record(st, f)
			select {
			case full <- f:
			case <-stop:
				return
			}
		}
	}()
	st := 0
	for f := range full {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		nb, err := s.writeFields(fw, st, f)
		if err != nil {
			return nil, err
		}
		sum.RawBytes += nb
		if err := s.writeTruth(tw, st, f); err != nil {
			return nil, err
		}
		free <- f
		st++
	}
	sum.RawBytes += int64(4 * n) // land_area_fraction
	if err := fw.Close(); err != nil {
		return nil, err
	}
	if err := tw.Close(); err != nil {
		return nil, err
	}
	for _, p := range []struct{ path, kind string }{{fpath, "fields"}, {tpath, "truth"}} {
		fi, err := os.Stat(p.path)
		if err != nil {
			return nil, err
		}
		sum.Files = append(sum.Files, File{Path: p.path, Kind: p.kind, Scenario: s.sc.Name, Year: s.year, Bytes: fi.Size()})
	}
	return log.finish(), nil
}

func yearTruth(s *season, events []*Event) YearTruth {
	y := YearTruth{Scenario: s.sc.Name, Year: s.year,
		PlannedTC: s.sc.Cyclones.Count(s.yearIndex), PlannedAR: s.sc.Rivers.Count(s.yearIndex),
		RegionTC: make([]int, len(Regions)), RegionAR: make([]int, len(Regions)),
		MeanTCPeakWind: math.NaN(), MeanTCMinPress: math.NaN(), MeanARPeakIVT: math.NaN(),
		MeanPeakDeficit: math.NaN(), MeanARMoisture: math.NaN()}
	var wind, press, ivt float64
	for _, e := range events {
		counts := y.RegionAR
		if e.Class == ClassTC {
			counts = y.RegionTC
			y.TC++
			y.TCPixels += e.Pixels
			wind += e.PeakWind
			press += e.MinPressure
			if e.Landfall {
				y.TCLandfalls++
			}
		} else {
			y.AR++
			y.ARPixels += e.Pixels
			ivt += e.PeakIVT
			if e.Landfall {
				y.ARLandfalls++
			}
		}
		for _, r := range e.Regions {
			counts[regionIndex(r)]++
		}
	}
	if y.TC > 0 {
		y.MeanTCPeakWind, y.MeanTCMinPress = wind/float64(y.TC), press/float64(y.TC)
	}
	if y.AR > 0 {
		y.MeanARPeakIVT = ivt / float64(y.AR)
	}
	if len(s.cyclones) > 0 {
		var d float64
		for _, c := range s.cyclones {
			d += c.peakDeficit
		}
		y.MeanPeakDeficit = d / float64(len(s.cyclones))
	}
	if len(s.rivers) > 0 {
		var m float64
		for _, r := range s.rivers {
			m += r.moisture
		}
		y.MeanARMoisture = m / float64(len(s.rivers))
	}
	return y
}

// trends fits the yearly truth of each scenario.
func trends(scs []Scenario, years []YearTruth) []Trend {
	var out []Trend
	for _, sc := range scs {
		var ys []YearTruth
		for _, y := range years {
			if y.Scenario == sc.Name {
				ys = append(ys, y)
			}
		}
		if len(ys) == 0 {
			continue
		}
		q := func(name string, planted float64, get func(YearTruth) float64) {
			x := make([]float64, len(ys))
			v := make([]float64, len(ys))
			for i, y := range ys {
				x[i], v[i] = float64(y.Year), get(y)
			}
			out = append(out, Trend{Scenario: sc.Name, Quantity: name, Planted: planted,
				Realized: olsSlope(x, v), First: v[0], Last: v[len(v)-1]})
		}
		q("tc_count", sc.Cyclones.PerYear, func(y YearTruth) float64 { return float64(y.TC) })
		q("ar_count", sc.Rivers.PerYear, func(y YearTruth) float64 { return float64(y.AR) })
		q("tc_peak_deficit_pa", sc.CycloneIntensityTrend*ys[0].MeanPeakDeficit, func(y YearTruth) float64 { return y.MeanPeakDeficit })
		q("tc_peak_wind", math.NaN(), func(y YearTruth) float64 { return y.MeanTCPeakWind })
		q("tc_min_pressure", math.NaN(), func(y YearTruth) float64 { return y.MeanTCMinPress })
		q("ar_peak_ivt", math.NaN(), func(y YearTruth) float64 { return y.MeanARPeakIVT })
		q("tc_landfalls", math.NaN(), func(y YearTruth) float64 { return float64(y.TCLandfalls) })
		q("ar_landfalls", math.NaN(), func(y YearTruth) float64 { return float64(y.ARLandfalls) })
	}
	return out
}

// olsSlope is the least-squares slope of v on x (NaN values skipped).
func olsSlope(x, v []float64) float64 {
	var n, mx, mv float64
	for i := range x {
		if !math.IsNaN(v[i]) {
			n++
			mx += x[i]
			mv += v[i]
		}
	}
	if n < 2 {
		return math.NaN()
	}
	mx /= n
	mv /= n
	var sxy, sxx float64
	for i := range x {
		if !math.IsNaN(v[i]) {
			sxy += (x[i] - mx) * (v[i] - mv)
			sxx += (x[i] - mx) * (x[i] - mx)
		}
	}
	return sxy / sxx
}

func summaryCSV(years []YearTruth) string {
	var b strings.Builder
	b.WriteString("scenario,year,planned_tc,tc,planned_ar,ar,tc_landfalls,ar_landfalls,mean_tc_peak_wind_ms,mean_tc_min_pressure_pa,mean_ar_peak_ivt,tc_pixels,ar_pixels,mean_planned_tc_deficit_pa,mean_planned_ar_moisture")
	for _, r := range Regions {
		b.WriteString(",tc_" + r.Name + ",ar_" + r.Name)
	}
	b.WriteString("\n")
	for _, y := range years {
		fmt.Fprintf(&b, "%s,%d,%d,%d,%d,%d,%d,%d,%s,%s,%s,%d,%d,%s,%s", y.Scenario, y.Year, y.PlannedTC, y.TC, y.PlannedAR, y.AR,
			y.TCLandfalls, y.ARLandfalls, num(y.MeanTCPeakWind, 2), num(y.MeanTCMinPress, 0), num(y.MeanARPeakIVT, 1),
			y.TCPixels, y.ARPixels, num(y.MeanPeakDeficit, 0), num(y.MeanARMoisture, 5))
		for r := range Regions {
			fmt.Fprintf(&b, ",%d,%d", y.RegionTC[r], y.RegionAR[r])
		}
		b.WriteString("\n")
	}
	return b.String()
}

func trendsCSV(ts []Trend) string {
	var b strings.Builder
	b.WriteString("scenario,quantity,planted_per_year,realized_per_year,first_year_value,last_year_value\n")
	for _, t := range ts {
		fmt.Fprintf(&b, "%s,%s,%s,%s,%s,%s\n", t.Scenario, t.Quantity, num(t.Planted, 4), num(t.Realized, 4), num(t.First, 3), num(t.Last, 3))
	}
	return b.String()
}
