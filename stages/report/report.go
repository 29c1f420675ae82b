package report

import (
	"bytes"
	"fmt"
	"html/template"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/squall-climate/squall/stages/ncio"
	"github.com/squall-climate/squall/stages/trends"
)

// Caution is shown near the top of every report.
const Caution = "Heuristic detections and trends computed from climate-model output are research results, " +
	"not forecasts or warnings. Decisions about risk belong to official forecast agencies and local codes."

// Write renders the report for in and writes it to path (through a
// temporary file renamed into place, so a reader never sees half a page).
func Write(path string, in Input) error {
	var buf bytes.Buffer
	if err := Render(&buf, in); err != nil {
		return err
	}
	tmp := filepath.Join(filepath.Dir(path), "."+filepath.Base(path)+".partial")
	if err := os.WriteFile(tmp, buf.Bytes(), 0o644); err != nil {
		return fmt.Errorf("write report: %w", err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("write report: %w", err)
	}
	return nil
}

// Render writes the page to w. Sections whose stage outputs are absent
// say so; unreadable outputs become notes on the page, not errors, so one
// broken file never costs the whole report. Errors are reserved for the
// page itself failing to render.
func Render(w io.Writer, in Input) error {
	pg, err := build(&in)
	if err != nil {
		return err
	}
	return pageTemplate.Execute(w, pg)
}

// ---- the page model ----

type page struct {
	In          *Input
	Caution     string
	Counts      []chip
	StateLegend []chip
	Instances   int
	Reused      int
	Glance      glance
	Labels      section
	Eval        section
	Events      section
	Maps        section
	Trends      section
	Record      string
}

type chip struct {
	State string
	Count int
	Color string
}

type glance struct {
	Scenarios [][]string
	Channels  [][]string
	Graph     template.HTML
	Stages    []stageRow
	Instances [][]string
	Failures  [][]string
}

type stageRow struct {
	Name, Kind, Fan, Inputs, Time string
	Chips                         []chip
}

// section is a titled part of the page: figures, tables, notes, or the
// plain statement that its outputs are absent.
type section struct {
	Missing string
	Intro   string
	Figures []figure
	Tables  []table
	More    []table // long tables, folded
	Notes   []string
}

type figure struct {
	Caption string
	SVG     template.HTML
}

func hexColor(c interface{ RGBA() (r, g, b, a uint32) }) string {
	r, g, b, _ := c.RGBA()
	return fmt.Sprintf("#%02x%02x%02x", r>>8, g>>8, b>>8)
}

func build(in *Input) (*page, error) {
	pg := &page{In: in, Caution: Caution, Record: strings.TrimSpace(in.Record)}
	// Tally of instance states.
	counts := map[string]int{}
	for _, x := range in.Instances {
		counts[x.State]++
	}
	for _, st := range sortedStates(counts) {
		pg.Counts = append(pg.Counts, chip{State: st, Count: counts[st], Color: stateColor(st)})
	}
	for _, st := range stateOrder {
		pg.StateLegend = append(pg.StateLegend, chip{State: st, Color: stateColor(st)})
	}
	pg.Instances = len(in.Instances)
	pg.Reused = counts[StateReused]

	var err error
	if pg.Glance, err = buildGlance(in); err != nil {
		return nil, err
	}
	if pg.Labels, err = buildLabels(in); err != nil {
		return nil, err
	}
	pg.Eval = buildEval(in)
	if pg.Events, err = buildEvents(in); err != nil {
		return nil, err
	}
	to := loadTrends(in)
	if pg.Maps, err = buildMaps(in, to); err != nil {
		return nil, err
	}
	if pg.Trends, err = buildTrends(to); err != nil {
		return nil, err
	}
	return pg, nil
}

func stateColor(st string) string {
	if c, ok := stateColors[st]; ok {
		return hexColor(c)
	}
	return "#6b727a"
}

// ---- at a glance ----

func buildGlance(in *Input) (glance, error) {
	var g glance
	for _, s := range in.Scenarios {
		years := "–"
		if s.FirstYear != 0 || s.LastYear != 0 {
			years = fmt.Sprintf("%d–%d", s.FirstYear, s.LastYear)
		}
		cal := s.Calendar
		if cal == "" {
			cal = "any"
		}
		g.Scenarios = append(g.Scenarios, []string{s.Name, years, strconv.Itoa(len(s.Blocks)), cal})
	}
	for _, c := range in.Channels {
		lvl := "single level"
		if c.LevelPa > 0 {
			lvl = fmt.Sprintf("%g hPa", c.LevelPa/100)
		}
		g.Channels = append(g.Channels, []string{c.Name, c.Quantity, lvl, c.Units})
	}
	stages := summariseStages(in)
	svg, err := graphSVG(stages)
	if err != nil {
		return g, err
	}
	g.Graph = svg
	for _, s := range stages {
		r := stageRow{Name: s.Name, Kind: s.Kind, Fan: s.Fan, Inputs: strings.Join(s.Inputs, ", "), Time: seconds(s.Seconds)}
		for _, st := range sortedStates(s.Counts) {
			r.Chips = append(r.Chips, chip{State: st, Count: s.Counts[st], Color: stateColor(st)})
		}
		g.Stages = append(g.Stages, r)
	}
	for _, x := range in.Instances {
		row := []string{x.Stage, x.Scenario, x.Block, x.Member, x.State, seconds(x.Seconds), x.Reason}
		g.Instances = append(g.Instances, row)
		if x.State == StateFailed || x.State == StateBlocked {
			g.Failures = append(g.Failures, row)
		}
	}
	return g, nil
}

// ---- labels ----

func buildLabels(in *Input) (section, error) {
	var s section
	rows, notes := classFractions(in)
	s.Notes = notes
	if len(rows) == 0 {
		s.Missing = "No label masks in this run's outputs (no stage of kind label finished, or its mask.nc is missing)."
		return s, nil
	}
	s.Intro = "Share of the area-weighted cell-time of each class in the heuristic label masks. " +
		"Background dominates; the chart shows the event classes."
	t := table{Title: "Class fractions", Columns: []string{"stage", "scenario", "member", "time steps", "background", "tropical cyclone", "atmospheric river"}}
	stages := map[string]bool{}
	for _, r := range rows {
		stages[r.Stage] = true
	}
	var names []string
	var tc, ar []float64
	for _, r := range rows {
		t.Rows = append(t.Rows, []string{r.Stage, r.Scenario, r.Member, strconv.Itoa(r.Steps),
			pct(r.Background), pct(r.TC), pct(r.AR)})
		// The stage is named only when several label stages would
		// otherwise give two bars the same name.
		parts := []string{r.Scenario}
		if len(stages) > 1 {
			parts = append([]string{r.Stage}, parts...)
		}
		if r.Member != "" {
			parts = append(parts, r.Member)
		}
		names = append(names, strings.Join(parts, " · "))
		tc = append(tc, 100*r.TC)
		ar = append(ar, 100*r.AR)
	}
	s.Tables = append(s.Tables, t)
	svg, err := fractionChart(names, tc, ar)
	if err != nil {
		return s, err
	}
	s.Figures = append(s.Figures, figure{Caption: "Tropical-cyclone and atmospheric-river share per label output, in the order of the table below.", SVG: svg})
	return s, nil
}

// fractionChart draws the class fractions as horizontal bars, one pair
// per row of the table and in its order from the top, so that names as
// long as "river-sweep · control · ar_ivt_min=200" stay legible however
// many rows there are: the chart grows downwards instead of crowding the
// names under each other.
func fractionChart(names []string, tc, ar []float64) (template.HTML, error) {
	const (
		bar   = vg.Length(7)  // thickness of one bar
		pitch = 2*bar + 8     // one row: two bars and a gap
		frame = vg.Length(66) // title, value axis and margins
		// legendRows is the room kept above the first row for the
		// legend (two entries), in rows.
		legendRows = 1.4
	)
	n := len(names)
	p, g := newPlotGrid("Event classes in the label masks", "percent of cell-time (area-weighted)", "")
	g.Horizontal.Color = nil // category lines would run between each pair of bars
	// NominalY puts the first name at the bottom; the table reads from
	// the top, so the chart is built upside down.
	rev := func(v []float64) plotter.Values {
		out := make(plotter.Values, n)
		for i := range v {
			out[n-1-i] = v[i]
		}
		return out
	}
	labels := make([]string, n)
	for i, nm := range names {
		labels[n-1-i] = nm
	}
	b1, err := plotter.NewBarChart(rev(tc), bar)
	if err != nil {
		return "", err
	}
	b2, err := plotter.NewBarChart(rev(ar), bar)
	if err != nil {
		return "", err
	}
	b1.Color, b2.Color = rgb(0xc2, 0x5b, 0x2e), rgb(0x2a, 0x7f, 0x9e)
	b1.LineStyle.Width, b2.LineStyle.Width = 0, 0
	b1.Horizontal, b2.Horizontal = true, true
	b1.Offset, b2.Offset = bar/2, -bar/2 // cyclones above rivers, as in the legend
	p.Add(b1, b2)
	p.Legend.Add("tropical cyclone", b1)
	p.Legend.Add("atmospheric river", b2)
	p.Legend.Left = false
	p.NominalY(labels...)
	p.Y.Min, p.Y.Max = -0.5, float64(n)-0.5+legendRows
	p.X.Min = 0
	p.X.Max = 1.05 * math.Max(maxOf(tc), maxOf(ar))
	if p.X.Max == 0 {
		p.X.Max = 1
	}
	h := frame + pitch*vg.Length(float64(n)+legendRows)
	return plotSVG(p, 460, h, "class fractions")
}

func pct(f float64) string { return fmtNum(100*f, 3) + " %" }

// ---- evaluation ----

func buildEval(in *Input) section {
	var s section
	tables, notes := evaluationTables(in)
	s.Notes = notes
	if len(tables) == 0 {
		s.Missing = "No evaluation in this run's outputs (no stage of kind evaluate finished, or it wrote no score tables)."
		return s
	}
	s.Intro = "Scores of the candidate masks against the reference masks, over all regions and seasons. Full breakdowns are in the evaluate stage's CSV files."
	s.Tables = tables
	return s
}

// ---- events ----

var (
	tcBins = []string{"TD", "TS", "Cat 1", "Cat 2", "Cat 3", "Cat 4", "Cat 5"}
	// tcBinOf maps the catalog's category text to a bin.
	tcBinOf = map[string]string{"tropical depression": "TD", "tropical storm": "TS"}
	// Peak-IVT bins at 250 kg m-1 s-1 steps, the thresholds of the IVT
	// scale of Ralph et al. (2019, BAMS 100; from memory); no duration
	// adjustment is applied, so these are not that scale's categories.
	arBins = []string{"< 250", "250–500", "500–750", "750–1000", "1000–1250", "≥ 1250"}
)

func arBin(ivt float64) int {
	if math.IsNaN(ivt) {
		return -1
	}
	k := int(math.Floor(ivt / 250))
	return min(max(k, 0), len(arBins)-1)
}

func buildEvents(in *Input) (section, error) {
	var s section
	d, notes := readCatalogs(in)
	s.Notes = notes
	if len(d.scenarios) == 0 {
		s.Missing = "No event catalog in this run's outputs (no stage of kind catalog finished, or its events.csv is missing)."
		return s, nil
	}
	s.Intro = "Events per scenario from the catalog. Rates divide by the scenario's years, so scenarios of different length compare."
	t := table{Title: "Event counts", Columns: []string{"scenario", "years", "class", "events", "per year", "mean duration", "landfalls"}}
	tcCount := make([]plotter.Values, len(d.scenarios))
	arCount := make([]plotter.Values, len(d.scenarios))
	anyTC, anyAR := false, false
	for si, scn := range d.scenarios {
		evs := d.byScenario[scn]
		years := yearsOf(in, scn)
		tcCount[si] = make(plotter.Values, len(tcBins))
		arCount[si] = make(plotter.Values, len(arBins))
		for _, class := range []string{"tropical_cyclone", "atmospheric_river"} {
			n, land := 0, 0
			var hours []float64
			for _, e := range evs {
				if e.class != class {
					continue
				}
				n++
				if e.landfall {
					land++
				}
				if !math.IsNaN(e.hours) {
					hours = append(hours, e.hours)
				}
				if class == "tropical_cyclone" {
					cat := e.category
					if b, ok := tcBinOf[cat]; ok {
						cat = b
					}
					for k, b := range tcBins {
						if cat == b {
							tcCount[si][k]++
							anyTC = true
						}
					}
				} else if k := arBin(e.maxIVT); k >= 0 {
					arCount[si][k]++
					anyAR = true
				}
			}
			rate, dur := "–", "–"
			if years > 0 {
				rate = fmtNum(float64(n)/float64(years), 2)
			}
			if len(hours) > 0 {
				var sum float64
				for _, h := range hours {
					sum += h
				}
				dur = fmtNum(sum/float64(len(hours))/24, 1) + " d"
			}
			lf := strconv.Itoa(land)
			if n > 0 {
				lf += fmt.Sprintf(" (%s %%)", fmtNum(100*float64(land)/float64(n), 0))
			}
			t.Rows = append(t.Rows, []string{scn, yearsText(years), strings.ReplaceAll(class, "_", " "), strconv.Itoa(n), rate, dur, lf})
		}
		if years > 0 {
			for k := range tcCount[si] {
				tcCount[si][k] /= float64(years)
			}
			for k := range arCount[si] {
				arCount[si][k] /= float64(years)
			}
		}
	}
	s.Tables = append(s.Tables, t)
	add := func(title, caption string, bins []string, vals []plotter.Values) error {
		p, g := newPlotGrid(title, "", "events per year")
		g.Vertical.Color = nil // category lines would run between the bars of a group
		n := len(d.scenarios)
		w := vg.Length(math.Min(16, 60/float64(n)))
		for si, scn := range d.scenarios {
			b, err := plotter.NewBarChart(vals[si], w)
			if err != nil {
				return err
			}
			b.Color = scenarioColor(si)
			b.LineStyle.Width = 0
			b.Offset = w * (vg.Length(si) - vg.Length(n-1)/2)
			p.Add(b)
			p.Legend.Add(scn, b)
		}
		p.Legend.Left = false
		p.NominalX(bins...)
		p.X.Min, p.X.Max = -0.6, float64(len(bins))-0.4
		p.Y.Min = 0
		p.Y.Max = headroom(vals)
		svg, err := plotSVG(p, 460, 260, title)
		if err != nil {
			return err
		}
		s.Figures = append(s.Figures, figure{Caption: caption, SVG: svg})
		return nil
	}
	if anyTC {
		if err := add("Tropical cyclones by peak wind", "Saffir-Simpson category (NHC 2012 scale) of each cyclone's peak model wind; TD tropical depression, "+
			"TS tropical storm. Model winds on coarse grids are not 1-minute observed winds.", tcBins, tcCount); err != nil {
			return s, err
		}
	}
	if anyAR {
		if err := add("Atmospheric rivers by peak IVT", "Peak integrated vapour transport of each river, in bins of 250 kg m-1 s-1.", arBins, arCount); err != nil {
			return s, err
		}
	}
	return s, nil
}

func yearsText(n int) string {
	if n == 0 {
		return "–"
	}
	return strconv.Itoa(n)
}

// ---- trends output ----

type trendsData struct {
	out  *trends.Output
	dir  string
	note string
}

func loadTrends(in *Input) *trendsData {
	for _, o := range outputsOf(in, "trends") {
		p, ok := fileIn(o.Dir, trends.JSONFile)
		if !ok {
			continue
		}
		out, err := trends.ReadOutput(p)
		if err != nil {
			return &trendsData{note: err.Error()}
		}
		return &trendsData{out: out, dir: o.Dir}
	}
	return nil
}

// ---- maps ----

func buildMaps(in *Input, td *trendsData) (section, error) {
	var s section
	if td == nil || td.out == nil {
		s.Missing = "No event-frequency maps: they come from the trends stage (maps.nc), which did not finish in this run."
		if td != nil && td.note != "" {
			s.Notes = append(s.Notes, td.note)
		}
		return s, nil
	}
	if td.out.Maps == nil {
		s.Missing = "The trends stage wrote no maps (it had neither masks nor track points)."
		return s, nil
	}
	path, ok := fileIn(td.dir, td.out.Maps.File)
	if !ok {
		s.Missing = "The trends stage's maps file " + td.out.Maps.File + " is missing."
		return s, nil
	}
	f, err := ncio.Open(path)
	if err != nil {
		s.Notes = append(s.Notes, err.Error())
		s.Missing = "The maps file could not be read."
		return s, nil
	}
	defer f.Close()
	g, err := f.Grid()
	if err != nil {
		s.Notes = append(s.Notes, err.Error())
		s.Missing = "The maps file has no latitude-longitude grid."
		return s, nil
	}
	s.Intro = fmt.Sprintf("Event frequency per cell (%s, from %s). Each class shares one colour scale across scenarios; "+
		"differences (scenario minus %s) use a scale symmetric about zero.", td.out.Maps.Quantity, td.out.Maps.Source, td.out.Baseline)
	type field struct {
		name, title, class string
		diff               bool
		v                  []float64
	}
	var fields []field
	for _, name := range td.out.Maps.Variables {
		v, err := f.Var(name)
		if err != nil {
			s.Notes = append(s.Notes, err.Error())
			continue
		}
		vals, err := v.ReadFloat64(nil, nil)
		if err != nil {
			s.Notes = append(s.Notes, err.Error())
			continue
		}
		fields = append(fields, field{name: name, title: v.LongName(), class: v.AttrString("event_class"),
			diff: v.AttrString("baseline_scenario") != "", v: vals})
	}
	// One scale per class: frequency maps 0..max, differences -m..m.
	maxF, maxD := map[string]float64{}, map[string]float64{}
	for _, fl := range fields {
		for _, x := range fl.v {
			if math.IsNaN(x) {
				continue
			}
			if fl.diff {
				maxD[fl.class] = math.Max(maxD[fl.class], math.Abs(x))
			} else {
				maxF[fl.class] = math.Max(maxF[fl.class], x)
			}
		}
	}
	// One view per class: the cells where any of its maps is non-zero,
	// with a margin, so that a regional signal is not a speck on a globe.
	latMin, latMax, lonMin, lonMax, dlat, dlon := gridEdges(g.Lat, g.Lon)
	nx := len(g.Lon)
	type view struct{ i0, i1, j0, j1 int }
	views := map[string]*view{}
	for _, fl := range fields {
		for k, x := range fl.v {
			if math.IsNaN(x) || x == 0 {
				continue
			}
			i, j := k/nx, k%nx
			v := views[fl.class]
			if v == nil {
				views[fl.class] = &view{i, i, j, j}
				continue
			}
			v.i0, v.i1, v.j0, v.j1 = min(v.i0, i), max(v.i1, i), min(v.j0, j), max(v.j1, j)
		}
	}
	const margin = 10.0 // degrees around the signal
	for _, fl := range fields {
		cm := newRamp(seqRamp, 0, maxF[fl.class])
		if fl.diff {
			m := maxD[fl.class]
			cm = newRamp(divRamp, -m, m)
		}
		gm := gridMap{title: fl.title, lat: g.Lat, lon: g.Lon, values: fl.v, cmap: cm, units: unitsText(td.out.Maps.Units)}
		if v := views[fl.class]; v != nil {
			la0, la1 := g.Lat[v.i0], g.Lat[v.i1]
			if la0 > la1 {
				la0, la1 = la1, la0
			}
			lo0 := lonMin + dlon*float64(v.j0)
			lo1 := lonMin + dlon*float64(v.j1+1)
			gm.latMin = math.Max(latMin, la0-dlat/2-margin)
			gm.latMax = math.Min(latMax, la1+dlat/2+margin)
			gm.lonMin = math.Max(lonMin, lo0-margin)
			gm.lonMax = math.Min(lonMax, lo1+margin)
		}
		svg, err := mapSVG(gm)
		if err != nil {
			return s, err
		}
		s.Figures = append(s.Figures, figure{Caption: fl.name, SVG: svg})
	}
	return s, nil
}

func unitsText(u string) string {
	switch u {
	case "1":
		return "fraction of time steps"
	case "year-1":
		return "per year"
	}
	return u
}

// ---- trends ----

// preferredMetric is plotted per region; every metric is in the tables.
const preferredMetric = trends.MetricEvents

func buildTrends(td *trendsData) (section, error) {
	var s section
	if td == nil || td.out == nil {
		s.Missing = "No trends in this run's outputs (no stage of kind trends finished)."
		if td != nil && td.note != "" {
			s.Notes = append(s.Notes, td.note)
		}
		return s, nil
	}
	o := td.out
	corr := "no serial-correlation correction"
	if o.Correction != "" && o.Correction != trends.CorrectionNone {
		corr = "variance corrected for serial correlation (" + o.Correction + ")"
	}
	s.Intro = fmt.Sprintf("Annual events per region, class and scenario. Lines: Sen slope of each scenario's series; "+
		"shaded: its %g %% confidence interval (Gilbert 1987). p: two-sided Mann-Kendall test, %s. Series shorter than %d years get no test.",
		100*o.Confidence, corr, o.MinYears)
	scnIndex := map[string]int{}
	for _, sc := range o.Scenarios {
		if _, ok := scnIndex[sc.Scenario]; !ok {
			scnIndex[sc.Scenario] = len(scnIndex)
		}
	}
	trendOf := map[string]*trends.Trend{}
	key := func(region, class, scn, member, metric string) string {
		return region + "\x00" + class + "\x00" + scn + "\x00" + member + "\x00" + metric
	}
	for i := range o.Trends {
		t := &o.Trends[i]
		trendOf[key(t.Region, t.Class, t.Scenario, t.Member, t.Metric)] = t
	}
	// One figure per (region, class) with any events.
	for _, region := range o.Regions {
		for _, class := range o.Classes {
			var series []*trends.Series
			total := 0.0
			for i := range o.Series {
				sr := &o.Series[i]
				if sr.Region == region && sr.Class == class && sr.Metric == preferredMetric {
					series = append(series, sr)
					for _, v := range sr.Values {
						if !math.IsNaN(float64(v)) {
							total += float64(v)
						}
					}
				}
			}
			if len(series) == 0 || total == 0 {
				continue
			}
			title := fmt.Sprintf("%s · %s", region, strings.ReplaceAll(class, "_", " "))
			svg, err := trendFigure(title, series, func(sr *trends.Series) *trends.Trend {
				return trendOf[key(sr.Region, sr.Class, sr.Scenario, sr.Member, sr.Metric)]
			}, scnIndex)
			if err != nil {
				return s, err
			}
			s.Figures = append(s.Figures, figure{Caption: title + ": events per year; Sen slope (line) and its confidence band (shaded).", SVG: svg})
		}
	}
	if len(s.Figures) == 0 {
		s.Notes = append(s.Notes, "No region had any event, so there is nothing to plot.")
	}
	// Tables: headline metric first, everything folded below.
	main, all := trendTables(o)
	s.Tables = append(s.Tables, main)
	d1, d2 := differenceTables(o)
	if len(d1.Rows) > 0 {
		s.Tables = append(s.Tables, d1)
	}
	s.More = append(s.More, all)
	if len(d2.Rows) > 0 {
		s.More = append(s.More, d2)
	}
	return s, nil
}

func pText(p float64) string {
	switch {
	case math.IsNaN(p):
		return "–"
	case p < 0.001:
		return "< 0.001"
	}
	return strconv.FormatFloat(p, 'f', 3, 64)
}

func sig(p float64) string {
	if p < 0.05 {
		return " ◆"
	}
	return ""
}

func trendTables(o *trends.Output) (table, table) {
	cols := []string{"region", "class", "scenario", "metric", "years", "mean", "Sen slope /decade", "interval", "MK p", "p from", "OLS slope /decade ± se", "status"}
	main := table{Title: "Trends of annual events", Note: "◆ marks p < 0.05. Slopes per decade; intervals at the stated confidence. \"p from\": the exact Mann-Kendall distribution (short series without ties) or its normal approximation.", Columns: cols}
	all := table{Title: "All trend rows (every metric)", Columns: cols}
	for _, t := range o.Trends {
		scn := t.Scenario
		if t.Member != "" {
			scn += " " + t.Member
		}
		row := []string{t.Region, strings.ReplaceAll(t.Class, "_", " "), scn, strings.ReplaceAll(t.Metric, "_", " ") + " (" + t.Unit + ")",
			strconv.Itoa(t.NYears), g3(t.Mean), g3(t.SenSlope), "[" + g3(t.SenLow) + ", " + g3(t.SenHigh) + "]",
			pText(float64(t.MKP)) + sig(float64(t.MKP)), t.PMethod, g3(t.OLSSlope) + " ± " + g3(t.OLSSlopeSE), t.Status}
		if t.Status != trends.StatusOK {
			row[6], row[7], row[9], row[10] = "–", "–", "–", "–"
		}
		if t.Metric == preferredMetric {
			main.Rows = append(main.Rows, row)
		}
		all.Rows = append(all.Rows, row)
	}
	return main, all
}

func differenceTables(o *trends.Output) (table, table) {
	cols := []string{"region", "class", "metric", "scenario", "mean", "baseline mean", "difference [interval]", "ratio [interval]", "rank-sum p", "status"}
	note := fmt.Sprintf("Scenario minus baseline (%s); bootstrap intervals from %d resamples (seed %d). ◆ marks p < 0.05.", o.Baseline, o.Resamples, o.Seed)
	main := table{Title: "Scenario differences in annual events", Note: note, Columns: cols}
	all := table{Title: "All scenario differences (every metric)", Note: note, Columns: cols}
	for _, d := range o.Differences {
		scn := d.Scenario
		if d.Member != "" {
			scn += " " + d.Member
		}
		row := []string{d.Region, strings.ReplaceAll(d.Class, "_", " "), strings.ReplaceAll(d.Metric, "_", " "), scn,
			g3(d.Mean), g3(d.MeanBaseline),
			g3(d.Diff) + " [" + g3(d.DiffLow) + ", " + g3(d.DiffHigh) + "]",
			g3(d.Ratio) + " [" + g3(d.RatioLow) + ", " + g3(d.RatioHigh) + "]",
			pText(float64(d.RankSumP)) + sig(float64(d.RankSumP)), d.Status}
		if d.Metric == preferredMetric {
			main.Rows = append(main.Rows, row)
		}
		all.Rows = append(all.Rows, row)
	}
	return main, all
}

func g3(n trends.Num) string {
	f := float64(n)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "–"
	}
	if f == 0 {
		return "0"
	}
	a := math.Abs(f)
	switch {
	case a >= 1000 || a < 0.001:
		return strconv.FormatFloat(f, 'g', 3, 64)
	case a >= 100:
		return strconv.FormatFloat(f, 'f', 0, 64)
	case a >= 10:
		return strconv.FormatFloat(f, 'f', 1, 64)
	case a >= 1:
		return strconv.FormatFloat(f, 'f', 2, 64)
	}
	return strconv.FormatFloat(f, 'f', 3, 64)
}

// trendFigure draws one panel per scenario side by side (scenarios cover
// different years, so a shared time axis would be mostly empty), with a
// shared vertical scale: the annual values, the Sen line over the
// scenario's years and the bow-tie confidence band of the slope, pivoting
// on (median year, median value) as Sen's line does.
func trendFigure(title string, series []*trends.Series, trendOf func(*trends.Series) *trends.Trend, scnIndex map[string]int) (template.HTML, error) {
	type panel struct {
		name, sub  string
		col        color.RGBA
		pts        plotter.XYs
		line, band plotter.XYs
	}
	// First the panels' data and the shared scale, then the plots.
	var panels []panel
	ymax := 0.0
	for _, sr := range series {
		pn := panel{name: sr.Scenario, col: scenarioColor(scnIndex[sr.Scenario]), sub: "no values"}
		if sr.Member != "" {
			pn.name += " " + sr.Member
		}
		for i, y := range sr.Years {
			if v := float64(sr.Values[i]); !math.IsNaN(v) {
				pn.pts = append(pn.pts, plotter.XY{X: float64(y), Y: v})
				ymax = math.Max(ymax, v)
			}
		}
		t := trendOf(sr)
		switch {
		case t != nil && t.Status == trends.StatusOK && len(pn.pts) > 1:
			x0, x1 := pn.pts[0].X, pn.pts[len(pn.pts)-1].X
			xm, ym := float64(t.SenMedianYear), float64(t.SenMedianValue)
			lo, hi, sl := float64(t.SenLow)/10, float64(t.SenHigh)/10, float64(t.SenSlope)/10
			at := func(slope, x float64) float64 { return ym + slope*(x-xm) }
			pn.band = plotter.XYs{
				{X: x0, Y: at(lo, x0)}, {X: xm, Y: ym}, {X: x1, Y: at(lo, x1)},
				{X: x1, Y: at(hi, x1)}, {X: xm, Y: ym}, {X: x0, Y: at(hi, x0)},
			}
			pn.line = plotter.XYs{{X: x0, Y: at(sl, x0)}, {X: x1, Y: at(sl, x1)}}
			pn.sub = fmt.Sprintf("%s /decade [%s, %s], p %s", signed(t.SenSlope), g3(t.SenLow), g3(t.SenHigh), pText(float64(t.MKP)))
		case t != nil:
			pn.sub = t.Status
		}
		panels = append(panels, pn)
	}
	top := ymax * 1.08
	if top == 0 {
		top = 1
	}
	var plots []*plot.Plot
	for k, pn := range panels {
		ylabel := ""
		if k == 0 {
			ylabel = "events per year"
		}
		p := newPlot(pn.name+"\n"+pn.sub, "year", ylabel)
		restyle(&p.Title.TextStyle, 10.5, colInk)
		if band := clipY(pn.band, 0, top); len(band) >= 3 {
			poly, err := plotter.NewPolygon(band)
			if err != nil {
				return "", err
			}
			poly.Color = withAlpha(pn.col, 0.18)
			poly.LineStyle.Width = 0
			p.Add(poly)
		}
		if seg := clipSegment(pn.line, 0, top); len(seg) == 2 {
			line, err := plotter.NewLine(seg)
			if err != nil {
				return "", err
			}
			line.Color = pn.col
			line.Width = 1.8
			p.Add(line)
		}
		if len(pn.pts) > 0 {
			ln, sc, err := plotter.NewLinePoints(pn.pts)
			if err != nil {
				return "", err
			}
			ln.Color = withAlpha(pn.col, 0.5)
			ln.Width = 0.7
			sc.Color = pn.col
			sc.Radius = 2
			sc.Shape = draw.CircleGlyph{}
			p.Add(ln, sc)
			p.X.Min, p.X.Max = pn.pts[0].X-0.5, pn.pts[len(pn.pts)-1].X+0.5
		}
		p.Y.Min, p.Y.Max = 0, top
		plots = append(plots, p)
	}
	n := len(plots)
	w := vg.Length(math.Max(460, float64(230*n)))
	const h = 270
	return svg(w, h, title, func(c draw.Canvas) {
		tiles := draw.Tiles{Rows: 1, Cols: n, PadX: 10, PadTop: 4, PadBottom: 2, PadLeft: 2, PadRight: 8}
		canvases := plot.Align([][]*plot.Plot{plots}, tiles, c)
		for i, p := range plots {
			p.Draw(canvases[0][i])
		}
	})
}

func signed(n trends.Num) string {
	s := g3(n)
	if float64(n) > 0 {
		return "+" + s
	}
	return s
}

// headroom is the top of a bar chart's scale: room above the tallest bar
// for the legend.
func headroom(vals []plotter.Values) float64 {
	m := 0.0
	for _, v := range vals {
		m = math.Max(m, maxOf(v))
	}
	if m == 0 {
		return 1
	}
	return 1.3 * m
}

// maxOf is the largest of v, or 0.
func maxOf(v []float64) float64 {
	m := 0.0
	for _, x := range v {
		m = math.Max(m, x)
	}
	return m
}
