package trends

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/squall-climate/squall/examples/world"
	"github.com/squall-climate/squall/pipeline"
)

// TestInventedWorldPlantedTrend runs the trends kind on the invented
// world's truth catalog (examples/world), whose event counts grow by a
// planted amount per year, and checks that the sign is found and
// significant. The p-values per region are logged for the record.
func TestInventedWorldPlantedTrend(t *testing.T) {
	if testing.Short() {
		t.Skip("generates a small invented world; skipped with -short")
	}
	o, err := world.Preset("tiny")
	if err != nil {
		t.Fatal(err)
	}
	root := t.TempDir()
	o.Dir = filepath.Join(root, "world")
	o.Workers = 1
	// Twelve seasons per scenario so the test has the default min_years;
	// counts rise by 0.5 cyclones and 0.4 rivers per season (planted).
	o.Scenarios[0].LastYear = o.Scenarios[0].FirstYear + 11
	o.Scenarios[1].LastYear = o.Scenarios[1].FirstYear + 11
	o.Scenarios[0].Cyclones = world.Rate{First: 2, PerYear: 0.5}
	o.Scenarios[1].Cyclones = world.Rate{First: 4, PerYear: 0.5}
	o.Scenarios[0].Rivers = world.Rate{First: 2, PerYear: 0.4}
	o.Scenarios[1].Rivers = world.Rate{First: 6, PerYear: 0.4}
	if _, err := world.Generate(context.Background(), o); err != nil {
		t.Fatal(err)
	}
	regions := readWorldRegions(t, filepath.Join(o.Dir, "regions.geojson"))
	job := &pipeline.Job{Settings: defaults(map[string]any{setResamples: 500}), OutDir: filepath.Join(root, "out"),
		Campaign: pipeline.CampaignInfo{Name: "world", Regions: regions}}
	os.MkdirAll(job.OutDir, 0o755)
	for _, sc := range o.Scenarios {
		// The truth catalog under the catalog kind's file names.
		dir := filepath.Join(root, "cat", sc.Name)
		os.MkdirAll(dir, 0o755)
		for from, to := range map[string]string{"truth_events.csv": EventsFile, "truth_tracks.csv": TrackFile} {
			b, err := os.ReadFile(filepath.Join(o.Dir, sc.Name, from))
			if err != nil {
				t.Fatal(err)
			}
			os.WriteFile(filepath.Join(dir, to), b, 0o644)
		}
		info := pipeline.ScenarioInfo{Name: sc.Name, FirstYear: sc.FirstYear, LastYear: sc.LastYear}
		for y := sc.FirstYear; y <= sc.LastYear; y++ {
			info.Blocks = append(info.Blocks, strconv.Itoa(y))
		}
		job.Campaign.Scenarios = append(job.Campaign.Scenarios, info)
		job.Inputs = append(job.Inputs, pipeline.Input{From: "truth", Kind: "catalog", Scenario: sc.Name, Dir: dir,
			Files: []string{filepath.Join(dir, EventsFile), filepath.Join(dir, TrackFile)}})
	}
	if err := (Kind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	out, err := ReadOutput(filepath.Join(job.OutDir, JSONFile))
	if err != nil {
		t.Fatal(err)
	}
	for _, tr := range out.Trends {
		if tr.Metric == MetricEvents && tr.Status == StatusOK {
			t.Logf("%-14s %-18s %-8s Sen %+6.2f /decade [%+.2f, %+.2f]  MK p %.4f", tr.Region, tr.Class, tr.Scenario,
				float64(tr.SenSlope), float64(tr.SenLow), float64(tr.SenHigh), float64(tr.MKP))
		}
	}
	// Whole domain: the planted growth is 5 cyclones and 4 rivers per
	// decade (world options above); the found slopes must be positive and
	// significant, and near the planted ones.
	for _, c := range []struct {
		class   string
		planted float64 // per decade
	}{{ClassTC, 5}, {ClassAR, 4}} {
		for _, scn := range []string{"control", "warm"} {
			tr := findTrend(t, out, "domain", c.class, scn, MetricEvents)
			if tr.Status != StatusOK || !(float64(tr.SenSlope) > 0) || !(float64(tr.MKP) < 0.01) {
				t.Errorf("%s %s: %s, slope %v, p %v; want a significant increase", c.class, scn, tr.Status, tr.SenSlope, tr.MKP)
			}
			if math.Abs(float64(tr.SenSlope)-c.planted) > 0.35*c.planted {
				t.Errorf("%s %s: Sen slope %.2f per decade, planted %.1f", c.class, scn, float64(tr.SenSlope), c.planted)
			}
		}
	}
	// warm has more events than control (planted: higher first counts).
	for _, d := range out.Differences {
		if d.Region == "domain" && d.Metric == MetricEvents && !(float64(d.Diff) > 0 && float64(d.RankSumP) < 0.05) {
			t.Errorf("warm - control %s: difference %v, p %v", d.Class, d.Diff, d.RankSumP)
		}
	}
}

// readWorldRegions reads the world's RFC 7946 FeatureCollection of named
// Polygons into campaign regions.
func readWorldRegions(t *testing.T, path string) []pipeline.Region {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var fc struct {
		Features []struct {
			Properties map[string]any `json:"properties"`
			Geometry   struct {
				Type        string          `json:"type"`
				Coordinates json.RawMessage `json:"coordinates"`
			} `json:"geometry"`
		} `json:"features"`
	}
	if err := json.Unmarshal(b, &fc); err != nil {
		t.Fatal(err)
	}
	var out []pipeline.Region
	for _, f := range fc.Features {
		name, _ := f.Properties["name"].(string)
		r := pipeline.Region{Name: strings.TrimSpace(name)}
		switch f.Geometry.Type {
		case "Polygon":
			var rings [][][2]float64
			if err := json.Unmarshal(f.Geometry.Coordinates, &rings); err != nil {
				t.Fatal(err)
			}
			r.Polygons = [][][][2]float64{rings}
		case "MultiPolygon":
			if err := json.Unmarshal(f.Geometry.Coordinates, &r.Polygons); err != nil {
				t.Fatal(err)
			}
		default:
			t.Fatalf("region %s: geometry %s", name, f.Geometry.Type)
		}
		out = append(out, r)
	}
	if len(out) == 0 {
		t.Fatal("no regions in the world")
	}
	return out
}
