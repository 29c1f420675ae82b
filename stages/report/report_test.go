package report

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
	"github.com/squall-climate/squall/stages/trends"
)

// fixture is a tiny finished campaign: label masks, evaluation tables,
// catalogs and a real trends run over them, all in a temp dir.
type fixture struct {
	root string
	in   Input
}

// catalog columns as stages/catalog writes them (its doc.go).
var eventHeader = "event_id,scenario,member,class,start,end,duration_hours,steps,start_lat,start_lon,end_lat,end_lon," +
	"max_area_km2,min_slp_pa,max_wind_ms,saffir_simpson_category,storm_stage,max_ivt_kg_m_s,mean_ivt_kg_m_s,max_iwv_kg_m2," +
	"landfall,landfall_time,landfall_lat,landfall_lon,landfall_regions,regions,split_from,merged_into\n"

func writeFile(t testing.TB, path, content string) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
}

// writeCatalog writes events.csv and track_points.csv for a scenario with
// perYear(i) cyclones and 2 rivers in year first+i.
func writeCatalog(t testing.TB, dir, scn string, first, years int, perYear func(i int) int, rng *rand.Rand) []string {
	var ev, pt strings.Builder
	ev.WriteString(eventHeader)
	pt.WriteString("event_id,scenario,member,class,index,time,hours_since_start,lat,lon,area_km2,pixels,min_slp_pa,max_wind_ms,max_ivt_kg_m_s,mean_ivt_kg_m_s,max_iwv_kg_m2,on_land\n")
	id := 0
	for i := 0; i < years; i++ {
		y := first + i
		for k := 0; k < perYear(i)+2; k++ {
			id++
			class := "tropical_cyclone"
			wind, cat, stage, ivt := 20+45*rng.Float64(), "", "", ""
			if k >= perYear(i) {
				class = "atmospheric_river"
				ivt = strconv.FormatFloat(250+900*rng.Float64(), 'f', 1, 64)
			} else {
				switch {
				case wind >= 32.92: // Saffir-Simpson category 1 lower bound (reference-values.md)
					cat, stage = "1", "hurricane"
					if wind >= 42.70 {
						cat = "2"
					}
					if wind >= 49.39 {
						cat = "3"
					}
				case wind >= 17.49:
					cat, stage = "0", "tropical_storm"
				default:
					cat, stage = "0", "tropical_depression"
				}
			}
			lat, lon := 5+30*rng.Float64(), 120+100*rng.Float64()
			windText := ""
			if class == "tropical_cyclone" {
				windText = strconv.FormatFloat(wind, 'f', 2, 64)
			}
			land := rng.IntN(3) == 0
			start := fmt.Sprintf("%04d-%02d-10T00:00:00", y, 6+k%5)
			fmt.Fprintf(&ev, "%d,%s,,%s,%s,%s,%d,4,%g,%g,%g,%g,1e5,,%s,%s,%s,%s,,,%v,,,,,,,\n",
				id, scn, class, start, start, 48+6*rng.IntN(10), lat, lon, lat+2, lon+3, windText, cat, stage, ivt, land)
			for p := 0; p < 4; p++ {
				fmt.Fprintf(&pt, "%d,%s,,%s,%d,%s,%d,%g,%g,1e5,10,,,,,,false\n", id, scn, class, p, start, 6*p, lat+0.5*float64(p), lon+float64(p))
			}
		}
	}
	ep, pp := filepath.Join(dir, "events.csv"), filepath.Join(dir, "track_points.csv")
	writeFile(t, ep, ev.String())
	writeFile(t, pp, pt.String())
	return []string{ep, pp}
}

// writeMask writes a tiny mask.nc (4 steps on a 6x8 grid) with the shared
// mask format: class_mask byte with flag_values and flag_meanings.
func writeMask(t testing.TB, path string, tcCells, arCells int) {
	t.Helper()
	os.MkdirAll(filepath.Dir(path), 0o755)
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	lat := []float64{-25, -15, -5, 5, 15, 25}
	lon := []float64{100, 120, 140, 160, 180, 200, 220, 240}
	w.DefTime([]float64{0, 6, 12, 18}, "hours since 1990-01-01 00:00:00", "noleap")
	w.DefLat(lat)
	w.DefLon(lon)
	w.DefVar(ncio.VarSpec{Name: "class_mask", Type: ncio.Byte, Dims: []string{"time", "lat", "lon"}, Attrs: []ncio.Attr{
		{Name: "long_name", Value: "event class"}, {Name: "flag_values", Value: []int8{0, 1, 2}},
		{Name: "flag_meanings", Value: "background tropical_cyclone atmospheric_river"}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	m := make([]int8, 4*6*8)
	for s := 0; s < 4; s++ {
		for k := 0; k < tcCells; k++ {
			m[s*48+k] = 1
		}
		for k := 0; k < arCells; k++ {
			m[s*48+47-k] = 2
		}
	}
	if err := w.WriteInt8("class_mask", nil, nil, m); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func newFixture(t testing.TB) *fixture {
	t.Helper()
	root := t.TempDir()
	rng := rand.New(rand.NewPCG(11, 12))
	f := &fixture{root: root}
	in := Input{Campaign: "coastal-demo", CampaignFile: "campaigns/coastal-demo.yaml", Tool: "squall (test)", RunID: "run-0001", Status: "ok",
		Scenarios: []Scenario{{Name: "control", FirstYear: 1990, LastYear: 2001, Calendar: "noleap"}, {Name: "warm", FirstYear: 2060, LastYear: 2071, Calendar: "noleap"}},
		Channels: []Channel{{Name: "slp", Quantity: "air_pressure_at_mean_sea_level", Units: "Pa"},
			{Name: "wind10", Quantity: "wind_speed", Units: "m s-1"}, {Name: "ivt", Quantity: "ivt", Units: "kg m-1 s-1"},
			{Name: "vort850", Quantity: "relative_vorticity", LevelPa: 85000, Units: "s-1"}},
		Stages: []Stage{
			{Name: "cut", Kind: "subset", Fan: "per block", Inputs: []string{"control", "warm"}},
			{Name: "labels", Kind: "label", Fan: "per block", Inputs: []string{"cut"}},
			{Name: "scores", Kind: "evaluate", Fan: "per block", Inputs: []string{"labels"}},
			{Name: "events", Kind: "catalog", Fan: "per scenario", Inputs: []string{"labels", "cut"}},
			{Name: "change", Kind: "trends", Fan: "whole campaign", Inputs: []string{"events"}},
		},
		Record: "{\n  \"id\": \"run-0001\",\n  \"tool\": \"squall (test)\"\n}",
	}
	job := &pipeline.Job{Stage: "change", Kind: "trends", OutDir: filepath.Join(root, "change"),
		Campaign: pipeline.CampaignInfo{Name: "coastal-demo", Regions: []pipeline.Region{
			{Name: "west_pacific", Box: &pipeline.Box{LatMin: 0, LatMax: 40, LonMin: 100, LonMax: 180}},
			{Name: "east_of_dateline", Box: &pipeline.Box{LatMin: 0, LatMax: 40, LonMin: 180, LonMax: -120}}}}}
	job.Settings = pipeline.Values{}
	for _, s := range (trends.Kind{}).Settings() {
		job.Settings[s.Name] = s.Default
	}
	job.Settings["bootstrap_resamples"] = 500
	for si, sc := range in.Scenarios {
		years := sc.LastYear - sc.FirstYear + 1
		per := func(i int) int { return 2 + i%2 }
		if si == 1 {
			per = func(i int) int { return 2 + i/2 }
		}
		dir := filepath.Join(root, "events", sc.Name)
		files := writeCatalog(t, dir, sc.Name, sc.FirstYear, years, per, rng)
		job.Inputs = append(job.Inputs, pipeline.Input{From: "events", Kind: "catalog", Scenario: sc.Name, Dir: dir, Files: files})
		job.Campaign.Scenarios = append(job.Campaign.Scenarios, pipeline.ScenarioInfo{Name: sc.Name, FirstYear: sc.FirstYear, LastYear: sc.LastYear})
		in.Outputs = append(in.Outputs, Output{Stage: "events", Kind: "catalog", Scenario: sc.Name, Dir: dir})
		in.Instances = append(in.Instances, Instance{Stage: "events", Scenario: sc.Name, State: StateRan, Seconds: 3.2, Reason: "new input"})
		for y := sc.FirstYear; y <= sc.LastYear; y++ {
			b := strconv.Itoa(y)
			in.Scenarios[si].Blocks = append(in.Scenarios[si].Blocks, b)
			state := StateReused
			if si == 1 && y > sc.LastYear-2 {
				state = StateRan
			}
			in.Instances = append(in.Instances, Instance{Stage: "cut", Scenario: sc.Name, Block: b, State: state, Seconds: 1.5})
			in.Instances = append(in.Instances, Instance{Stage: "labels", Scenario: sc.Name, Block: b, State: state, Seconds: 4})
			st := state
			if si == 1 && y == sc.LastYear {
				st = StateFailed
			}
			in.Instances = append(in.Instances, Instance{Stage: "scores", Scenario: sc.Name, Block: b, State: st, Seconds: 0.4, Reason: map[bool]string{true: "reference masks missing"}[st == StateFailed]})
			if y < sc.FirstYear+2 {
				mdir := filepath.Join(root, "labels", sc.Name, b)
				writeMask(t, filepath.Join(mdir, "mask.nc"), 2+si, 5+si)
				in.Outputs = append(in.Outputs, Output{Stage: "labels", Kind: "label", Scenario: sc.Name, Block: b, Dir: mdir})
			}
		}
	}
	os.MkdirAll(job.OutDir, 0o755)
	if err := (trends.Kind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	in.Outputs = append(in.Outputs, Output{Stage: "change", Kind: "trends", Dir: job.OutDir})
	in.Instances = append(in.Instances, Instance{Stage: "change", State: StateRan, Seconds: 0.8, Reason: "input events changed"})
	// Evaluation tables in the evaluate kind's column layout.
	edir := filepath.Join(root, "scores")
	writeFile(t, filepath.Join(edir, "pixel_scores.csv"), "member,scenario,region,season,weighting,class,tp,fp,fn,tn,iou,precision,recall,f1,accuracy\n"+
		",all,all,all,area,tropical_cyclone,10,2,3,100,0.6667,0.8333,0.7692,0.8,\n"+
		",all,all,all,area,atmospheric_river,40,10,8,60,0.6897,0.8,0.8333,0.8163,\n"+
		",all,all,all,area,mean,,,,,0.678,0.8167,0.8013,0.8082,0.85\n"+
		",all,west_pacific,all,area,mean,,,,,0.5,0.5,0.5,0.5,0.5\n")
	// Finley (1884) table and its scores (reference-values.md) as a row.
	writeFile(t, filepath.Join(edir, "event_scores.csv"), "member,scenario,region,season,class,hits,false_alarms,misses,correct_negatives,"+
		"pod,far,pofd,csi,frequency_bias,proportion_correct,heidke,peirce,gilbert,odds_ratio\n"+
		",all,all,all,tropical_cyclone,28,72,23,2680,0.5490196,0.72,0.0261628,0.2276423,1.9607843,0.9661077,0.3553249,0.5228568,0.2160456,45.31401\n")
	in.Outputs = append(in.Outputs, Output{Stage: "scores", Kind: "evaluate", Dir: edir})
	f.in = in
	return f
}

var netRef = regexp.MustCompile(`(?i)(https?:)?//[a-z0-9.-]+\.[a-z]{2,}|https?:`)

func TestWriteFullReport(t *testing.T) {
	f := newFixture(t)
	path := filepath.Join(f.root, "report.html")
	if err := Write(path, f.in); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	page := string(b)
	// Self-contained: no http(s) URL or protocol-relative reference
	// anywhere (not even SVG namespace URIs), no script, no link element.
	if m := netRef.FindString(page); m != "" {
		t.Errorf("page references the network: %q", m)
	}
	for _, bad := range []string{"<script", "<link", "<iframe", "@import", "url("} {
		if strings.Contains(page, bad) {
			t.Errorf("page contains %q", bad)
		}
	}
	// Every section is present with content, none says it is missing.
	for _, want := range []string{Caution, "coastal-demo", "Stage graph", "Class fractions", "Pixel scores", "Event scores",
		"Event counts", "<th>CSI</th>", "<td>0.228</td>", "Tropical cyclones by peak wind", "Atmospheric rivers by peak IVT", "frequency_difference_warm_minus_control",
		"Trends of annual events", "<th>p from</th>", "Scenario differences", "west_pacific · tropical cyclone", "&#34;id&#34;: &#34;run-0001&#34;",
		"reference masks missing"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	if strings.Contains(page, `class="missing"`) {
		t.Errorf("a section says its outputs are missing although all are present")
	}
	// Plots (derived from the fixture): the stage graph, the class-
	// fraction chart, two category charts, 2 classes x (2 scenarios + 1
	// difference) maps, and trend figures for 3 regions (domain and two
	// boxes) x 2 classes: 1+1+2+6+6 = 16 inline SVGs.
	if n := strings.Count(page, `<svg class="plot"`); n != 16 {
		t.Errorf("%d plots, want 16", n)
	}
	// Each map embeds its field and its colour bar as PNG data.
	if n := strings.Count(page, "data:image/png;base64,"); n != 12 {
		t.Errorf("%d embedded images, want 12", n)
	}
	// The caution comes before the first section.
	if strings.Index(page, Caution) > strings.Index(page, `id="glance"`) {
		t.Error("the caution is not near the top")
	}
	// Deterministic: same input, same bytes.
	var again bytes.Buffer
	if err := Render(&again, f.in); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(again.Bytes(), b) {
		t.Error("two renders of the same input differ")
	}
}

// Class fractions are area-weighted (CF-1.13 section 7.2 cell areas):
// check against the fraction computed here from the same formula.
func TestClassFractionsAreaWeighted(t *testing.T) {
	root := t.TempDir()
	p := filepath.Join(root, "m", "mask.nc")
	writeMask(t, p, 8, 0) // the first 8 cells: the southernmost row (-25), all 8 columns
	rows, notes := classFractions(&Input{Outputs: []Output{{Kind: "label", Stage: "l", Scenario: "s", Dir: filepath.Dir(p)}}})
	if len(notes) > 0 || len(rows) != 1 {
		t.Fatalf("rows %v notes %v", rows, notes)
	}
	// Derived: rows are 10-degree bands centred on -25..25; a band's area
	// is proportional to sin(north) - sin(south).
	band := func(c float64) float64 {
		r := math.Pi / 180
		return math.Sin((c+5)*r) - math.Sin((c-5)*r)
	}
	var total float64
	for _, c := range []float64{-25, -15, -5, 5, 15, 25} {
		total += band(c)
	}
	want := band(-25) / total
	if math.Abs(rows[0].TC-want) > 1e-12 || rows[0].AR != 0 || rows[0].Steps != 4 {
		t.Errorf("TC fraction %.15g, want %.15g (unweighted would be %g)", rows[0].TC, want, 8.0/48)
	}
}

func TestMissingSectionsSaySo(t *testing.T) {
	var buf bytes.Buffer
	if err := Render(&buf, Input{Campaign: "empty"}); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	for _, want := range []string{"No label masks", "No evaluation", "No event catalog", "No event-frequency maps", "No trends", "No reproducibility record", Caution} {
		if !strings.Contains(page, want) {
			t.Errorf("empty report lacks %q", want)
		}
	}
}

func TestBrokenOutputBecomesANote(t *testing.T) {
	root := t.TempDir()
	writeFile(t, filepath.Join(root, "t", "trends.json"), "{not json")
	writeFile(t, filepath.Join(root, "c", "events.csv"), "")
	var buf bytes.Buffer
	err := Render(&buf, Input{Campaign: "x", Outputs: []Output{{Kind: "trends", Dir: filepath.Join(root, "t")}, {Kind: "catalog", Dir: filepath.Join(root, "c")}}})
	if err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	if !strings.Contains(page, "trends.json") || !strings.Contains(page, "events.csv is empty") {
		t.Error("broken outputs are not reported as notes")
	}
}

// BenchmarkWrite measures the small fixture (2 scenarios x 12 years, 3
// regions, label masks, evaluation) end to end.
//
//	go test ./stages/report -run '^$' -bench Write
func BenchmarkWrite(b *testing.B) {
	f := newFixture(b)
	path := filepath.Join(f.root, "report.html")
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := Write(path, f.in); err != nil {
			b.Fatal(err)
		}
	}
	st, _ := os.Stat(path)
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/report")
	b.ReportMetric(float64(st.Size())/1e6, "MB/page")
}

// BenchmarkWriteLarge: the report for a campaign of the trends
// benchmark's shape, 5 scenarios x 100 years x 20 regions (plus the whole
// domain): 42 trend figures of 5 panels, 18 maps, 1050 trend rows. The
// catalogs and the trends run are set up outside the timer.
//
//	go test ./stages/report -run '^$' -bench WriteLarge -benchtime 3x
func BenchmarkWriteLarge(b *testing.B) {
	root := b.TempDir()
	rng := rand.New(rand.NewPCG(5, 6))
	in := Input{Campaign: "large", Record: "{}"}
	job := &pipeline.Job{OutDir: filepath.Join(root, "trends"), Settings: pipeline.Values{}}
	for _, s := range (trends.Kind{}).Settings() {
		job.Settings[s.Name] = s.Default
	}
	job.Settings["bootstrap_resamples"] = 200
	for k := 0; k < 20; k++ {
		lon0 := 100 + 6*float64(k)
		job.Campaign.Regions = append(job.Campaign.Regions, pipeline.Region{Name: fmt.Sprintf("region_%02d", k),
			Box: &pipeline.Box{LatMin: 0, LatMax: 40, LonMin: lon0, LonMax: lon0 + 15}})
	}
	for s := 0; s < 5; s++ {
		name := fmt.Sprintf("s%d", s)
		first := 1900 + 100*s
		dir := filepath.Join(root, "events", name)
		files := writeCatalog(b, dir, name, first, 100, func(i int) int { return 3 + (i*s)/60 }, rng)
		job.Inputs = append(job.Inputs, pipeline.Input{From: "events", Kind: "catalog", Scenario: name, Dir: dir, Files: files})
		job.Campaign.Scenarios = append(job.Campaign.Scenarios, pipeline.ScenarioInfo{Name: name, FirstYear: first, LastYear: first + 99})
		in.Scenarios = append(in.Scenarios, Scenario{Name: name, FirstYear: first, LastYear: first + 99})
		in.Outputs = append(in.Outputs, Output{Stage: "events", Kind: "catalog", Scenario: name, Dir: dir})
	}
	os.MkdirAll(job.OutDir, 0o755)
	if err := (trends.Kind{}).Run(context.Background(), job); err != nil {
		b.Fatal(err)
	}
	in.Outputs = append(in.Outputs, Output{Stage: "change", Kind: "trends", Dir: job.OutDir})
	path := filepath.Join(root, "report.html")
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := Write(path, in); err != nil {
			b.Fatal(err)
		}
	}
	st, _ := os.Stat(path)
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/report")
	b.ReportMetric(float64(st.Size())/1e6, "MB/page")
}
