package trends

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// defaults returns the declared defaults as Values, the way the planner
// hands them to Run.
func defaults(over map[string]any) pipeline.Values {
	v := pipeline.Values{}
	for _, s := range (Kind{}).Settings() {
		v[s.Name] = s.Default
	}
	for k, x := range over {
		v[k] = x
	}
	return v
}

// fakeEvent is one catalog row plus its track for test inputs.
type fakeEvent struct {
	class     string
	start     string
	hours     float64
	wind, ivt float64
	landfall  bool
	track     [][2]float64 // lat, lon
}

// writeCatalog writes events.csv and track_points.csv as a catalog
// instance would (columns named, order deliberately shuffled).
func writeCatalog(t *testing.T, dir, scenario string, evs []fakeEvent) []string {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	var eb, pb bytes.Buffer
	ew, pw := csv.NewWriter(&eb), csv.NewWriter(&pb)
	// Column names as stages/catalog writes them (its doc.go), in a
	// shuffled order with some left out: trends reads columns by name.
	ew.Write([]string{"class", "event_id", "scenario", "member", "start", "end", "duration_hours", "max_wind_ms", "max_ivt_kg_m_s",
		"landfall", "landfall_time", "landfall_lat", "landfall_lon", "landfall_regions", "regions"})
	pw.Write([]string{"event_id", "scenario", "index", "time", "lat", "lon", "area_km2"})
	for i, e := range evs {
		id := fmt.Sprintf("%s-%04d", scenario, i)
		wind, ivt := "", ""
		if e.class == ClassTC {
			wind = strconv.FormatFloat(e.wind, 'g', -1, 64)
		} else {
			ivt = strconv.FormatFloat(e.ivt, 'g', -1, 64)
		}
		lfLat, lfLon := "", ""
		if e.landfall {
			lfLat = strconv.FormatFloat(e.track[len(e.track)-1][0], 'g', -1, 64)
			lfLon = strconv.FormatFloat(e.track[len(e.track)-1][1], 'g', -1, 64)
		}
		lfTime := ""
		if e.landfall {
			lfTime = e.start
		}
		ew.Write([]string{e.class, id, scenario, "", e.start, e.start, strconv.FormatFloat(e.hours, 'g', -1, 64), wind, ivt,
			strconv.FormatBool(e.landfall), lfTime, lfLat, lfLon, "", ""})
		for k, p := range e.track {
			pw.Write([]string{id, scenario, strconv.Itoa(k), e.start, strconv.FormatFloat(p[0], 'g', -1, 64), strconv.FormatFloat(p[1], 'g', -1, 64), "1000"})
		}
	}
	ew.Flush()
	pw.Flush()
	ep, pp := filepath.Join(dir, EventsFile), filepath.Join(dir, TrackFile)
	os.WriteFile(ep, eb.Bytes(), 0o644)
	os.WriteFile(pp, pb.Bytes(), 0o644)
	return []string{ep, pp}
}

// Regions of the test campaign: a box across the antimeridian, a polygon
// across it written in -180..180, and a box in the Atlantic.
func testRegions() []pipeline.Region {
	return []pipeline.Region{
		{Name: "dateline_box", Box: &pipeline.Box{LatMin: 0, LatMax: 30, LonMin: 170, LonMax: -150}},
		{Name: "dateline_poly", Polygons: [][][][2]float64{{{{170, 0}, {-160, 0}, {-160, 25}, {170, 25}, {170, 0}}}}},
		{Name: "atlantic", Box: &pipeline.Box{LatMin: 0, LatMax: 40, LonMin: -80, LonMax: -20}},
	}
}

// plantedEvents makes per-year catalogs: in every year `pacific(y)`
// cyclones cross the date line (track points at 175E and 175W) and one
// cyclone stays in the Atlantic; one river per year in the Atlantic.
func plantedEvents(year int, pacific int, wind float64) []fakeEvent {
	var evs []fakeEvent
	for k := 0; k < pacific; k++ {
		evs = append(evs, fakeEvent{class: ClassTC, start: fmt.Sprintf("%04d-08-%02dT00:00:00", year, 1+k%28), hours: 48,
			wind: wind + float64(k), landfall: k == 0, track: [][2]float64{{15, 175}, {16, -175}}})
	}
	evs = append(evs, fakeEvent{class: ClassTC, start: fmt.Sprintf("%04d-09-30T06:00:00", year), hours: 72, wind: 30,
		track: [][2]float64{{20, -50}, {25, -60}}})
	// 30 February exists in a 360_day calendar: years are read without
	// Gregorian validation.
	evs = append(evs, fakeEvent{class: ClassAR, start: fmt.Sprintf("%04d-02-30T00:00:00", year), hours: 24, ivt: 600,
		track: [][2]float64{{35, -40}}})
	return evs
}

type testCampaign struct {
	job  *pipeline.Job
	root string
}

// newCampaign builds a job with per-block catalog inputs: control (flat
// counts), future (counts rising by one a year) and short (3 years).
func newCampaign(t *testing.T, settings map[string]any) *testCampaign {
	t.Helper()
	root := t.TempDir()
	job := &pipeline.Job{Stage: "trends", Kind: "trends", Settings: defaults(settings), OutDir: filepath.Join(root, "out"),
		Campaign: pipeline.CampaignInfo{Name: "test", Regions: testRegions()}}
	os.MkdirAll(job.OutDir, 0o755)
	add := func(scn string, first, last int, count func(i int) int, wind func(i int) float64) {
		info := pipeline.ScenarioInfo{Name: scn, FirstYear: first, LastYear: last}
		for y := first; y <= last; y++ {
			i := y - first
			dir := filepath.Join(root, "catalog", scn, strconv.Itoa(y))
			files := writeCatalog(t, dir, scn, plantedEvents(y, count(i), wind(i)))
			job.Inputs = append(job.Inputs, pipeline.Input{From: "catalog", Kind: "catalog", Scenario: scn, Block: strconv.Itoa(y), Dir: dir, Files: files})
			info.Blocks = append(info.Blocks, strconv.Itoa(y))
		}
		job.Campaign.Scenarios = append(job.Campaign.Scenarios, info)
	}
	// control: 2,3,2,3,... (no trend); future: 2..13 (rising); short: 3 years.
	add("control", 1990, 2001, func(i int) int { return 2 + i%2 }, func(i int) float64 { return 40 })
	add("future", 2050, 2061, func(i int) int { return 2 + i }, func(i int) float64 { return 40 + 0.5*float64(i) })
	add("short", 2090, 2092, func(i int) int { return 1 }, func(i int) float64 { return 40 })
	return &testCampaign{job: job, root: root}
}

func findTrend(t *testing.T, o *Output, region, class, scn, metric string) Trend {
	t.Helper()
	for _, tr := range o.Trends {
		if tr.Region == region && tr.Class == class && tr.Scenario == scn && tr.Metric == metric {
			return tr
		}
	}
	t.Fatalf("no trend row %s/%s/%s/%s", region, class, scn, metric)
	return Trend{}
}

func findSeries(t *testing.T, o *Output, region, class, scn, metric string) Series {
	t.Helper()
	for _, s := range o.Series {
		if s.Region == region && s.Class == class && s.Scenario == scn && s.Metric == metric {
			return s
		}
	}
	t.Fatalf("no series %s/%s/%s/%s", region, class, scn, metric)
	return Series{}
}

func TestRunPlantedTrend(t *testing.T) {
	c := newCampaign(t, nil)
	if err := (Kind{}).Run(context.Background(), c.job); err != nil {
		t.Fatal(err)
	}
	o, err := ReadOutput(filepath.Join(c.job.OutDir, JSONFile))
	if err != nil {
		t.Fatal(err)
	}
	if o.Caution == "" || o.Baseline != "control" {
		t.Errorf("caution %q, baseline %q", o.Caution, o.Baseline)
	}
	// Counts by construction (derived): future year i has 2+i date-line
	// cyclones, plus 1 Atlantic cyclone in the whole domain.
	for _, region := range []string{"dateline_box", "dateline_poly"} {
		s := findSeries(t, o, region, ClassTC, "future", MetricEvents)
		for i, v := range s.Values {
			if float64(v) != float64(2+i) {
				t.Fatalf("%s future year %d: %v events, want %d (date-line membership)", region, s.Years[i], v, 2+i)
			}
		}
	}
	dom := findSeries(t, o, "domain", ClassTC, "future", MetricEvents)
	atl := findSeries(t, o, "atlantic", ClassTC, "future", MetricEvents)
	for i := range dom.Values {
		if float64(dom.Values[i]) != float64(3+i) || float64(atl.Values[i]) != 1 {
			t.Fatalf("year %d: domain %v atlantic %v, want %d and 1", dom.Years[i], dom.Values[i], atl.Values[i], 3+i)
		}
	}
	// Landfalls: one per year in the Pacific (landfall point at 175W).
	lf := findSeries(t, o, "dateline_box", ClassTC, "future", MetricLandfalls)
	if float64(lf.Values[0]) != 1 {
		t.Errorf("landfalls %v, want 1 per year", lf.Values)
	}
	lfa := findSeries(t, o, "atlantic", ClassTC, "future", MetricLandfalls)
	if float64(lfa.Values[0]) != 0 {
		t.Errorf("atlantic landfalls %v, want 0", lfa.Values)
	}
	// Event-days: 48 h per Pacific cyclone (derived).
	ed := findSeries(t, o, "dateline_box", ClassTC, "future", MetricEventDays)
	if float64(ed.Values[3]) != 2*5 {
		t.Errorf("event-days in year 4: %v, want 10", ed.Values[3])
	}
	// Rivers: 360_day dates read; one per year.
	ar := findSeries(t, o, "domain", ClassAR, "control", MetricEvents)
	if len(ar.Years) != 12 || float64(ar.Values[0]) != 1 {
		t.Errorf("river series %v %v", ar.Years, ar.Values)
	}

	// Planted increase: slope exactly 1 event/year = 10 per decade (a
	// perfect line, derived), significant; control flat.
	fut := findTrend(t, o, "dateline_box", ClassTC, "future", MetricEvents)
	if fut.Status != StatusOK || float64(fut.SenSlope) != 10 || math.Abs(float64(fut.OLSSlope)-10) > 1e-9 || !(float64(fut.MKP) < 0.001) {
		t.Errorf("future trend: %+v", fut)
	}
	// 12 years is past the exact cut-off (10 by default): normal method.
	if fut.PMethod != PMethodNormal {
		t.Errorf("future trend p_method %q, want normal (n = 12 > 10)", fut.PMethod)
	}
	ctl := findTrend(t, o, "dateline_box", ClassTC, "control", MetricEvents)
	if ctl.Status != StatusOK || !(float64(ctl.MKP) > 0.5) || float64(ctl.SenSlope) != 0 {
		t.Errorf("control trend: %+v", ctl)
	}
	// Too few years: a status, no p-value.
	sh := findTrend(t, o, "domain", ClassTC, "short", MetricEvents)
	if !strings.HasPrefix(sh.Status, StatusTooFew) || !math.IsNaN(float64(sh.MKP)) {
		t.Errorf("short series: status %q p %v", sh.Status, sh.MKP)
	}
	if sh.PMethod != "" {
		t.Errorf("short series: p_method %q, want empty (no p-value)", sh.PMethod)
	}
	if b, err := os.ReadFile(filepath.Join(c.job.OutDir, CSVFile)); err != nil || !strings.Contains(string(b), ",mk_p,p_method,") {
		t.Errorf("trends.csv lacks the documented p_method column after mk_p (err %v)", err)
	}
	// Scenario difference: future minus control in the date-line box.
	var d *Difference
	for i := range o.Differences {
		x := &o.Differences[i]
		if x.Region == "dateline_box" && x.Class == ClassTC && x.Metric == MetricEvents && x.Scenario == "future" {
			d = x
		}
	}
	if d == nil {
		t.Fatal("no difference row")
	}
	// Means: future 2..13 -> 7.5, control 2,3,... -> 2.5 (derived).
	if d.Status != StatusOK || float64(d.Mean) != 7.5 || float64(d.MeanBaseline) != 2.5 || float64(d.Diff) != 5 || float64(d.Ratio) != 3 {
		t.Errorf("difference: %+v", *d)
	}
	if !(float64(d.DiffLow) > 0 && float64(d.DiffHigh) > 5) || !(float64(d.RankSumP) < 0.01) {
		t.Errorf("difference interval or p: %+v", *d)
	}
	// CSV tables exist with their documented first columns.
	for _, f := range []string{CSVFile, SeriesFile, DifferencesFile} {
		b, err := os.ReadFile(filepath.Join(c.job.OutDir, f))
		if err != nil {
			t.Fatal(err)
		}
		if !strings.HasPrefix(string(b), "region,class,") {
			t.Errorf("%s header: %.60s", f, b)
		}
	}
	// Track-density maps (no masks given).
	if o.Maps == nil || o.Maps.Source != SourceTracks {
		t.Fatalf("maps: %+v", o.Maps)
	}
	checkMapsWithNcdump(t, filepath.Join(c.job.OutDir, MapsFile), "tropical_cyclone_frequency_difference_future_minus_control")
}

// checkMapsWithNcdump reads the header with the reference tool (Debian
// netcdf-bin) when it is there.
func checkMapsWithNcdump(t *testing.T, path, want string) {
	t.Helper()
	ncdump, err := exec.LookPath("ncdump")
	if err != nil {
		t.Logf("ncdump not found (apt-get install netcdf-bin): maps.nc header not checked")
		return
	}
	out, err := exec.Command(ncdump, "-h", path).CombinedOutput()
	if err != nil {
		t.Fatalf("ncdump -h %s: %v\n%s", path, err, out)
	}
	for _, s := range []string{want, `:Conventions = "CF-1.13"`, `lat:units = "degrees_north"`, `:units = "year-1"`} {
		if !strings.Contains(string(out), s) {
			t.Errorf("ncdump -h lacks %q", s)
		}
	}
}

func TestRunDeterministic(t *testing.T) {
	c := newCampaign(t, map[string]any{setCorrection: CorrectionHamedRao, setResamples: 500})
	k := Kind{}
	if err := k.Run(context.Background(), c.job); err != nil {
		t.Fatal(err)
	}
	first := readDir(t, c.job.OutDir)
	c.job.OutDir = filepath.Join(c.root, "out2")
	os.MkdirAll(c.job.OutDir, 0o755)
	if err := k.Run(context.Background(), c.job); err != nil {
		t.Fatal(err)
	}
	second := readDir(t, c.job.OutDir)
	if len(first) != 5 {
		t.Errorf("wrote %d files, want 5 (trends.json, trends.csv, series.csv, differences.csv, maps.nc)", len(first))
	}
	for name, b := range first {
		if !bytes.Equal(b, second[name]) {
			t.Errorf("%s differs between two identical runs", name)
		}
	}
}

func readDir(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]byte{}
	for _, e := range ents {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		out[e.Name()] = b
	}
	return out
}

// A catalog that covers a whole scenario (no block) takes its years from
// the campaign, so years without events count as zero.
func TestRunWholeScenarioCatalog(t *testing.T) {
	root := t.TempDir()
	var evs []fakeEvent
	for y := 2000; y < 2012; y += 2 { // events only in even years
		evs = append(evs, plantedEvents(y, 1, 40)...)
	}
	dir := filepath.Join(root, "cat")
	files := writeCatalog(t, dir, "only", evs)
	job := &pipeline.Job{Settings: defaults(map[string]any{setMinYears: 5}), OutDir: filepath.Join(root, "out"),
		Campaign: pipeline.CampaignInfo{Scenarios: []pipeline.ScenarioInfo{{Name: "only", FirstYear: 2000, LastYear: 2011}}},
		Inputs:   []pipeline.Input{{From: "catalog", Kind: "catalog", Scenario: "only", Dir: dir, Files: files}}}
	os.MkdirAll(job.OutDir, 0o755)
	if err := (Kind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	o, err := ReadOutput(filepath.Join(job.OutDir, JSONFile))
	if err != nil {
		t.Fatal(err)
	}
	s := findSeries(t, o, "domain", ClassAR, "only", MetricEvents)
	if len(s.Years) != 12 || float64(s.Values[1]) != 0 || float64(s.Values[0]) != 1 {
		t.Errorf("years %v values %v: want 12 years with zeros in odd years", s.Years, s.Values)
	}
	// Mean intensity is missing (null) in years without events.
	mi := findSeries(t, o, "domain", ClassAR, "only", MetricMeanIntensity)
	if !math.IsNaN(float64(mi.Values[1])) || float64(mi.Values[0]) != 600 {
		t.Errorf("mean intensity %v", mi.Values)
	}
	if len(o.Differences) != 0 {
		t.Errorf("one scenario gave %d differences", len(o.Differences))
	}
}

func TestRunErrorsNameTheFile(t *testing.T) {
	root := t.TempDir()
	dir := filepath.Join(root, "cat")
	os.MkdirAll(dir, 0o755)
	bad := filepath.Join(dir, EventsFile)
	os.WriteFile(bad, []byte("id,class,start\ne1,tropical_cyclone,notadate\n"), 0o644)
	job := &pipeline.Job{Settings: defaults(nil), OutDir: root,
		Inputs: []pipeline.Input{{From: "catalog", Kind: "catalog", Scenario: "s", Block: "1990", Files: []string{bad}}}}
	err := (Kind{}).Run(context.Background(), job)
	if err == nil || !strings.Contains(err.Error(), bad) || !strings.Contains(err.Error(), "line 2") {
		t.Errorf("error %v should name %s and line 2", err, bad)
	}
	os.WriteFile(bad, []byte("id,start\ne1,1990-01-01\n"), 0o644)
	err = (Kind{}).Run(context.Background(), job)
	if err == nil || !strings.Contains(err.Error(), "class") {
		t.Errorf("missing class column: %v", err)
	}
	job.Inputs = nil
	if err := (Kind{}).Run(context.Background(), job); err == nil || !strings.Contains(err.Error(), EventsFile) {
		t.Errorf("no inputs: %v", err)
	}
}

func TestRegionsDateline(t *testing.T) {
	regs, err := buildRegions(&pipeline.CampaignInfo{Regions: testRegions()}, "")
	if err != nil {
		t.Fatal(err)
	}
	// Derived by hand from the region definitions.
	cases := []struct {
		lat, lon float64
		in       [3]bool // dateline_box, dateline_poly, atlantic
	}{
		{15, 175, [3]bool{true, true, false}},
		{15, -175, [3]bool{true, true, false}},
		{15, 185, [3]bool{true, true, false}}, // 185E = 175W
		{15, 0, [3]bool{false, false, false}},
		{15, 165, [3]bool{false, false, false}},
		{28, 180, [3]bool{true, false, false}}, // above the polygon's 25N top
		{15, -50, [3]bool{false, false, true}},
		{15, 310, [3]bool{false, false, true}}, // 310E = 50W
	}
	for _, c := range cases {
		for i := range regs {
			if got := regs[i].contains(c.lat, c.lon); got != c.in[i] {
				t.Errorf("(%g, %g) in %s = %v, want %v", c.lat, c.lon, regs[i].name, got, c.in[i])
			}
		}
	}
}

func TestCheckStage(t *testing.T) {
	c := &pipeline.CampaignInfo{Scenarios: []pipeline.ScenarioInfo{{Name: "a"}}}
	if err := (Kind{}).CheckStage("t", defaults(map[string]any{setBaseline: "b"}), c); err == nil {
		t.Error("unknown baseline accepted")
	}
	if err := (Kind{}).CheckStage("t", defaults(map[string]any{setMapRes: 7.0}), c); err == nil {
		t.Error("7 degree map spacing accepted")
	}
	if err := (Kind{}).CheckStage("t", defaults(nil), c); err != nil {
		t.Error(err)
	}
}

// writeMaskFile writes a mask.nc in the shared layout: 4 steps on a 3x4
// grid; class 1 at cell 0 in `tcSteps` steps, class 2 at cell 11 always.
func writeMaskFile(t *testing.T, path string, tcSteps int) {
	t.Helper()
	os.MkdirAll(filepath.Dir(path), 0o755)
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefTime([]float64{0, 6, 12, 18}, "hours since 2000-01-01 00:00:00", "360_day")
	w.DefLat([]float64{10, 20, 30})
	w.DefLon([]float64{170, 180, 190, 200})
	w.DefVar(ncio.VarSpec{Name: "class_mask", Type: ncio.Byte, Dims: []string{"time", "lat", "lon"}, Attrs: []ncio.Attr{
		{Name: "flag_values", Value: []int8{0, 1, 2}}, {Name: "flag_meanings", Value: "background tropical_cyclone atmospheric_river"}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	m := make([]int8, 4*12)
	for s := 0; s < 4; s++ {
		if s < tcSteps {
			m[s*12] = 1
		}
		m[s*12+11] = 2
	}
	if err := w.WriteInt8("class_mask", nil, nil, m); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// With mask inputs the maps are the fraction of time steps in each class
// (derived by construction: 1 of 4 steps in control, 3 of 4 in future).
func TestRunMaskFrequencyMaps(t *testing.T) {
	c := newCampaign(t, nil)
	for i, scn := range []string{"control", "future"} {
		p := filepath.Join(c.root, "labels", scn, "mask.nc")
		writeMaskFile(t, p, 1+2*i)
		c.job.Inputs = append(c.job.Inputs, pipeline.Input{From: "labels", Kind: "label", Scenario: scn, Block: "", Dir: filepath.Dir(p), Files: []string{p}})
	}
	if err := (Kind{}).Run(context.Background(), c.job); err != nil {
		t.Fatal(err)
	}
	o, err := ReadOutput(filepath.Join(c.job.OutDir, JSONFile))
	if err != nil {
		t.Fatal(err)
	}
	if o.Maps == nil || o.Maps.Source != SourceMasks || o.Maps.Units != "1" {
		t.Fatalf("maps: %+v", o.Maps)
	}
	f, err := ncio.Open(filepath.Join(c.job.OutDir, MapsFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	read := func(name string) []float64 {
		v, err := f.Var(name)
		if err != nil {
			t.Fatal(err)
		}
		x, err := v.ReadFloat64(nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		return x
	}
	ctl, fut := read("tropical_cyclone_frequency_control"), read("tropical_cyclone_frequency_future")
	diff := read("tropical_cyclone_frequency_difference_future_minus_control")
	ar := read("atmospheric_river_frequency_future")
	if ctl[0] != 0.25 || fut[0] != 0.75 || diff[0] != 0.5 || ctl[1] != 0 || ar[11] != 1 || ar[0] != 0 {
		t.Errorf("control %v future %v diff %v river %v", ctl[:2], fut[:2], diff[:2], ar)
	}
}
