package catalog

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/squall-climate/squall/examples/world"
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
)

// TestWorldTruthCatalog builds the catalog from the invented world's truth
// masks and fields (examples/world) and matches its events with the
// planted truth catalog. A catalog event matches a planted event of the
// same class when, at a common time step, its centroid lies within
// matchKm of the planted position (cyclone: planted centre; river: truth
// pixel centroid). Each planted event matches at most one catalog event.
// The counts are logged; the test asserts that nearly every planted event
// is found, since the masks are the truth's own (what fails then is the
// linking, not a detector).
func TestWorldTruthCatalog(t *testing.T) {
	if testing.Short() {
		t.Skip("generates a small world: skipped with -short")
	}
	o, err := world.Preset("tiny")
	if err != nil {
		t.Fatal(err)
	}
	o.Dir = t.TempDir()
	o.Days = 10
	o.Workers = 1
	sum, err := world.Generate(context.Background(), o)
	if err != nil {
		t.Fatal(err)
	}
	regions, err := worldRegions(filepath.Join(o.Dir, "regions.geojson"))
	if err != nil {
		t.Fatal(err)
	}
	byScenario := map[string][]pipeline.Input{}
	for _, f := range sum.Files {
		if f.Kind != "fields" && f.Kind != "truth" {
			continue
		}
		// The truth mask stands in for a label stage's mask.nc and the raw
		// fields for subset's fields.nc: link them under those names.
		d := filepath.Join(o.Dir, "link", f.Kind, f.Scenario, itoa(f.Year))
		os.MkdirAll(d, 0o755)
		name := MaskName
		if f.Kind == "fields" {
			name = FieldsName
		}
		if err := os.Symlink(f.Path, filepath.Join(d, name)); err != nil {
			t.Fatal(err)
		}
		byScenario[f.Scenario] = append(byScenario[f.Scenario], pipeline.Input{From: f.Kind, Kind: f.Kind,
			Scenario: f.Scenario, Block: itoa(f.Year), Files: []string{filepath.Join(d, name)}})
	}
	const (
		matchKmTC = 300 // a few grid lengths at 3 degrees (~330 km) would be too loose; the disk is symmetric
		matchKmAR = 600 // river centroids move with the truth pixels' shape at the domain edge
	)
	var matched, missed, spurious, fragments int
	scenarios := make([]string, 0, len(byScenario))
	for sc := range byScenario {
		scenarios = append(scenarios, sc)
	}
	sort.Strings(scenarios)
	for _, sc := range scenarios {
		out := t.TempDir()
		v := defaults(Kind{})
		v["masks"], v["fields"] = "truth", "fields"
		job := &pipeline.Job{Stage: "catalog", Kind: "catalog", Scenario: sc, Settings: v, Inputs: byScenario[sc],
			OutDir: out, Campaign: pipeline.CampaignInfo{Regions: regions}}
		if err := (Kind{}).Run(context.Background(), job); err != nil {
			t.Fatal(err)
		}
		evs := readCSV(t, filepath.Join(out, EventsFile))
		pts := readCSV(t, filepath.Join(out, PointsFile))
		track := map[string][]map[string]string{}
		for _, p := range pts {
			track[p["event_id"]] = append(track[p["event_id"]], p)
		}
		// Pairs (planted, catalog) scored by the number of common steps
		// with the centroid within the limit; matched one-to-one greedily
		// by that number (ties: catalog order).
		type pr struct{ ti, ci, n int }
		var prs []pr
		var planted []*world.Event
		for _, te := range sum.Events {
			if te.Scenario == sc {
				planted = append(planted, te)
			}
		}
		for ti, te := range planted {
			class, lim := "tropical_cyclone", matchKmTC
			if te.Class == world.ClassAR {
				class, lim = "atmospheric_river", matchKmAR
			}
			for ci, e := range evs {
				if e["class"] != class {
					continue
				}
				if n := closeSteps(te, track[e["event_id"]], lim); n > 0 {
					prs = append(prs, pr{ti, ci, n})
				}
			}
		}
		sort.SliceStable(prs, func(a, b int) bool { return prs[a].n > prs[b].n })
		tUsed, cUsed, near := map[int]bool{}, map[int]bool{}, map[int]bool{}
		for _, p := range prs {
			near[p.ci] = true
			if tUsed[p.ti] || cUsed[p.ci] {
				continue
			}
			tUsed[p.ti], cUsed[p.ci] = true, true
			matched++
		}
		for ti, te := range planted {
			if !tUsed[ti] {
				missed++
				t.Logf("planted %s (%s, %d steps) not found", te.ID, te.Class, len(te.Points))
			}
		}
		for ci, e := range evs {
			switch {
			case cUsed[ci]:
			case near[ci]:
				fragments++
			default:
				spurious++
				t.Logf("%s: catalog event %s (%s, %s..%s) near no planted event", sc, e["event_id"], e["class"], e["start"], e["end"])
			}
		}
	}
	t.Logf("world truth vs catalog: %d planted events matched, %d missed; %d extra catalog events near a matched one (fragments), %d spurious (planted %d)",
		matched, missed, fragments, spurious, len(sum.Events))
	if matched == 0 || float64(missed) > 0.1*float64(matched+missed) {
		t.Errorf("catalog from the truth masks finds %d of %d planted events; want at least 90%%", matched, matched+missed)
	}
}

func itoa(y int) string { return strconv.Itoa(y) }

// worldRegions reads the world's regions.geojson (Polygon or MultiPolygon
// features with a name property) as campaign regions.
func worldRegions(path string) ([]pipeline.Region, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var fc struct {
		Features []struct {
			Geometry struct {
				Type        string
				Coordinates json.RawMessage
			}
			Properties struct{ Name string }
		}
	}
	if err := json.Unmarshal(b, &fc); err != nil {
		return nil, err
	}
	var out []pipeline.Region
	for _, f := range fc.Features {
		r := pipeline.Region{Name: f.Properties.Name}
		switch f.Geometry.Type {
		case "Polygon":
			var p [][][2]float64
			if err := json.Unmarshal(f.Geometry.Coordinates, &p); err != nil {
				return nil, err
			}
			r.Polygons = [][][][2]float64{p}
		case "MultiPolygon":
			if err := json.Unmarshal(f.Geometry.Coordinates, &r.Polygons); err != nil {
				return nil, err
			}
		}
		out = append(out, r)
	}
	return out, nil
}

// closeSteps counts the time steps of the planted event at which the
// catalog event has a point within limKm.
func closeSteps(te *world.Event, pts []map[string]string, limKm int) int {
	n := 0
	for _, tp := range te.Points {
		iso := strings.Replace(tp.Date, " ", "T", 1) + ":00"
		for _, p := range pts {
			if p["time"] != iso {
				continue
			}
			if grid.Distance(parse(p["lat"]), parse(p["lon"]), tp.Lat, tp.Lon)/1000 <= float64(limKm) {
				n++
			}
		}
	}
	return n
}

func parse(s string) float64 {
	x, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return x
}
