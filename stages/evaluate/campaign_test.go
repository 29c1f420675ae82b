package evaluate

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/catalog"
)

// fakeLabel stands in for the label kind: it declares nothing and writes a
// mask.nc per block.
type fakeLabel struct{}

func (fakeLabel) Name() string                 { return "fakelabel" }
func (fakeLabel) Version() int                 { return 1 }
func (fakeLabel) Doc() string                  { return "test stand-in for label" }
func (fakeLabel) Fan() pipeline.Fan            { return pipeline.FanBlock }
func (fakeLabel) Settings() []pipeline.Setting { return nil }
func (fakeLabel) Run(context.Context, *pipeline.Job) error {
	return nil
}

// TestCampaignLoads loads a campaign that uses both kinds through the
// strict loader, so their setting declarations (types, defaults, bounds,
// file patterns, the load-time check) are exercised as users meet them,
// and checks the fan-out: one evaluate instance for the campaign, one
// catalog instance per scenario, truth files found per scenario and block.
func TestCampaignLoads(t *testing.T) {
	dir := t.TempDir()
	for _, sc := range []string{"control", "warm"} {
		for _, y := range []string{"1990", "1991"} {
			for _, name := range []string{"fields_" + y + ".nc", "truth_" + y + ".nc"} {
				p := filepath.Join(dir, "world", sc, name)
				os.MkdirAll(filepath.Dir(p), 0o755)
				os.WriteFile(p, []byte("x"), 0o644)
			}
		}
	}
	yaml := `campaign: t
scenarios:
  control:
    files: world/control/fields_*.nc
    period: 1990-1991
  warm:
    files: world/warm/fields_*.nc
    period: 1990-1991
stages:
  label:
    kind: fakelabel
    inputs: [scenarios]
  score:
    kind: evaluate
    inputs: [label]
    settings:
      candidate: label
      reference_files: world/{scenario}/truth_{block}.nc
      event_iou_min: 0.1
  events:
    kind: catalog
    inputs: [label]
    settings:
      land_values: [1, 2, 3, 4]
      min_steps: 2
`
	path := filepath.Join(dir, "campaign.yaml")
	os.WriteFile(path, []byte(yaml), 0o644)
	reg := pipeline.NewRegistry(fakeLabel{}, Kind{}, catalog.Kind{})
	c, err := pipeline.Load(path, reg)
	if err != nil {
		t.Fatal(err)
	}
	insts, err := c.Expand()
	if err != nil {
		t.Fatal(err)
	}
	count := map[string]int{}
	for _, in := range insts {
		count[in.Stage.Name]++
		if in.Stage.Name == "score" {
			n := 0
			for _, f := range in.Files {
				if f.From == "reference_files" && len(f.Files) == 1 && strings.HasSuffix(f.Files[0], "truth_"+f.Block+".nc") {
					n++
				}
			}
			if n != 4 {
				t.Errorf("evaluate instance has %d truth file inputs, want 4 (2 scenarios x 2 blocks)", n)
			}
		}
	}
	if count["score"] != 1 || count["events"] != 2 || count["label"] != 4 {
		t.Errorf("instances %v, want score 1, events 2, label 4", count)
	}
	// The load-time check refuses an evaluate stage without a reference.
	bad := strings.Replace(yaml, "      reference_files: world/{scenario}/truth_{block}.nc\n", "", 1)
	os.WriteFile(path, []byte(bad), 0o644)
	if _, err := pipeline.Load(path, reg); err == nil || !strings.Contains(err.Error(), "reference") {
		t.Errorf("campaign without a reference: %v", err)
	}
}
