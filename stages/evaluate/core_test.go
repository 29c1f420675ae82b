package evaluate

import (
	"math"
	"testing"

	"github.com/squall-climate/squall/stages/catalog"
	"github.com/squall-climate/squall/stages/grid"
)

// paint sets class c on the rows and columns given (inclusive ranges).
func paint(g *grid.Grid, m []byte, c byte, i0, i1, j0, j1 int) {
	for i := i0; i <= i1; i++ {
		for j := j0; j <= j1; j++ {
			m[g.Index(i, j)] = c
		}
	}
}

// TestEventTableByHand scores three steps whose event table is derived by
// hand from the rules in MatchingRule and CorrectNegativesRule.
func TestEventTableByHand(t *testing.T) {
	g, err := grid.Regular(-10, 2, 11, 100, 2, 20) // regional: 10S-10N, 100-138E
	if err != nil {
		t.Fatal(err)
	}
	west := Region{Name: "west"}
	for i := 0; i < g.NLat(); i++ {
		for j := 0; j < 10; j++ {
			west.Cells = append(west.Cells, g.Index(i, j))
		}
	}
	ev := NewEvaluator(g, []Region{west})
	n := g.Len()
	months := []int{1, 1, 4} // DJF, DJF, MAM
	for s := 0; s < 3; s++ {
		ref, cand := make([]byte, n), make([]byte, n)
		// Reference cyclone A in the west at every step.
		paint(g, ref, catalog.TropicalCyclone, 4, 6, 2, 4)
		// Candidate finds A at steps 1 and 2 only (hit).
		if s >= 1 {
			paint(g, cand, catalog.TropicalCyclone, 4, 6, 3, 5)
		}
		// Candidate cyclone C in the east at step 0 (false alarm).
		if s == 0 {
			paint(g, cand, catalog.TropicalCyclone, 2, 3, 15, 16)
		}
		// Reference river B in the east at step 1, missed.
		if s == 1 {
			paint(g, ref, catalog.AtmosphericRiver, 8, 9, 12, 18)
		}
		tm := catalog.Time{Hours: float64(6 * s), Month: months[s], ISO: "t"}
		if err := ev.Step("", "ctl", tm, ref, cand); err != nil {
			t.Fatal(err)
		}
	}
	res := ev.Results(0)
	find := func(region, season, class string) Table {
		for _, r := range res.Events {
			if r.Scenario == "ctl" && r.Region == region && r.Season == season && r.Class == class {
				return r.Table
			}
		}
		t.Fatalf("no event row for %s %s %s", region, season, class)
		return Table{}
	}
	cases := []struct {
		region, season, class string
		want                  Table
	}{
		// TC: A hit (first step in DJF, touches west), C false alarm (DJF,
		// east only); TC present at every step: no quiet step.
		{All, All, "tropical_cyclone", Table{Hits: 1, FalseAlarms: 1}},
		{"west", All, "tropical_cyclone", Table{Hits: 1}},
		{All, "MAM", "tropical_cyclone", Table{}},
		// AR: B missed; quiet steps 0 and 2 (DJF one, MAM one); in the
		// west no AR ever: 3 quiet steps and no events.
		{All, All, "atmospheric_river", Table{Misses: 1, CorrectNegatives: 2}},
		{All, "DJF", "atmospheric_river", Table{Misses: 1, CorrectNegatives: 1}},
		{"west", All, "atmospheric_river", Table{CorrectNegatives: 3}},
		// West region TC quiet steps: none (A always there).
	}
	for _, c := range cases {
		if got := find(c.region, c.season, c.class); got != c.want {
			t.Errorf("%s/%s/%s: %+v, want %+v", c.region, c.season, c.class, got, c.want)
		}
	}
	// Pixel level, whole grid, counts: TC reference pixels 3 steps x 9 =
	// 27; candidate TC 2 x 9 + 4 = 22; overlap 2 steps x 6 = 12.
	for _, p := range res.Pixel {
		if p.Scenario == "ctl" && p.Region == All && p.Season == All && p.Weighting == "count" && p.Class == "tropical_cyclone" {
			if p.TP != 12 || p.FN != 15 || p.FP != 10 {
				t.Errorf("TC pixels TP %v FN %v FP %v, want 12 15 10", p.TP, p.FN, p.FP)
			}
			if float64(p.IoU) != 12.0/37 {
				t.Errorf("TC IoU %v, want 12/37", p.IoU)
			}
		}
	}
	// Maps: the cell (5, 3) is a hit at steps 1, 2 and a miss at step 0.
	s := ev.series[0]
	k := g.Index(5, 3)
	if s.hit[1][k] != 2 || s.miss[1][k] != 1 || s.fa[1][k] != 0 {
		t.Errorf("map counts at (5,3): hit %d miss %d fa %d", s.hit[1][k], s.miss[1][k], s.fa[1][k])
	}
}

// TestAreaWeighting checks that area weights follow the cells' areas: two
// single-pixel errors, one at the equator and one near the pole, count the
// same by pixel and in the ratio of their cell areas by area (derived from
// the CF cell-area formula: cos-latitude ratio for 1-degree rows).
func TestAreaWeighting(t *testing.T) {
	g, err := grid.Global(1, 1)
	if err != nil {
		t.Fatal(err)
	}
	ev := NewEvaluator(g, nil)
	ref, cand := make([]byte, g.Len()), make([]byte, g.Len())
	ie, _, _ := g.Locate(0.5, 0.5)
	ip, _, _ := g.Locate(80.5, 0.5)
	ref[g.Index(ie, 0)] = 1  // missed at the equator
	cand[g.Index(ip, 0)] = 1 // false alarm near the pole
	if err := ev.Step("", "s", catalog.Time{Month: 7}, ref, cand); err != nil {
		t.Fatal(err)
	}
	areas := g.RowAreas()
	res := ev.Results(0)
	for _, p := range res.Pixel {
		if p.Region != All || p.Season != All || p.Scenario != All || p.Class != "tropical_cyclone" {
			continue
		}
		switch p.Weighting {
		case "count":
			if p.FN != 1 || p.FP != 1 {
				t.Errorf("count: FN %v FP %v", p.FN, p.FP)
			}
		case "area":
			want := areas[ip] / areas[ie] // sin(81)-sin(80) over sin(1)-sin(0) (derived)
			if got := float64(p.FP) / float64(p.FN); math.Abs(got-want) > 1e-12 {
				t.Errorf("area: FP/FN %g, want %g", got, want)
			}
		}
	}
}
