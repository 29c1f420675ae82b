package report

import (
	"fmt"
	"html/template"
	"image/color"
	"math"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// stageSummary is one stage with the tally of its instances.
type stageSummary struct {
	Stage
	Counts  map[string]int
	Total   int
	Seconds float64
	depth   int
	row     int
}

// summariseStages tallies instances per stage, keeping the stages' order.
func summariseStages(in *Input) []*stageSummary {
	byName := map[string]*stageSummary{}
	var out []*stageSummary
	for _, s := range in.Stages {
		ss := &stageSummary{Stage: s, Counts: map[string]int{}}
		byName[s.Name] = ss
		out = append(out, ss)
	}
	for _, x := range in.Instances {
		ss := byName[x.Stage]
		if ss == nil {
			ss = &stageSummary{Stage: Stage{Name: x.Stage}, Counts: map[string]int{}}
			byName[x.Stage] = ss
			out = append(out, ss)
		}
		ss.Counts[x.State]++
		ss.Total++
		ss.Seconds += x.Seconds
	}
	// Depth: the longest path from a source (inputs that are not stages,
	// such as scenarios, are sources). Cycles cannot reach here (the
	// pipeline refuses them), but a bad Input must not hang the report.
	var depth func(s *stageSummary, seen map[string]bool) int
	memo := map[string]int{}
	depth = func(s *stageSummary, seen map[string]bool) int {
		if d, ok := memo[s.Name]; ok {
			return d
		}
		if seen[s.Name] {
			return 0
		}
		seen[s.Name] = true
		d := 0
		for _, in := range s.Inputs {
			if up := byName[in]; up != nil {
				d = max(d, depth(up, seen)+1)
			}
		}
		delete(seen, s.Name)
		memo[s.Name] = d
		return d
	}
	rows := map[int]int{}
	for _, s := range out {
		s.depth = depth(s, map[string]bool{})
		s.row = rows[s.depth]
		rows[s.depth]++
	}
	return out
}

// graphPlotter draws the stage graph: one box per stage, in columns by
// depth, arrows from inputs, and a bar of instance states in each box.
type graphPlotter struct {
	stages []*stageSummary
	maxCol int
	maxRow int
}

// graphMargin is the room above the top row and below the bottom one, in
// rows: half a row for the boxes, and a quarter more so that an edge
// running along the outermost row gutters is not at the picture's edge.
const graphMargin = 0.75

func (g *graphPlotter) DataRange() (xmin, xmax, ymin, ymax float64) {
	return -0.5, float64(g.maxCol) + 0.5, -graphMargin, float64(g.maxRow) + graphMargin
}

const (
	boxW = 150
	boxH = 54
)

func (g *graphPlotter) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pos := map[string]vg.Point{}
	for _, s := range g.stages {
		// Rows from the top.
		pos[s.Name] = vg.Point{X: tx(float64(s.depth)), Y: ty(float64(g.maxRow - s.row))}
	}
	colPitch := tx(1) - tx(0)
	rowPitch := ty(1) - ty(0)
	// Edges first, under the boxes.
	edge := draw.LineStyle{Color: colMuted, Width: 0.8}
	for _, s := range g.stages {
		to := pos[s.Name]
		for _, in := range s.Inputs {
			from, ok := pos[in]
			if !ok {
				continue
			}
			c.SetLineStyle(edge)
			c.Stroke(edgePath(from, to, colPitch, rowPitch))
			b := vg.Point{X: to.X - boxW/2 - 1, Y: to.Y}
			var head vg.Path
			head.Move(b)
			head.Line(vg.Point{X: b.X - 6, Y: b.Y + 3})
			head.Line(vg.Point{X: b.X - 6, Y: b.Y - 3})
			head.Close()
			c.SetColor(colMuted)
			c.Fill(head)
		}
	}
	title := textStyle(9.5, colInk)
	small := textStyle(7.5, colMuted)
	for _, s := range g.stages {
		ctr := pos[s.Name]
		r := vg.Rectangle{Min: vg.Point{X: ctr.X - boxW/2, Y: ctr.Y - boxH/2}, Max: vg.Point{X: ctr.X + boxW/2, Y: ctr.Y + boxH/2}}
		box := roundedRect(r, 5)
		c.SetColor(color.White)
		c.Fill(box)
		c.SetLineStyle(draw.LineStyle{Color: colAccent, Width: 0.9})
		c.Stroke(box)
		c.FillText(title, vg.Point{X: r.Min.X + 8, Y: r.Max.Y - 14}, clip(s.Name, 24))
		kind := s.Kind
		if s.Fan != "" {
			kind += " · " + s.Fan
		}
		c.FillText(small, vg.Point{X: r.Min.X + 8, Y: r.Max.Y - 25}, clip(kind, 34))
		c.FillText(small, vg.Point{X: r.Min.X + 8, Y: r.Max.Y - 36}, clip(tally(s), 34))
		// State bar: segment widths proportional to instance counts.
		if s.Total > 0 {
			x := r.Min.X + 8
			wAll := vg.Length(boxW - 16)
			for _, st := range stateOrder {
				n := s.Counts[st]
				if n == 0 {
					continue
				}
				w := wAll * vg.Length(n) / vg.Length(s.Total)
				seg := vg.Rectangle{Min: vg.Point{X: x, Y: r.Min.Y + 6}, Max: vg.Point{X: x + w, Y: r.Min.Y + 10}}
				c.SetColor(stateColors[st])
				c.Fill(seg.Path())
				x += w
			}
		}
	}
}

// edgePath runs an edge from the right side of the box centred at from
// to the left side of the box centred at to, only through the gutters
// between columns and rows, so that it never passes under a box (where it
// would vanish and seem to start from whatever box it re-emerges at).
// Between neighbouring columns it is one S-curve in the gutter; across
// more columns it drops, in the gutter after the source, to the row gutter
// on the source's side of the target, runs along it, and rises into the
// target in the gutter before it.
func edgePath(from, to vg.Point, colPitch, rowPitch vg.Length) vg.Path {
	a := vg.Point{X: from.X + boxW/2, Y: from.Y}
	b := vg.Point{X: to.X - boxW/2 - 1, Y: to.Y}
	var path vg.Path
	path.Move(a)
	scurve := func(p, q vg.Point) {
		mid := (p.X + q.X) / 2
		path.CubeTo(vg.Point{X: mid, Y: p.Y}, vg.Point{X: mid, Y: q.Y}, q)
	}
	gap := colPitch - boxW // width of a column gutter
	if to.X-from.X <= colPitch*1.5 || gap <= 0 {
		scurve(a, b)
		return path
	}
	lane := to.Y + rowPitch/2 // the row gutter above the target
	if from.Y < to.Y {
		lane = to.Y - rowPitch/2 // below it, when the source is lower
	}
	l1 := vg.Point{X: a.X + gap, Y: lane}
	l2 := vg.Point{X: to.X - boxW/2 - gap, Y: lane}
	scurve(a, l1)
	path.Line(l2)
	scurve(l2, b)
	return path
}

func tally(s *stageSummary) string {
	if s.Total == 0 {
		return "no instances"
	}
	out := ""
	for _, st := range stateOrder {
		if n := s.Counts[st]; n > 0 {
			if out != "" {
				out += ", "
			}
			out += fmt.Sprintf("%d %s", n, st)
		}
	}
	return out + fmt.Sprintf(" · %s", seconds(s.Seconds))
}

func clip(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

func roundedRect(r vg.Rectangle, rad vg.Length) vg.Path {
	var p vg.Path
	p.Move(vg.Point{X: r.Min.X + rad, Y: r.Min.Y})
	p.Line(vg.Point{X: r.Max.X - rad, Y: r.Min.Y})
	p.Arc(vg.Point{X: r.Max.X - rad, Y: r.Min.Y + rad}, rad, -math.Pi/2, math.Pi/2)
	p.Line(vg.Point{X: r.Max.X, Y: r.Max.Y - rad})
	p.Arc(vg.Point{X: r.Max.X - rad, Y: r.Max.Y - rad}, rad, 0, math.Pi/2)
	p.Line(vg.Point{X: r.Min.X + rad, Y: r.Max.Y})
	p.Arc(vg.Point{X: r.Min.X + rad, Y: r.Max.Y - rad}, rad, math.Pi/2, math.Pi/2)
	p.Line(vg.Point{X: r.Min.X, Y: r.Min.Y + rad})
	p.Arc(vg.Point{X: r.Min.X + rad, Y: r.Min.Y + rad}, rad, math.Pi, math.Pi/2)
	p.Close()
	return p
}

// graphSVG draws the stage graph, or returns "" when there are no stages.
func graphSVG(stages []*stageSummary) (template.HTML, error) {
	if len(stages) == 0 {
		return "", nil
	}
	g := &graphPlotter{stages: stages}
	for _, s := range stages {
		g.maxCol = max(g.maxCol, s.depth)
		g.maxRow = max(g.maxRow, s.row)
	}
	p := plot.New()
	p.BackgroundColor = nil
	p.HideAxes()
	p.Add(g)
	w := vg.Length(g.maxCol+1) * (boxW + 46)
	h := vg.Length(float64(g.maxRow)+2*graphMargin) * (boxH + 18)
	return plotSVG(p, w, h, "stage graph with instance states")
}

// sortedStates lists the states present, in the fixed legend order.
func sortedStates(counts map[string]int) []string {
	var out []string
	for _, s := range stateOrder {
		if counts[s] > 0 {
			out = append(out, s)
		}
	}
	var extra []string
	for s := range counts {
		if _, known := stateColors[s]; !known {
			extra = append(extra, s)
		}
	}
	sort.Strings(extra)
	return append(out, extra...)
}

func seconds(s float64) string {
	switch {
	case s < 1:
		return fmt.Sprintf("%.2f s", s)
	case s < 120:
		return fmt.Sprintf("%.1f s", s)
	case s < 7200:
		return fmt.Sprintf("%.1f min", s/60)
	}
	return fmt.Sprintf("%.1f h", s/3600)
}
