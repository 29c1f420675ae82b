package report

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// outputsOf returns the outputs of a kind, sorted by stage, scenario,
// block, member for a stable page.
func outputsOf(in *Input, kind string) []Output {
	var out []Output
	for _, o := range in.Outputs {
		if o.Kind == kind && o.Dir != "" {
			out = append(out, o)
		}
	}
	sort.SliceStable(out, func(a, b int) bool {
		x, y := out[a], out[b]
		if x.Stage != y.Stage {
			return x.Stage < y.Stage
		}
		if x.Scenario != y.Scenario {
			return scenarioRank(in, x.Scenario) < scenarioRank(in, y.Scenario)
		}
		if x.Block != y.Block {
			return x.Block < y.Block
		}
		return x.Member < y.Member
	})
	return out
}

func scenarioRank(in *Input, name string) string {
	for i, s := range in.Scenarios {
		if s.Name == name {
			return fmt.Sprintf("%04d", i)
		}
	}
	return "9999" + name
}

func fileIn(dir, name string) (string, bool) {
	p := filepath.Join(dir, name)
	st, err := os.Stat(p)
	return p, err == nil && !st.IsDir()
}

// ---- label: class fractions from mask.nc ----

// maskBudget caps the cells the report reads from masks (all label
// outputs together); beyond it only every k-th time step is read, which
// estimates fractions well for long runs at a bounded cost.
const maskBudget = 200_000_000

type fractionRow struct {
	Stage, Scenario, Member string
	Steps, Read             int
	// Area-weighted fraction of cell-steps per class.
	Background, TC, AR float64
}

func classFractions(in *Input) ([]fractionRow, []string) {
	var notes []string
	type group struct {
		row   *fractionRow
		files []string
	}
	var groups []*group
	idx := map[[3]string]*group{}
	for _, o := range outputsOf(in, "label") {
		p, ok := fileIn(o.Dir, "mask.nc")
		if !ok {
			continue
		}
		k := [3]string{o.Stage, o.Scenario, o.Member}
		g := idx[k]
		if g == nil {
			g = &group{row: &fractionRow{Stage: o.Stage, Scenario: o.Scenario, Member: o.Member}}
			idx[k] = g
			groups = append(groups, g)
		}
		g.files = append(g.files, p)
	}
	// First pass: sizes, to choose the stride.
	var total int64
	for _, g := range groups {
		for _, p := range g.files {
			if f, err := ncio.Open(p); err == nil {
				if v, err := f.Var("class_mask"); err == nil {
					n := int64(1)
					for _, s := range v.Shape() {
						n *= int64(s)
					}
					total += n
				}
				f.Close()
			}
		}
	}
	stride := 1
	if total > maskBudget {
		stride = int((total + maskBudget - 1) / maskBudget)
		notes = append(notes, fmt.Sprintf("Masks are large: fractions are estimated from every %d-th time step.", stride))
	}
	var rows []fractionRow
	for _, g := range groups {
		var area [3]float64
		for _, p := range g.files {
			a, steps, read, err := maskAreas(p, stride)
			if err != nil {
				notes = append(notes, err.Error())
				continue
			}
			for k := range area {
				area[k] += a[k]
			}
			g.row.Steps += steps
			g.row.Read += read
		}
		sum := area[0] + area[1] + area[2]
		if sum == 0 {
			continue
		}
		g.row.Background, g.row.TC, g.row.AR = area[0]/sum, area[1]/sum, area[2]/sum
		rows = append(rows, *g.row)
	}
	return rows, notes
}

// maskAreas sums cell areas per class value 0, 1, 2 over the time steps
// read (every stride-th).
func maskAreas(path string, stride int) ([3]float64, int, int, error) {
	var area [3]float64
	f, err := ncio.Open(path)
	if err != nil {
		return area, 0, 0, err
	}
	defer f.Close()
	v, err := f.Var("class_mask")
	if err != nil {
		return area, 0, 0, err
	}
	sh := v.Shape()
	if len(sh) != 3 {
		return area, 0, 0, fmt.Errorf("%s: class_mask has %d dimensions, expected (time, lat, lon)", path, len(sh))
	}
	ng, err := f.GridOf(v)
	if err != nil {
		return area, 0, 0, err
	}
	g, err := grid.New(ng.Lat, ng.Lon)
	if err != nil {
		return area, 0, 0, fmt.Errorf("%s: %w", path, err)
	}
	w := g.CellAreas()
	read := 0
	for t := 0; t < sh[0]; t += stride {
		buf, err := v.ReadUint8([]int{t, 0, 0}, []int{1, sh[1], sh[2]})
		if err != nil {
			return area, 0, 0, err
		}
		for k, b := range buf {
			if b < 3 {
				area[b] += w[k]
			}
		}
		read++
	}
	return area, sh[0], read, nil
}

// ---- generic CSV tables ----

type csvTable struct {
	header []string
	index  map[string]int
	rows   [][]string
}

func readCSV(path string) (*csvTable, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.FieldsPerRecord = -1
	h, err := r.Read()
	if err != nil {
		if err == io.EOF {
			return nil, fmt.Errorf("%s is empty", path)
		}
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	t := &csvTable{header: h, index: map[string]int{}}
	for i, c := range h {
		t.index[strings.ToLower(strings.TrimSpace(c))] = i
	}
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		t.rows = append(t.rows, rec)
	}
	return t, nil
}

func (t *csvTable) get(rec []string, names ...string) string {
	for _, n := range names {
		if i, ok := t.index[n]; ok && i < len(rec) {
			return strings.TrimSpace(rec[i])
		}
	}
	return ""
}

func (t *csvTable) has(name string) bool { _, ok := t.index[name]; return ok }

// ---- evaluate ----

// table is a rendered HTML table: header and cells as text.
type table struct {
	Title   string
	Note    string
	Columns []string
	Rows    [][]string
}

// evaluationTables picks the headline rows of pixel_scores.csv and
// event_scores.csv: every region and season "all" (when those columns
// exist), area-weighted pixel scores first.
func evaluationTables(in *Input) ([]table, []string) {
	var tables []table
	var notes []string
	for _, o := range outputsOf(in, "evaluate") {
		where := o.Stage
		if o.Scenario != "" {
			where += " · " + o.Scenario
		}
		if p, ok := fileIn(o.Dir, "pixel_scores.csv"); ok {
			t, err := readCSV(p)
			if err != nil {
				notes = append(notes, err.Error())
			} else {
				cols := []string{"member", "scenario", "weighting", "class", "iou", "precision", "recall", "f1"}
				tables = append(tables, pick(t, "Pixel scores ("+where+")",
					"Per class, against the reference masks; area weighting counts each cell by its area on the sphere.", cols, headline))
			}
		}
		if p, ok := fileIn(o.Dir, "event_scores.csv"); ok {
			t, err := readCSV(p)
			if err != nil {
				notes = append(notes, err.Error())
			} else {
				cols := []string{"member", "scenario", "class", "hits", "misses", "false_alarms",
					"pod", "far", "csi", "frequency_bias", "heidke", "peirce", "gilbert"}
				tables = append(tables, pick(t, "Event scores ("+where+")",
					"Events matched by overlap; the 2x2 verification table and its scores.", cols, headline))
			}
		}
	}
	return tables, notes
}

// headline keeps rows whose region and season (when present) are "all".
func headline(t *csvTable, rec []string) bool {
	for _, c := range []string{"region", "season"} {
		if t.has(c) && t.get(rec, c) != "all" {
			return false
		}
	}
	return true
}

// columnTitles are the trade's spelling of score column names.
var columnTitles = map[string]string{
	"iou": "IoU", "f1": "F1", "pod": "POD", "far": "FAR", "csi": "CSI", "frequency_bias": "frequency bias",
	"heidke": "Heidke skill", "peirce": "Peirce skill", "gilbert": "Gilbert skill",
}

// pick renders the wanted columns that exist (in the wanted order) of the
// rows that pass keep; numbers are shown to 3 decimals.
func pick(t *csvTable, title, note string, want []string, keep func(*csvTable, []string) bool) table {
	out := table{Title: title, Note: note}
	var idx []int
	for _, w := range want {
		if i, ok := t.index[w]; ok {
			// Columns that are empty in every kept row add nothing.
			empty := true
			for _, rec := range t.rows {
				if keep(t, rec) && i < len(rec) && strings.TrimSpace(rec[i]) != "" {
					empty = false
					break
				}
			}
			if empty {
				continue
			}
			idx = append(idx, i)
			name := strings.ReplaceAll(t.header[i], "_", " ")
			if nice, ok := columnTitles[w]; ok {
				name = nice
			}
			out.Columns = append(out.Columns, name)
		}
	}
	// A column holding numbers marks its empty cells "–": the scores
	// leave a ratio empty when it is undefined (precision without any
	// detection, say), and a blank cell would read as a value lost.
	numeric := make([]bool, len(idx))
	for k, i := range idx {
		for _, rec := range t.rows {
			if keep(t, rec) && i < len(rec) {
				if _, err := strconv.ParseFloat(strings.TrimSpace(rec[i]), 64); err == nil {
					numeric[k] = true
					break
				}
			}
		}
	}
	undefined := false
	for _, rec := range t.rows {
		if !keep(t, rec) {
			continue
		}
		row := make([]string, len(idx))
		for k, i := range idx {
			if i < len(rec) {
				row[k] = fmtCell(rec[i])
			}
			if row[k] == "" && numeric[k] {
				row[k] = "–"
				undefined = true
			}
		}
		out.Rows = append(out.Rows, row)
	}
	if undefined {
		out.Note = strings.TrimSpace(out.Note + " – marks a score that is undefined for that row (a ratio with nothing to divide by).")
	}
	return out
}

func fmtCell(s string) string {
	s = strings.TrimSpace(s)
	if v, err := strconv.ParseFloat(s, 64); err == nil && strings.ContainsAny(s, ".eE") {
		return fmtNum(v, 3)
	}
	return s
}

func fmtNum(v float64, dec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v, 'f', dec, 64)
}

// ---- catalog ----

type catalogEvent struct {
	scenario, class string
	hours           float64
	landfall        bool
	category        string // cyclones: Saffir-Simpson category or storm stage
	maxIVT          float64
	lat, lon        []float64
}

type catalogData struct {
	byScenario map[string][]catalogEvent
	scenarios  []string // in campaign order
}

func readCatalogs(in *Input) (*catalogData, []string) {
	var notes []string
	d := &catalogData{byScenario: map[string][]catalogEvent{}}
	for _, o := range outputsOf(in, "catalog") {
		p, ok := fileIn(o.Dir, "events.csv")
		if !ok {
			continue
		}
		t, err := readCSV(p)
		if err != nil {
			notes = append(notes, err.Error())
			continue
		}
		for _, rec := range t.rows {
			scn := t.get(rec, "scenario")
			if scn == "" {
				scn = o.Scenario
			}
			e := catalogEvent{scenario: scn, class: t.get(rec, "class"), hours: math.NaN(), maxIVT: math.NaN()}
			if v, err := strconv.ParseFloat(t.get(rec, "duration_hours"), 64); err == nil {
				e.hours = v
			}
			e.landfall = strings.EqualFold(t.get(rec, "landfall"), "true")
			if c := t.get(rec, "saffir_simpson_category"); c != "" && c != "0" {
				e.category = "Cat " + c
			} else if s := t.get(rec, "storm_stage"); s != "" {
				e.category = strings.ReplaceAll(s, "_", " ")
			}
			if v, err := strconv.ParseFloat(t.get(rec, "max_ivt_kg_m_s", "max_ivt"), 64); err == nil {
				e.maxIVT = v
			}
			if _, seen := d.byScenario[scn]; !seen {
				d.scenarios = append(d.scenarios, scn)
			}
			d.byScenario[scn] = append(d.byScenario[scn], e)
		}
	}
	sort.SliceStable(d.scenarios, func(a, b int) bool {
		return scenarioRank(in, d.scenarios[a]) < scenarioRank(in, d.scenarios[b])
	})
	return d, notes
}

// yearsOf is the number of years of a scenario: its blocks, else its
// first..last year.
func yearsOf(in *Input, name string) int {
	for _, s := range in.Scenarios {
		if s.Name == name {
			if len(s.Blocks) > 0 {
				return len(s.Blocks)
			}
			if s.LastYear >= s.FirstYear && s.FirstYear != 0 {
				return s.LastYear - s.FirstYear + 1
			}
		}
	}
	return 0
}
