package trends

import (
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/squall-climate/squall/pipeline"
)

// BenchmarkRun: 5 scenarios x 100 years x 20 regions (the size),
// 20 events a year (10 cyclones, 10 rivers, 8 track points each), default
// settings (2000 bootstrap resamples). Reports seconds per run and series
// analysed per second.
//
//	go test ./stages/trends -run '^$' -bench Run -benchtime 3x
func BenchmarkRun(b *testing.B) {
	root := b.TempDir()
	rng := rand.New(rand.NewPCG(7, 7))
	var regions []pipeline.Region
	for k := 0; k < 20; k++ {
		lon0 := -180 + 18*float64(k)
		regions = append(regions, pipeline.Region{Name: fmt.Sprintf("r%02d", k),
			Box: &pipeline.Box{LatMin: -40, LatMax: 40, LonMin: lon0, LonMax: lon0 + 30}})
	}
	campaign := pipeline.CampaignInfo{Name: "bench", Regions: regions}
	var inputs []pipeline.Input
	for s := 0; s < 5; s++ {
		name := fmt.Sprintf("s%d", s)
		var evs []fakeEvent
		for y := 2000; y < 2100; y++ {
			for k := 0; k < 20; k++ {
				e := fakeEvent{class: ClassTC, start: fmt.Sprintf("%04d-07-01T00:00:00", y), hours: 24 + 6*float64(rng.IntN(20)),
					wind: 20 + 30*rng.Float64(), ivt: 300 + 500*rng.Float64(), landfall: rng.IntN(3) == 0}
				if k%2 == 1 {
					e.class = ClassAR
				}
				lat, lon := -30+60*rng.Float64(), -180+360*rng.Float64()
				for p := 0; p < 8; p++ {
					e.track = append(e.track, [2]float64{lat + float64(p)*0.5, lon + float64(p)})
				}
				evs = append(evs, e)
			}
		}
		dir := filepath.Join(root, name)
		files := writeCatalogB(b, dir, name, evs)
		inputs = append(inputs, pipeline.Input{From: "catalog", Kind: "catalog", Scenario: name, Dir: dir, Files: files})
		campaign.Scenarios = append(campaign.Scenarios, pipeline.ScenarioInfo{Name: name, FirstYear: 2000, LastYear: 2099})
	}
	b.ResetTimer()
	var series int
	for i := 0; i < b.N; i++ {
		out := filepath.Join(root, fmt.Sprintf("out%d", i))
		os.MkdirAll(out, 0o755)
		job := &pipeline.Job{Settings: defaults(nil), OutDir: out, Campaign: campaign, Inputs: inputs}
		if err := (Kind{}).Run(context.Background(), job); err != nil {
			b.Fatal(err)
		}
		if i == 0 {
			o, err := ReadOutput(filepath.Join(out, JSONFile))
			if err != nil {
				b.Fatal(err)
			}
			series = len(o.Trends)
		}
	}
	sec := b.Elapsed().Seconds() / float64(b.N)
	b.ReportMetric(sec, "s/run")
	b.ReportMetric(float64(series)/sec, "series/s")
}

func writeCatalogB(b *testing.B, dir, scn string, evs []fakeEvent) []string {
	t := &testing.T{}
	files := writeCatalog(t, dir, scn, evs)
	if t.Failed() {
		b.Fatal("writing the bench catalog failed")
	}
	return files
}
