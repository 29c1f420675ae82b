package report

import (
	"encoding/xml"
	"fmt"
	"html"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
)

// Layout checks on the SVG the report embeds: where each text element's
// glyph box lands, measured with the metrics of Liberation Sans (the font
// gonum/plot lays out with and the page asks browsers for), so that
// overlapping or clipped labels are caught without a browser.

// affine is the 2-D transform [a c e; b d f] of SVG.
type affine struct{ a, b, c, d, e, f float64 }

var identity = affine{a: 1, d: 1}

// then returns the transform that applies m after t's parent, i.e. the
// composition parent * m (SVG nests child transforms inside the parent's).
func (p affine) then(m affine) affine {
	return affine{
		a: p.a*m.a + p.c*m.b, b: p.b*m.a + p.d*m.b,
		c: p.a*m.c + p.c*m.d, d: p.b*m.c + p.d*m.d,
		e: p.a*m.e + p.c*m.f + p.e, f: p.b*m.e + p.d*m.f + p.f,
	}
}

func (p affine) apply(x, y float64) (float64, float64) {
	return p.a*x + p.c*y + p.e, p.b*x + p.d*y + p.f
}

var transformRe = regexp.MustCompile(`(translate|scale|rotate)\(([^)]*)\)`)

// parseTransform reads the transform lists vgsvg writes: translate,
// scale and rotate (degrees) with comma or space separated numbers.
func parseTransform(s string) (affine, error) {
	m := identity
	for _, g := range transformRe.FindAllStringSubmatch(s, -1) {
		var v []float64
		for _, f := range strings.FieldsFunc(g[2], func(r rune) bool { return r == ',' || r == ' ' }) {
			x, err := strconv.ParseFloat(f, 64)
			if err != nil {
				return m, fmt.Errorf("transform %q: %v", s, err)
			}
			v = append(v, x)
		}
		var t affine
		switch {
		case g[1] == "translate" && len(v) == 2:
			t = affine{a: 1, d: 1, e: v[0], f: v[1]}
		case g[1] == "translate" && len(v) == 1:
			t = affine{a: 1, d: 1, e: v[0]}
		case g[1] == "scale" && len(v) == 2:
			t = affine{a: v[0], d: v[1]}
		case g[1] == "scale" && len(v) == 1:
			t = affine{a: v[0], d: v[0]}
		case g[1] == "rotate" && len(v) == 1:
			r := v[0] * math.Pi / 180
			t = affine{a: math.Cos(r), b: math.Sin(r), c: -math.Sin(r), d: math.Cos(r)}
		default:
			return m, fmt.Errorf("transform %q not understood", s)
		}
		m = m.then(t)
	}
	return m, nil
}

// textBox is where a text element's glyphs land, in the SVG's user space
// (y down, the viewBox's units).
type textBox struct {
	text                   string
	minX, minY, maxX, maxY float64
}

func (b textBox) String() string {
	return fmt.Sprintf("%q [%.1f..%.1f]x[%.1f..%.1f]", b.text, b.minX, b.maxX, b.minY, b.maxY)
}

var fontSizeRe = regexp.MustCompile(`font-size:([0-9.]+)px`)

// svgTexts returns the viewBox size and the box of every text element.
func svgTexts(svg string) (w, h float64, boxes []textBox, err error) {
	dec := xml.NewDecoder(strings.NewReader(svg))
	dec.Strict = false
	dec.AutoClose = xml.HTMLAutoClose
	dec.Entity = xml.HTMLEntity
	stack := []affine{identity}
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			return 0, 0, nil, err
		}
		switch t := tok.(type) {
		case xml.StartElement:
			attr := map[string]string{}
			for _, a := range t.Attr {
				attr[a.Name.Local] = a.Value
			}
			tr, err := parseTransform(attr["transform"])
			if err != nil {
				return 0, 0, nil, err
			}
			cur := stack[len(stack)-1].then(tr)
			switch t.Name.Local {
			case "svg":
				f := strings.Fields(attr["viewBox"])
				if len(f) == 4 {
					w, _ = strconv.ParseFloat(f[2], 64)
					h, _ = strconv.ParseFloat(f[3], 64)
				}
			case "text":
				var s strings.Builder
				for {
					tok, err := dec.Token()
					if err != nil {
						return 0, 0, nil, err
					}
					if cd, ok := tok.(xml.CharData); ok {
						s.Write(cd)
					}
					if _, ok := tok.(xml.EndElement); ok {
						break
					}
				}
				size := 10.0
				if m := fontSizeRe.FindStringSubmatch(attr["style"]); m != nil {
					size, _ = strconv.ParseFloat(m[1], 64)
				}
				x, _ := strconv.ParseFloat(attr["x"], 64)
				y, _ := strconv.ParseFloat(attr["y"], 64)
				txt := html.UnescapeString(s.String())
				wid, above, below := inkExtent(txt, size)
				// Glyphs run from the baseline (x, y) rightwards, their
				// ink above and below it, in the text's own frame (y
				// down); the element's transform and its ancestors' carry
				// that frame to the SVG's.
				var b textBox
				b.text = txt
				b.minX, b.minY = math.Inf(1), math.Inf(1)
				b.maxX, b.maxY = math.Inf(-1), math.Inf(-1)
				for _, c := range [][2]float64{{x, y - above}, {x + wid, y - above}, {x, y + below}, {x + wid, y + below}} {
					px, py := cur.apply(c[0], c[1])
					b.minX, b.maxX = math.Min(b.minX, px), math.Max(b.maxX, px)
					b.minY, b.maxY = math.Min(b.minY, py), math.Max(b.maxY, py)
				}
				boxes = append(boxes, b)
				continue // the end element was consumed
			}
			stack = append(stack, cur)
		case xml.EndElement:
			if len(stack) > 1 {
				stack = stack[:len(stack)-1]
			}
		}
	}
	return w, h, boxes, nil
}

// inkExtent measures a string in Liberation Sans at size points: its
// advance width, and how far its glyphs' ink reaches above and below the
// baseline (from the glyph outlines, so "ace" is shorter than "Ag").
func inkExtent(s string, size float64) (width, above, below float64) {
	face := font.DefaultCache.Lookup(sans, vg.Length(size))
	ff := face.FontFace(72) // 72 dpi: one pixel per point
	defer ff.Close()
	for _, r := range s {
		b, _, ok := ff.GlyphBounds(r)
		if !ok || b.Empty() {
			continue
		}
		above = math.Max(above, -float64(b.Min.Y)/64)
		below = math.Max(below, float64(b.Max.Y)/64)
	}
	return face.Width(s).Points(), above, below
}

// layoutTolerance is how far, in points, ink boxes may overlap or poke
// past the edge before it counts (common practice: under a point is not
// visible at the sizes the report uses).
const layoutTolerance = 0.5

// textProblems lists text that overlaps other text or runs outside the
// plot's viewBox (where the browser clips it).
func textProblems(svg string) ([]string, error) {
	w, h, boxes, err := svgTexts(svg)
	if err != nil {
		return nil, err
	}
	var out []string
	for i, a := range boxes {
		if strings.TrimSpace(a.text) == "" {
			continue
		}
		if a.minX < -layoutTolerance || a.minY < -layoutTolerance || a.maxX > w+layoutTolerance || a.maxY > h+layoutTolerance {
			out = append(out, fmt.Sprintf("clipped by the %gx%g viewBox: %v", w, h, a))
		}
		for _, b := range boxes[i+1:] {
			if strings.TrimSpace(b.text) == "" {
				continue
			}
			ox := math.Min(a.maxX, b.maxX) - math.Max(a.minX, b.minX)
			oy := math.Min(a.maxY, b.maxY) - math.Max(a.minY, b.minY)
			if ox > layoutTolerance && oy > layoutTolerance {
				out = append(out, fmt.Sprintf("overlap: %v and %v", a, b))
			}
		}
	}
	return out, nil
}

var plotSVGRe = regexp.MustCompile(`(?s)<svg class="plot".*?</svg>`)

// checkPageText runs textProblems on every plot of a page.
func checkPageText(t *testing.T, page string) {
	t.Helper()
	svgs := plotSVGRe.FindAllString(page, -1)
	if len(svgs) == 0 {
		t.Fatal("no plots on the page")
	}
	for _, s := range svgs {
		label := ""
		if m := regexp.MustCompile(`aria-label="([^"]*)"`).FindStringSubmatch(s); m != nil {
			label = m[1]
		}
		probs, err := textProblems(s)
		if err != nil {
			t.Fatalf("plot %q: %v", label, err)
		}
		for _, p := range probs {
			t.Errorf("plot %q: %s", label, p)
		}
	}
}

// The checker must see an overlap and a clipped label when there is one,
// or a clean result would prove nothing.
func TestTextCheckerSeesProblems(t *testing.T) {
	// Derived: "overlapping" is about 60 pt wide at 10 pt, so a second
	// string starting 20 pt to its right on the same baseline overlaps it;
	// one 40 pt lower does not.
	svg := `<svg class="plot" viewBox="0 0 200 100"><g transform="scale(1, -1) translate(0, -100)">
<text x="10" y="-50" transform="scale(1, -1)" style="font-size:10px">overlapping</text>
<text x="30" y="-50" transform="scale(1, -1)" style="font-size:10px">labels</text>
<text x="10" y="-10" transform="scale(1, -1)" style="font-size:10px">apart</text>
<text x="180" y="-90" transform="scale(1, -1)" style="font-size:10px">clipped</text>
<g transform="rotate(90)"><text x="20" y="10" transform="scale(1, -1)" style="font-size:10px">rotated</text></g>
</g></svg>`
	probs, err := textProblems(svg)
	if err != nil {
		t.Fatal(err)
	}
	joined := strings.Join(probs, "\n")
	if len(probs) != 2 || !strings.Contains(joined, `"overlapping"`) || !strings.Contains(joined, `clipped by`) {
		t.Errorf("want one overlap and one clipped label, got:\n%s", joined)
	}
	// Derived: the rotated label reads upwards along the left edge, its
	// baseline 10 pt from the edge, so it spans x from 10 pt minus the
	// height of its tallest glyph ("d", about 0.73 em in Liberation Sans)
	// to 10 pt (no descenders), and ends 20 pt above the bottom (y = 80,
	// y down).
	_, _, boxes, _ := svgTexts(svg)
	r := boxes[len(boxes)-1]
	if r.text != "rotated" || math.Abs(r.minX-(10-7.3)) > 0.2 || math.Abs(r.maxX-10) > 0.2 ||
		math.Abs(r.maxY-80) > 0.01 || r.minY > 50 {
		t.Errorf("rotated label box %v", r)
	}
}
