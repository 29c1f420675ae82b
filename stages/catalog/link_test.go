package catalog

import (
	"testing"

	"github.com/squall-climate/squall/stages/grid"
)

// strip is a regional 1x8 grid... made of 2 rows because a grid needs two
// latitudes; only row 0 is used. Cells of a row have equal areas.
func strip(t *testing.T) *grid.Grid {
	t.Helper()
	g, err := grid.Regular(0, 1, 2, 0, 1, 8)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// label labels a mask given as a string of '.' and '#' on row 0.
func label(t *testing.T, g *grid.Grid, s string) *grid.Labelling {
	t.Helper()
	m := make([]bool, g.Len())
	for i, r := range s {
		m[i] = r == '#'
	}
	lab, err := g.Components(m)
	if err != nil {
		t.Fatal(err)
	}
	return lab
}

func TestLinkerSplitMerge(t *testing.T) {
	g := strip(t)
	l := NewLinker(g.CellAreas())
	steps := []struct {
		img  string
		want []int // event index per object, derived by hand from the rule in link.go
	}{
		{"####....", []int{0}},
		// Split: the left piece overlaps the storm on 2 cells, the right on
		// 1: the larger piece keeps event 0, the smaller starts event 1.
		{"##.#....", []int{0, 1}},
		// Merge: one object overlapping both; event 0 overlaps on 2 cells,
		// event 1 on 1 cell, so event 0 continues and event 1 ends.
		{"####....", []int{0}},
		// A new object far away is a new event.
		{"####..##", []int{0, 2}},
		{"........", nil},
		{"####....", []int{3}}, // an empty step in between ends event 0
	}
	for i, s := range steps {
		got, err := l.Step(i, label(t, g, s.img), 0)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) != len(s.want) {
			t.Fatalf("step %d: %d objects, want %d", i, len(got), len(s.want))
		}
		for k := range got {
			if got[k] != s.want[k] {
				t.Errorf("step %d object %d: event %d, want %d", i, k, got[k], s.want[k])
			}
		}
	}
	ev := l.Events()
	if len(ev) != 4 {
		t.Fatalf("%d events, want 4", len(ev))
	}
	if ev[1].SplitFrom != 1 || ev[1].MergedInto != 1 {
		t.Errorf("event 1: split from %d merged into %d, want 1 and 1 (event 0, one-based)", ev[1].SplitFrom, ev[1].MergedInto)
	}
	if ev[0].First != 0 || len(ev[0].Labels) != 4 || ev[1].First != 1 || len(ev[1].Labels) != 1 {
		t.Errorf("event spans wrong: %+v %+v", *ev[0], *ev[1])
	}
	if ev[0].MergedInto != 0 || ev[0].SplitFrom != 0 || ev[2].SplitFrom != 0 || ev[3].First != 5 {
		t.Errorf("unexpected relations: %+v %+v %+v", *ev[0], *ev[2], *ev[3])
	}
	// A gap ends everything: the same cells after Break are a new event.
	l.Break()
	got, _ := l.Step(7, label(t, g, "####...."), 0)
	if got[0] != 4 {
		t.Errorf("after a gap: event %d, want a new event 4", got[0])
	}
}

func TestLinkerRejectsWrongSize(t *testing.T) {
	g := strip(t)
	l := NewLinker([]float64{1, 1})
	if _, err := l.Step(0, label(t, g, "#"), 0); err == nil {
		t.Error("a label image of the wrong size must be an error")
	}
}

func TestLinkerByDistance(t *testing.T) {
	g := strip(t)
	// Cells are 1 degree apart on the equator: 111.2 km (derived:
	// 2 pi R / 360 with R = 6371.0088 km). Without overlap, a jump of 2
	// cells (222 km) links with maxKm 250, not with 200; an object that
	// overlaps something is never linked by distance.
	for _, c := range []struct {
		maxKm float64
		same  bool
	}{{250, true}, {200, false}, {0, false}} {
		l := NewLinker(g.CellAreas())
		l.Step(0, label(t, g, "#......."), c.maxKm)
		got, _ := l.Step(1, label(t, g, "..#....."), c.maxKm)
		if (got[0] == 0) != c.same {
			t.Errorf("maxKm %g: event %d, linked = %v, want %v", c.maxKm, got[0], got[0] == 0, c.same)
		}
	}
	l := NewLinker(g.CellAreas())
	l.Step(0, label(t, g, "##......"), 1000)
	got, _ := l.Step(1, label(t, g, ".#..#..."), 1000)
	if got[0] != 0 || got[1] != 1 {
		t.Errorf("overlap first, then no distance link for a split piece: %v", got)
	}
}
