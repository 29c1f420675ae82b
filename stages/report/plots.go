package report

import (
	"bytes"
	"fmt"
	"html/template"
	"image"
	"image/color"
	"math"
	"regexp"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Colours of the page and its plots (our own scheme).
var (
	colInk    = rgb(0x1d, 0x2b, 0x36)
	colMuted  = rgb(0x5b, 0x6b, 0x78)
	colGrid   = rgb(0xe3, 0xe8, 0xec)
	colAccent = rgb(0x1f, 0x6f, 0x78)
	// Scenario colours, in campaign order; chosen to stay apart for
	// common colour-vision deficiencies (blue, orange, teal, purple, red,
	// olive, grey).
	scenarioColors = []color.RGBA{
		rgb(0x2c, 0x5d, 0x9e), rgb(0xd9, 0x7b, 0x29), rgb(0x2a, 0x9d, 0x8f), rgb(0x7b, 0x4f, 0xa6),
		rgb(0xc2, 0x3b, 0x3b), rgb(0x8a, 0x8f, 0x2e), rgb(0x6b, 0x72, 0x7a),
	}
	stateColors = map[string]color.RGBA{
		StateRan:     rgb(0x2f, 0x85, 0x5a),
		StateReused:  rgb(0x3a, 0x7c, 0xc0),
		StateFailed:  rgb(0xc5, 0x30, 0x30),
		StateBlocked: rgb(0xd6, 0x9e, 0x2e),
		StateNotRun:  rgb(0xa0, 0xae, 0xbb),
	}
	stateOrder = []string{StateRan, StateReused, StateFailed, StateBlocked, StateNotRun}
	// Ramps for maps: a sequential teal ramp from near-white, and a
	// diverging blue - light grey - brick ramp for differences.
	seqRamp = []color.RGBA{rgb(0xf7, 0xfb, 0xfb), rgb(0xc9, 0xe7, 0xe4), rgb(0x7c, 0xc4, 0xc0), rgb(0x2f, 0x8c, 0x8c), rgb(0x1a, 0x4e, 0x5c), rgb(0x10, 0x2a, 0x38)}
	divRamp = []color.RGBA{rgb(0x1f, 0x4e, 0x8c), rgb(0x6f, 0x9c, 0xcf), rgb(0xf4, 0xf4, 0xf2), rgb(0xe0, 0x8a, 0x6a), rgb(0x9e, 0x2f, 0x1f)}
)

func rgb(r, g, b uint8) color.RGBA { return color.RGBA{r, g, b, 255} }

func scenarioColor(i int) color.RGBA { return scenarioColors[i%len(scenarioColors)] }

func withAlpha(c color.RGBA, a float64) color.NRGBA {
	return color.NRGBA{c.R, c.G, c.B, uint8(math.Round(255 * a))}
}

// sans is Liberation Sans (shipped with gonum/plot, metric-compatible with
// Arial), so the text measured while laying out matches what the page's
// font stack shows.
var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

// textStyle is a left- and bottom-aligned style for free text.
func textStyle(size vg.Length, c color.Color) text.Style {
	return text.Style{Color: c, Font: font.From(sans, size), Handler: plot.DefaultTextHandler}
}

// restyle changes the font and colour of a plot's text style, keeping the
// alignment gonum/plot gave it (titles centred on top, tick labels
// centred under their tick, and so on).
func restyle(s *text.Style, size vg.Length, c color.Color) {
	s.Font = font.From(sans, size)
	s.Color = c
}

// newPlot makes a plot in the page's style.
func newPlot(title, xlabel, ylabel string) *plot.Plot {
	p, _ := newPlotGrid(title, xlabel, ylabel)
	return p
}

// newPlotGrid is newPlot that also returns the plot's grid, for charts
// that drop the grid lines of a category axis.
func newPlotGrid(title, xlabel, ylabel string) (*plot.Plot, *plotter.Grid) {
	p := plot.New()
	p.BackgroundColor = nil // transparent: the figure frame is the page's
	p.Title.Text = title
	restyle(&p.Title.TextStyle, 12, colInk)
	p.Title.Padding = 8
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		restyle(&ax.Label.TextStyle, 10.5, colMuted)
		restyle(&ax.Tick.Label, 9.5, colMuted)
		ax.LineStyle.Color = colMuted
		ax.LineStyle.Width = 0.5
		ax.Tick.LineStyle.Color = colMuted
		ax.Tick.LineStyle.Width = 0.5
		ax.Padding = 2
	}
	p.X.Tick.Marker = niceTicks{}
	p.Y.Tick.Marker = niceTicks{}
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	restyle(&p.Legend.TextStyle, 9.5, colInk)
	// Without padding the entries' ascenders and descenders touch.
	p.Legend.Padding = 2
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.ThumbnailWidth = 14
	g := plotter.NewGrid()
	g.Vertical.Color = colGrid
	g.Horizontal.Color = colGrid
	g.Vertical.Width = 0.5
	g.Horizontal.Width = 0.5
	p.Add(g)
	return p, g
}

// svg renders a drawing function into inline SVG markup fit for an HTML
// page: no XML prolog, no namespace declarations (HTML parsers put <svg>
// in the SVG namespace themselves), a viewBox so CSS can scale it, and an
// accessible label.
func svg(w, h vg.Length, label string, drawFn func(c draw.Canvas)) (template.HTML, error) {
	c := vgsvg.New(w, h)
	dc := draw.New(c)
	var err error
	func() {
		defer func() {
			if r := recover(); r != nil {
				err = fmt.Errorf("plot %q: %v", label, r)
			}
		}()
		drawFn(dc)
	}()
	if err != nil {
		return "", err
	}
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return "", err
	}
	return cleanSVG(b.String(), label), nil
}

var (
	svgOpenRe = regexp.MustCompile(`(?s)<svg [^>]*>`)
	viewBoxRe = regexp.MustCompile(`viewBox="[^"]*"`)
)

func cleanSVG(s, label string) template.HTML {
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	open := svgOpenRe.FindString(s)
	vb := viewBoxRe.FindString(open)
	s = strings.Replace(s, open, fmt.Sprintf(`<svg class="plot" %s role="img" aria-label="%s">`, vb, template.HTMLEscapeString(label)), 1)
	// vgsvg labels embedded PNG images as image/jpg; say what they are.
	s = strings.ReplaceAll(s, "data:image/jpg;base64,", "data:image/png;base64,")
	return template.HTML(s)
}

// plotSVG renders a plot.
func plotSVG(p *plot.Plot, w, h vg.Length, label string) (template.HTML, error) {
	return svg(w, h, label, func(c draw.Canvas) { p.Draw(c) })
}

// ramp is a colour map interpolating linearly between anchor colours; it
// implements palette.ColorMap for the colour bar.
type ramp struct {
	anchors  []color.RGBA
	min, max float64
	alpha    float64
}

var _ palette.ColorMap = (*ramp)(nil)

func newRamp(anchors []color.RGBA, min, max float64) *ramp {
	if !(max > min) {
		max = min + 1
	}
	return &ramp{anchors: anchors, min: min, max: max, alpha: 1}
}

func (r *ramp) color(v float64) color.RGBA {
	if math.IsNaN(v) {
		return rgb(0xd5, 0xd9, 0xdd)
	}
	f := (v - r.min) / (r.max - r.min)
	f = math.Max(0, math.Min(1, f))
	x := f * float64(len(r.anchors)-1)
	i := int(math.Floor(x))
	if i >= len(r.anchors)-1 {
		return r.anchors[len(r.anchors)-1]
	}
	t := x - float64(i)
	a, b := r.anchors[i], r.anchors[i+1]
	mix := func(p, q uint8) uint8 { return uint8(math.Round(float64(p) + t*(float64(q)-float64(p)))) }
	return color.RGBA{mix(a.R, b.R), mix(a.G, b.G), mix(a.B, b.B), 255}
}

func (r *ramp) At(v float64) (color.Color, error) { return r.color(v), nil }
func (r *ramp) Max() float64                      { return r.max }
func (r *ramp) SetMax(v float64)                  { r.max = v }
func (r *ramp) Min() float64                      { return r.min }
func (r *ramp) SetMin(v float64)                  { r.min = v }
func (r *ramp) Alpha() float64                    { return r.alpha }
func (r *ramp) SetAlpha(a float64)                { r.alpha = a }
func (r *ramp) Palette(n int) palette.Palette {
	cs := make([]color.Color, n)
	for i := range cs {
		v := r.min
		if n > 1 {
			v += (r.max - r.min) * float64(i) / float64(n-1)
		}
		cs[i] = r.color(v)
	}
	return colors(cs)
}

type colors []color.Color

func (c colors) Colors() []color.Color { return c }

// gridMap is a field on a regular latitude-longitude grid, ready to draw.
type gridMap struct {
	title    string
	lat, lon []float64 // cell centres as stored
	values   []float64 // (lat, lon) order
	cmap     *ramp
	units    string
	// view limits in degrees (lon may exceed 180 or 360 to stay
	// contiguous); zero values mean the whole grid.
	lonMin, lonMax, latMin, latMax float64
}

// gridEdges returns the outer edges of the grid's cells in degrees, with
// longitudes made contiguous (a grid crossing the antimeridian continues
// past 180).
func gridEdges(lat, lon []float64) (latMin, latMax, lonMin, lonMax, dlat, dlon float64) {
	ny, nx := len(lat), len(lon)
	dlat, dlon = 1.0, 1.0
	if ny > 1 {
		dlat = math.Abs(lat[ny-1]-lat[0]) / float64(ny-1)
	}
	if nx > 1 {
		span := lon[nx-1] - lon[0]
		if span <= 0 {
			span += 360
		}
		dlon = span / float64(nx-1)
	}
	latMin = math.Min(lat[0], lat[ny-1]) - dlat/2
	latMax = math.Max(lat[0], lat[ny-1]) + dlat/2
	lonMin = lon[0] - dlon/2
	lonMax = lonMin + dlon*float64(nx)
	return
}

// mapSVG draws the field as an image (one pixel per cell, north up) with
// a horizontal colour bar beneath.
func mapSVG(m gridMap) (template.HTML, error) {
	ny, nx := len(m.lat), len(m.lon)
	latMin, _, lonMin, _, dlat, dlon := gridEdges(m.lat, m.lon)
	// The cells in view, snapped to whole cells (gonum/plot does not clip
	// images to the data area, so the image itself is cut to the view).
	j0, j1, r0, r1 := 0, nx, 0, ny // columns west..east, rows south..north
	if m.lonMax > m.lonMin && m.latMax > m.latMin {
		j0 = max(0, int(math.Floor((m.lonMin-lonMin)/dlon+1e-9)))
		j1 = min(nx, int(math.Ceil((m.lonMax-lonMin)/dlon-1e-9)))
		r0 = max(0, int(math.Floor((m.latMin-latMin)/dlat+1e-9)))
		r1 = min(ny, int(math.Ceil((m.latMax-latMin)/dlat-1e-9)))
		if j1 <= j0 || r1 <= r0 {
			j0, j1, r0, r1 = 0, nx, 0, ny
		}
	}
	northFirst := ny > 1 && m.lat[0] > m.lat[ny-1]
	img := image.NewRGBA(image.Rect(0, 0, j1-j0, r1-r0))
	for r := r0; r < r1; r++ { // r counts rows from the south
		i := r
		if northFirst {
			i = ny - 1 - r
		}
		for j := j0; j < j1; j++ {
			img.SetRGBA(j-j0, r1-1-r, m.cmap.color(m.values[i*nx+j]))
		}
	}
	vLonMin, vLonMax := lonMin+dlon*float64(j0), lonMin+dlon*float64(j1)
	vLatMin, vLatMax := latMin+dlat*float64(r0), latMin+dlat*float64(r1)
	p := newPlot(m.title, "longitude (degrees east)", "latitude (degrees north)")
	restyle(&p.Title.TextStyle, 10.5, colInk)
	p.Add(plotter.NewImage(img, vLonMin, vLatMin, vLonMax, vLatMax))
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = vLonMin, vLonMax, vLatMin, vLatMax
	// The grid lines go on top of the image.
	g := plotter.NewGrid()
	g.Vertical.Color = withAlpha(colMuted, 0.25)
	g.Horizontal.Color = withAlpha(colMuted, 0.25)
	g.Vertical.Width, g.Horizontal.Width = 0.4, 0.4
	p.Add(g)
	cb := &plotter.ColorBar{ColorMap: m.cmap, Colors: 64}
	cp := plot.New()
	cp.BackgroundColor = nil
	cp.Add(cb)
	cp.HideY()
	cp.X.Label.Text = m.units
	restyle(&cp.X.Label.TextStyle, 9.5, colMuted)
	restyle(&cp.X.Tick.Label, 9, colMuted)
	cp.X.LineStyle.Width = 0
	cp.X.Tick.LineStyle.Color = colMuted
	cp.X.Tick.Marker = niceTicks{}
	// Keep degrees square: the data area is sized from the view's extent.
	wDeg, hDeg := p.X.Max-p.X.Min, p.Y.Max-p.Y.Min
	const w = 460
	dataW := vg.Length(w - 70)
	dataH := dataW * vg.Length(hDeg/wDeg)
	dataH = vg.Length(math.Max(120, math.Min(float64(dataH), 320)))
	h := dataH + 60 + 58
	return svg(w, h, m.title, func(c draw.Canvas) {
		top := draw.Crop(c, 0, 0, 58, 0)
		bottom := draw.Crop(c, 60, -40, 0, -(h - 56))
		p.Draw(top)
		cp.Draw(bottom)
	})
}

// niceTicks are gonum/plot's default tick positions with labels written
// to the precision of the tick spacing, in the shortest form: "0.3" and
// "0.6", not the binary residue "0.30000000000000004" that the positions
// carry, nor "7.50" for 7.5. Very large or very small magnitudes use
// exponent notation with as many significant digits as the spacing
// needs.
type niceTicks struct{}

var _ plot.Ticker = niceTicks{}

func (niceTicks) Ticks(min, max float64) []plot.Tick {
	ts := plot.DefaultTicks{}.Ticks(min, max)
	var major []float64
	for _, t := range ts {
		if t.Label != "" {
			major = append(major, t.Value)
		}
	}
	step := tickStep(major)
	mag := 0.0
	for _, v := range major {
		mag = math.Max(mag, math.Abs(v))
	}
	for i := range ts {
		if ts[i].Label != "" {
			ts[i].Label = tickLabel(ts[i].Value, step, mag)
		}
	}
	return ts
}

// tickStep is the smallest spacing between labelled ticks (the magnitude
// of the single label, or 1, when there is only one).
func tickStep(vs []float64) float64 {
	step := math.Inf(1)
	for i := 1; i < len(vs); i++ {
		if d := math.Abs(vs[i] - vs[i-1]); d > 0 {
			step = math.Min(step, d)
		}
	}
	if math.IsInf(step, 1) {
		step = 1
		if len(vs) == 1 && vs[0] != 0 {
			step = math.Abs(vs[0])
		}
	}
	return step
}

// tickLabel writes v with the fewest digits that still tell it apart
// from its neighbours step away: anything closer to v than a millionth of
// the step is the same tick.
func tickLabel(v, step, mag float64) string {
	tol := 1e-6 * step
	if math.Abs(v) < tol {
		return "0"
	}
	if mag >= 1e6 || mag < 1e-4 {
		for p := 1; p <= 15; p++ {
			s := strconv.FormatFloat(v, 'g', p, 64)
			if x, err := strconv.ParseFloat(s, 64); err == nil && math.Abs(x-v) <= tol {
				return s
			}
		}
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	for d := 0; d <= 15; d++ {
		s := strconv.FormatFloat(v, 'f', d, 64)
		if x, err := strconv.ParseFloat(s, 64); err == nil && math.Abs(x-v) <= tol {
			return s
		}
	}
	return strconv.FormatFloat(v, 'f', -1, 64)
}

// clipY cuts a polygon to lo <= y <= hi (Sutherland-Hodgman against two
// horizontal lines), since gonum/plot draws polygons past the axes.
func clipY(pts plotter.XYs, lo, hi float64) plotter.XYs {
	clip := func(in plotter.XYs, inside func(y float64) bool, edge float64) plotter.XYs {
		var out plotter.XYs
		for i := range in {
			a, b := in[i], in[(i+1)%len(in)]
			ain, bin := inside(a.Y), inside(b.Y)
			if ain {
				out = append(out, a)
			}
			if ain != bin && a.Y != b.Y {
				t := (edge - a.Y) / (b.Y - a.Y)
				out = append(out, plotter.XY{X: a.X + t*(b.X-a.X), Y: edge})
			}
		}
		return out
	}
	pts = clip(pts, func(y float64) bool { return y >= lo }, lo)
	if len(pts) == 0 {
		return pts
	}
	return clip(pts, func(y float64) bool { return y <= hi }, hi)
}

// clipSegment cuts a two-point line to lo <= y <= hi; nil when nothing
// of it is inside.
func clipSegment(seg plotter.XYs, lo, hi float64) plotter.XYs {
	if len(seg) != 2 {
		return nil
	}
	a, b := seg[0], seg[1]
	cut := func(a, b plotter.XY, y float64) plotter.XY {
		t := (y - a.Y) / (b.Y - a.Y)
		return plotter.XY{X: a.X + t*(b.X-a.X), Y: y}
	}
	for _, e := range []struct {
		out  func(y float64) bool
		edge float64
	}{{func(y float64) bool { return y < lo }, lo}, {func(y float64) bool { return y > hi }, hi}} {
		ao, bo := e.out(a.Y), e.out(b.Y)
		switch {
		case ao && bo:
			return nil
		case ao:
			a = cut(a, b, e.edge)
		case bo:
			b = cut(a, b, e.edge)
		}
	}
	return plotter.XYs{a, b}
}
