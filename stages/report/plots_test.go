package report

import (
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/plot"
)

// rawFloat matches the binary residue of decimal arithmetic printed in
// full, as in 0.30000000000000004 or 0.6000000000000001 (derived: six
// zeros or nines in a row after the point never come from a tick step).
var rawFloat = regexp.MustCompile(`\d\.\d*(0{6,}|9{6,})\d`)

func majorLabels(m plot.Ticker, min, max float64) []string {
	var out []string
	for _, t := range m.Ticks(min, max) {
		if t.Label != "" {
			out = append(out, t.Label)
		}
	}
	return out
}

// Numeric axes label their ticks as a person writes them: to the
// precision of the tick spacing, shortest form (common practice; the
// positions are gonum/plot's Talbot-Lin-Hanrahan ticks).
func TestTickLabels(t *testing.T) {
	p := newPlot("t", "x", "y")
	cases := []struct {
		min, max float64
		want     string
	}{
		{0, 0.39, "0 0.1 0.2 0.3"}, // the events-per-year axis of a thin category chart
		{0, 0.7, "0 0.3 0.6"},
		{0, 0.16, "0 0.05 0.1 0.15"},
		{0, 5.85, "0 2.5 5"},
		{1990.5, 1996.5, "1992 1994 1996"},
		{-3.2, 3.2, "-3 0 3"},
		{0, 2.6e6, "0 2.5e+06"},
		{0, 1.3e-5, "0 4e-06 8e-06 1.2e-05"},
	}
	for _, ax := range []struct {
		name string
		m    plot.Ticker
	}{{"x", p.X.Tick.Marker}, {"y", p.Y.Tick.Marker}} {
		for _, c := range cases {
			if got := strings.Join(majorLabels(ax.m, c.min, c.max), " "); got != c.want {
				t.Errorf("%s axis [%g, %g]: labels %q, want %q", ax.name, c.min, c.max, got, c.want)
			}
		}
	}
	// Every range of a sweep: each label reads back as its tick within a
	// millionth of the spacing, with no more decimals than the spacing
	// needs (Talbot's steps are 1, 2, 2.5, 3, 4, 5 times a power of ten:
	// at most one decimal beyond the power), and never as "-0".
	for k := 1; k <= 2000; k++ {
		for _, lo := range []float64{0, -0.37 * float64(k) / 100} {
			hi := float64(k) / 100
			ticks := p.Y.Tick.Marker.Ticks(lo, hi)
			var vals []float64
			for _, tk := range ticks {
				if tk.Label != "" {
					vals = append(vals, tk.Value)
				}
			}
			step := tickStep(vals)
			maxDec := max(0, 1-int(math.Floor(math.Log10(step)+1e-9)))
			for _, tk := range ticks {
				if tk.Label == "" {
					continue
				}
				x, err := strconv.ParseFloat(tk.Label, 64)
				dec := 0
				if i := strings.IndexByte(tk.Label, '.'); i >= 0 {
					dec = len(tk.Label) - i - 1
				}
				if err != nil || math.Abs(x-tk.Value) > 1e-6*step || dec > maxDec || tk.Label == "-0" || rawFloat.MatchString(tk.Label) {
					t.Errorf("[%g, %g]: tick %v labelled %q (step %g)", lo, hi, tk.Value, tk.Label, step)
				}
			}
		}
	}
}

var svgTextRe = regexp.MustCompile(`<text[^>]*>([^<]*)</text>`)

func svgStrings(svg string) []string {
	var out []string
	for _, m := range svgTextRe.FindAllStringSubmatch(svg, -1) {
		out = append(out, m[1])
	}
	return out
}

// The colour bar under a map labels its ticks the same way as the axes.
func TestColourBarTickLabels(t *testing.T) {
	lat := []float64{0, 10, 20}
	lon := []float64{100, 110, 120, 130}
	vals := []float64{0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0, 0, 0.05, 0.15}
	svg, err := mapSVG(gridMap{title: "m", lat: lat, lon: lon, values: vals, cmap: newRamp(seqRamp, 0, 0.7), units: "per year"})
	if err != nil {
		t.Fatal(err)
	}
	texts := " " + strings.Join(svgStrings(string(svg)), " ") + " "
	// Derived: a 0..0.7 bar gets ticks at 0, 0.3 and 0.6.
	for _, want := range []string{" 0 ", " 0.3 ", " 0.6 "} {
		if !strings.Contains(texts, want) {
			t.Errorf("colour bar lacks the label %q; texts:%s", strings.TrimSpace(want), texts)
		}
	}
	if strings.Contains(texts, " 0.0 ") || rawFloat.MatchString(texts) {
		t.Errorf("colour bar labels carry needless digits:%s", texts)
	}
}

// sweepFixture is the small fixture plus a parameter sweep of a second
// label stage: six more label outputs with long member names, the case
// where category names under vertical bars ran into each other.
func sweepFixture(t *testing.T) *fixture {
	f := newFixture(t)
	for _, scn := range []string{"control", "warm"} {
		for _, m := range []string{"ar_ivt_min=200", "ar_ivt_min=250", "ar_ivt_min=300"} {
			dir := filepath.Join(f.root, "river-sweep", scn, m)
			writeMask(t, filepath.Join(dir, "mask.nc"), 0, 3+len(m)%5)
			f.in.Outputs = append(f.in.Outputs, Output{Stage: "river-sweep", Kind: "label", Scenario: scn, Block: "1990", Member: m, Dir: dir})
		}
	}
	return f
}

// No text in any plot overlaps other text or is cut off at the plot's
// edge, on a page with a sweep's worth of label outputs.
func TestPlotTextLegible(t *testing.T) {
	f := sweepFixture(t)
	var buf strings.Builder
	if err := Render(&buf, f.in); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	checkPageText(t, page)
	// Every label output is named on the chart, stage first since two
	// label stages share scenario names.
	svg := ""
	for _, s := range plotSVGRe.FindAllString(page, -1) {
		if strings.Contains(s, `aria-label="class fractions"`) {
			svg = s
		}
	}
	texts := strings.Join(svgStrings(svg), "\n")
	for _, want := range []string{"labels · control", "labels · warm", "river-sweep · control · ar_ivt_min=200", "river-sweep · warm · ar_ivt_min=300"} {
		if !strings.Contains(texts, want) {
			t.Errorf("class-fraction chart lacks the name %q", want)
		}
	}
	for _, s := range svgStrings(page) {
		if rawFloat.MatchString(s) {
			t.Errorf("plot text %q prints a raw float", s)
		}
	}
}

// Undefined scores (empty in the evaluate kind's CSV, its doc.go) show as
// "–" with a note, not as blank cells.
func TestUndefinedScoresMarked(t *testing.T) {
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "pixel_scores.csv"), []byte("member,scenario,region,season,weighting,class,tp,fp,fn,tn,iou,precision,recall,f1,accuracy\n"+
		"a,all,all,all,area,tropical_cyclone,0,0,34,100,0,,0,0,\n"+
		"a,all,all,all,area,atmospheric_river,40,10,8,60,0.6897,0.8,0.8333,0.8163,\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	tables, notes := evaluationTables(&Input{Outputs: []Output{{Stage: "s", Kind: "evaluate", Dir: dir}}})
	if len(tables) != 1 || len(notes) != 0 {
		t.Fatalf("tables %v notes %v", tables, notes)
	}
	tb := tables[0]
	if got := strings.Join(tb.Columns, ","); got != "member,scenario,weighting,class,IoU,precision,recall,F1" {
		t.Fatalf("columns %s", got)
	}
	// The cyclone row has no detections: precision tp/(tp+fp) = 0/0.
	if got := strings.Join(tb.Rows[0], ","); got != "a,all,area,tropical_cyclone,0,–,0,0" {
		t.Errorf("row %s", got)
	}
	if !strings.Contains(tb.Note, "undefined") {
		t.Errorf("note %q does not explain the –", tb.Note)
	}
}
