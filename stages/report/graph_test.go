package report

import (
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// svgPathPoints returns points along an SVG path made of M, L, C, A and Z
// commands as vgsvg writes them (absolute, comma separated): the
// vertices, and cubic curves sampled at steps of 1/32.
func svgPathPoints(t *testing.T, d string) [][2]float64 {
	t.Helper()
	num := regexp.MustCompile(`-?[0-9.]+(e-?[0-9]+)?`)
	cmd := regexp.MustCompile(`[MLCAZ][^MLCAZ]*`)
	var pts [][2]float64
	var cur [2]float64
	for _, c := range cmd.FindAllString(d, -1) {
		var v []float64
		for _, s := range num.FindAllString(c[1:], -1) {
			x, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("path %q: %v", d, err)
			}
			v = append(v, x)
		}
		switch c[0] {
		case 'M', 'L':
			cur = [2]float64{v[0], v[1]}
			pts = append(pts, cur)
		case 'A': // rx,ry rotation large sweep x,y: keep the end point
			cur = [2]float64{v[5], v[6]}
			pts = append(pts, cur)
		case 'C':
			p0, p1, p2, p3 := cur, [2]float64{v[0], v[1]}, [2]float64{v[2], v[3]}, [2]float64{v[4], v[5]}
			for k := 1; k <= 32; k++ {
				s := float64(k) / 32
				u := 1 - s
				var p [2]float64
				for i := range p {
					p[i] = u*u*u*p0[i] + 3*u*u*s*p1[i] + 3*u*s*s*p2[i] + s*s*s*p3[i]
				}
				pts = append(pts, p)
			}
			cur = p3
		}
	}
	return pts
}

// Every edge of the stage graph must stay outside every box: an edge that
// runs under a box disappears there and seems to start from the box it
// re-emerges at. The campaign below has edges that skip a column (the
// source feeds stages two columns on) and that change rows on the way.
func TestGraphEdgesAvoidBoxes(t *testing.T) {
	in := &Input{Stages: []Stage{
		{Name: "cut", Kind: "subset", Inputs: []string{"control"}},
		{Name: "stats", Kind: "fit-stats", Inputs: []string{"cut"}},
		{Name: "labels", Kind: "label", Inputs: []string{"cut"}},
		{Name: "sweep", Kind: "label", Inputs: []string{"cut"}},
		{Name: "normalized", Kind: "normalize", Inputs: []string{"cut", "stats"}},
		{Name: "events", Kind: "catalog", Inputs: []string{"labels", "cut"}},
		{Name: "scores", Kind: "evaluate", Inputs: []string{"sweep"}},
		{Name: "shards", Kind: "shard", Inputs: []string{"normalized", "labels"}},
		{Name: "jobs", Kind: "batch-scripts", Inputs: []string{"shards", "stats", "normalized"}},
	}}
	svg, err := graphSVG(summariseStages(in))
	if err != nil {
		t.Fatal(err)
	}
	pathRe := regexp.MustCompile(`<path d="([^"]*)" style="([^"]*)"`)
	type rect struct{ x0, y0, x1, y1 float64 }
	var boxes []rect
	var edges [][][2]float64
	for _, m := range pathRe.FindAllStringSubmatch(string(svg), -1) {
		switch {
		case m[2] == "fill:#FFFFFF": // a stage box
			r := rect{math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)}
			for _, p := range svgPathPoints(t, m[1]) {
				r.x0, r.y0 = math.Min(r.x0, p[0]), math.Min(r.y0, p[1])
				r.x1, r.y1 = math.Max(r.x1, p[0]), math.Max(r.y1, p[1])
			}
			boxes = append(boxes, r)
		case strings.HasPrefix(m[2], "fill:none;stroke:"+strings.ToUpper(hexColor(colMuted))): // an edge
			edges = append(edges, svgPathPoints(t, m[1]))
		}
	}
	// Derived from the inputs above: 9 boxes, 13 edges.
	if len(boxes) != 9 || len(edges) != 13 {
		t.Fatalf("found %d boxes and %d edges, want 9 and 13", len(boxes), len(edges))
	}
	const inset = 0.5 // points; an edge may end on a box's side
edges:
	for i, e := range edges {
		for _, p := range e {
			for _, b := range boxes {
				if p[0] > b.x0+inset && p[0] < b.x1-inset && p[1] > b.y0+inset && p[1] < b.y1-inset {
					t.Errorf("edge %d passes under the box [%.0f..%.0f]x[%.0f..%.0f] at (%.1f, %.1f)", i, b.x0, b.x1, b.y0, b.y1, p[0], p[1])
					continue edges
				}
			}
		}
	}
}
