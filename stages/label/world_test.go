package label

import (
	"context"
	"fmt"
	"path/filepath"
	"sort"
	"strconv"
	"testing"

	invented "github.com/squall-climate/squall/examples/world"
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/subset"
)

// worldChannels are the channels the label stage reads, as a campaign
// would declare them for the invented world's pressure-level files.
func worldChannels() []pipeline.Channel {
	return []pipeline.Channel{
		{Name: "psl", StandardName: QSLP, Units: "Pa"},
		{Name: "ws10", Derived: "wind_speed", Units: "m s-1"},
		{Name: "vo850", Derived: "relative_vorticity", LevelPa: 85000, Units: "s-1"},
		{Name: "ta850", StandardName: QTemp, LevelPa: 85000, Units: "K"},
		{Name: "ta700", StandardName: QTemp, LevelPa: 70000, Units: "K"},
		{Name: "ta500", StandardName: QTemp, LevelPa: 50000, Units: "K"},
		{Name: "ta300", StandardName: QTemp, LevelPa: 30000, Units: "K"},
		{Name: "ws850", Derived: "wind_speed", LevelPa: 85000, Units: "m s-1"},
		{Name: "ws300", Derived: "wind_speed", LevelPa: 30000, Units: "m s-1"},
		{Name: "ivt", Derived: "ivt", Units: "kg m-1 s-1"},
	}
}

// truthPoint is one row of the generator's truth_tracks.csv.
type truthPoint struct {
	id, class string
	year      int
	step      int
	lat, lon  float64
}

func readTruthTracks(t *testing.T, path string) []truthPoint {
	rows := readCSV(t, path)
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for _, need := range []string{"event_id", "class", "year", "step", "lat", "lon"} {
		if _, ok := col[need]; !ok {
			t.Fatalf("%s lacks column %q (header %v)", path, need, rows[0])
		}
	}
	var out []truthPoint
	for _, r := range rows[1:] {
		y, _ := strconv.Atoi(r[col["year"]])
		s, _ := strconv.Atoi(r[col["step"]])
		la, _ := strconv.ParseFloat(r[col["lat"]], 64)
		lo, _ := strconv.ParseFloat(r[col["lon"]], 64)
		out = append(out, truthPoint{id: r[col["event_id"]], class: r[col["class"]], year: y, step: s, lat: la, lon: lo})
	}
	return out
}

// Matching by track proximity: a planted cyclone and a detected track
// match when at some common time step their centres are within
// matchRadius (our choice: about two grid lengths of the 1.5 degree test
// world, well under the distance between planted storms).
const matchRadius = 400e3

// worldScores holds the figures of the end-to-end check.
type worldScores struct {
	truthTC, hitTC   int // planted cyclones, of which matched
	detTC, falseTC   int // detected tracks, of which unmatched
	arInter, arUnion float64
	arInterA         float64 // area-weighted
	arUnionA         float64
}

func (s worldScores) String() string {
	return fmt.Sprintf("TC: %d planted, %d detected, POD %.3f, FAR %.3f; AR pixel IoU %.3f (area-weighted %.3f)",
		s.truthTC, s.detTC, s.pod(), s.far(), s.arInter/s.arUnion, s.arInterA/s.arUnionA)
}
func (s *worldScores) add(o worldScores) {
	s.truthTC += o.truthTC
	s.hitTC += o.hitTC
	s.detTC += o.detTC
	s.falseTC += o.falseTC
	s.arInter += o.arInter
	s.arUnion += o.arUnion
	s.arInterA += o.arInterA
	s.arUnionA += o.arUnionA
}

func (s worldScores) pod() float64 { return float64(s.hitTC) / float64(s.truthTC) }
func (s worldScores) far() float64 {
	if s.detTC == 0 {
		return 0
	}
	return float64(s.falseTC) / float64(s.detTC)
}

// TestWorldEndToEnd generates a small invented world (examples/world),
// cuts fields with the subset kind, labels them with default settings,
// and scores the labels against the planted truth: cyclones by track
// proximity (POD >= 0.9, FAR <= 0.2) and rivers by pixel IoU (>= 0.6),
// the acceptance figures of the label issue.
func TestWorldEndToEnd(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end world test skipped in -short mode")
	}
	o, err := invented.Preset("tiny")
	if err != nil {
		t.Fatal(err)
	}
	// The tiny preset at 1.5 degrees (the demo resolution) and 10 days, so
	// that storms live longer than the 2-day lifetime rule; workers 1 to
	// share the machine.
	o.Dir = t.TempDir()
	o.Resolution = 1.5
	o.Days = 10
	o.Workers = 1
	if _, err := invented.Generate(context.Background(), o); err != nil {
		t.Fatal(err)
	}
	var sc worldScores
	for _, scen := range o.Scenarios {
		var per worldScores
		truth := readTruthTracks(t, filepath.Join(o.Dir, scen.Name, "truth_tracks.csv"))
		for _, year := range scen.Years() {
			raw := filepath.Join(o.Dir, scen.Name, fmt.Sprintf("fields_%d.nc", year))
			block := strconv.Itoa(year)
			sub := t.TempDir()
			sv := pipeline.Values{}
			for _, s := range (subset.Kind{}).Settings() {
				sv[s.Name] = s.Default
			}
			sv["workers"] = 1
			job := &pipeline.Job{Stage: "fields", Kind: "subset", Scenario: scen.Name, Block: block, Settings: sv, OutDir: sub,
				Inputs:   []pipeline.Input{{From: scen.Name, Kind: "scenario", Scenario: scen.Name, Block: block, Files: []string{raw}}},
				Campaign: pipeline.CampaignInfo{Name: "world", Channels: worldChannels()}}
			if err := (subset.Kind{}).Run(context.Background(), job); err != nil {
				t.Fatal(err)
			}
			out, err := runLabel(t, filepath.Join(sub, subset.FieldsFile), nil)
			if err != nil {
				t.Fatal(err)
			}
			scoreYear(t, &per, out, filepath.Join(o.Dir, scen.Name, fmt.Sprintf("truth_%d.nc", year)), truth, year)
		}
		t.Logf("scenario %s: %s", scen.Name, per)
		sc.add(per)
	}
	t.Logf("world (tiny preset at 1.5 deg, 10 days, %d scenario-years): %s", 4, sc)
	if sc.truthTC == 0 {
		t.Fatal("the world planted no cyclone reaching the truth")
	}
	if sc.pod() < 0.9 {
		t.Errorf("TC POD %.3f < 0.9", sc.pod())
	}
	if sc.far() > 0.2 {
		t.Errorf("TC FAR %.3f > 0.2", sc.far())
	}
	if iou := sc.arInter / sc.arUnion; !(iou >= 0.6) {
		t.Errorf("AR pixel IoU %.3f < 0.6", iou)
	}
}

func scoreYear(t *testing.T, sc *worldScores, out, truthMask string, truth []truthPoint, year int) {
	t.Helper()
	// Cyclones: planted events of this year against kept tracks.
	planted := map[string][]truthPoint{}
	for _, p := range truth {
		if p.year == year && p.class == ClassTC {
			planted[p.id] = append(planted[p.id], p)
		}
	}
	rows := readCSV(t, filepath.Join(out, TracksFile))
	det := map[string][]truthPoint{}
	for _, r := range rows[1:] {
		s, _ := strconv.Atoi(r[2])
		la, _ := strconv.ParseFloat(r[4], 64)
		lo, _ := strconv.ParseFloat(r[5], 64)
		det[r[0]] = append(det[r[0]], truthPoint{id: r[0], step: s, lat: la, lon: lo})
	}
	match := func(a, b []truthPoint) bool {
		for _, p := range a {
			for _, q := range b {
				if p.step == q.step && grid.Distance(p.lat, p.lon, q.lat, q.lon) <= matchRadius {
					return true
				}
			}
		}
		return false
	}
	ids := make([]string, 0, len(planted))
	for id := range planted {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	for _, id := range ids {
		sc.truthTC++
		hit := false
		for _, d := range det {
			hit = hit || match(planted[id], d)
		}
		if hit {
			sc.hitTC++
		} else {
			t.Logf("%d: planted cyclone %s (%d points from step %d at %.1fN %.1fE) not detected", year, id, len(planted[id]), planted[id][0].step, planted[id][0].lat, planted[id][0].lon)
		}
	}
	for id, d := range det {
		sc.detTC++
		hit := false
		for _, p := range planted {
			hit = hit || match(p, d)
		}
		if !hit {
			sc.falseTC++
			t.Logf("%d: detected track %s (%d points from step %d at %.1fN %.1fE) matches no planted cyclone", year, id, len(d), d[0].step, d[0].lat, d[0].lon)
		}
	}
	// Rivers: pixel IoU of class 2 over every step.
	g, pred := readMask(t, filepath.Join(out, MaskFile))
	tg, tru := readMask(t, truthMask)
	if err := g.SameAs(tg); err != nil {
		t.Fatalf("label and truth grids differ: %v", err)
	}
	if len(pred) != len(tru) {
		t.Fatalf("label has %d steps, truth %d", len(pred), len(tru))
	}
	areas := g.CellAreas()
	for s := range pred {
		for k := range pred[s] {
			a, b := pred[s][k] == AtmosphericRiver, tru[s][k] == AtmosphericRiver
			if a && b {
				sc.arInter++
				sc.arInterA += areas[k]
			}
			if a || b {
				sc.arUnion++
				sc.arUnionA += areas[k]
			}
		}
	}
}
