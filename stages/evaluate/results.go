package evaluate

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"

	"github.com/squall-climate/squall/stages/catalog"
)

// All labels the aggregate over every scenario, region or season.
const All = "all"

// Num is a float64 that is written as null in JSON when it is NaN (an
// undefined score) and as "" in CSV.
type Num float64

// MarshalJSON writes NaN and infinities as null.
func (x Num) MarshalJSON() ([]byte, error) {
	f := float64(x)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return []byte(strconv.FormatFloat(f, 'g', -1, 64)), nil
}

func (x Num) String() string {
	f := float64(x)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return ""
	}
	return strconv.FormatFloat(f, 'g', -1, 64)
}

// Key says which slice of the data a row describes.
type Key struct {
	Member   string `json:"member"`
	Scenario string `json:"scenario"`
	Region   string `json:"region"`
	Season   string `json:"season"`
}

func (k Key) cells() []string { return []string{k.Member, k.Scenario, k.Region, k.Season} }

var keyColumns = []string{"member", "scenario", "region", "season"}

// PixelRow is one row of pixel_scores.csv.
type PixelRow struct {
	Key
	Weighting string `json:"weighting"` // "count" or "area"
	Class     string `json:"class"`     // a class name, or "mean" for the macro mean over classes
	TP        Num    `json:"tp"`
	FP        Num    `json:"fp"`
	FN        Num    `json:"fn"`
	TN        Num    `json:"tn"`
	IoU       Num    `json:"iou"`
	Precision Num    `json:"precision"`
	Recall    Num    `json:"recall"`
	F1        Num    `json:"f1"`
	Accuracy  Num    `json:"accuracy"` // on "mean" rows only
}

var pixelColumns = []string{"weighting", "class", "tp", "fp", "fn", "tn", "iou", "precision", "recall", "f1", "accuracy"}

// ConfusionRow is one confusion matrix.
type ConfusionRow struct {
	Key
	Weighting string      `json:"weighting"`
	Classes   []string    `json:"classes"`
	Matrix    [][]float64 `json:"matrix"` // [reference][candidate]
}

// EventRow is one row of event_scores.csv.
type EventRow struct {
	Key
	Class  string         `json:"class"`
	Table  Table          `json:"table"`
	Scores map[string]Num `json:"scores"`
}

// Results are the tables of one evaluation.
type Results struct {
	Pixel     []PixelRow     `json:"pixel"`
	Confusion []ConfusionRow `json:"confusion"`
	Events    []EventRow     `json:"events"`
}

// aggregation target: member -> scenario -> region -> season.
type cell4 struct{ m, sc, r, se string }

// Results computes every table. Events are matched with minIoU (see
// match). Rows are sorted by member, scenario, region, season with "all"
// first in each, then by class, so the output is deterministic.
func (e *Evaluator) Results(minIoU float64) *Results {
	regionNames := []string{All}
	for _, r := range e.regions {
		regionNames = append(regionNames, r.Name)
	}
	conf := map[cell4]*Confusion{}
	tables := map[cell4]*[K]Table{}
	add := func(c cell4, m *Confusion) {
		if conf[c] == nil {
			conf[c] = NewConfusion(K)
		}
		conf[c].Add(m)
	}
	addT := func(c cell4, k int, f func(*Table)) {
		if tables[c] == nil {
			tables[c] = &[K]Table{}
		}
		f(&tables[c][k])
	}
	for _, s := range e.series {
		for ri, rn := range regionNames {
			for q, sn := range Seasons {
				m := s.conf[ri][q]
				for _, sc := range []string{s.scenario, All} {
					for _, se := range []string{sn, All} {
						add(cell4{s.member, sc, rn, se}, m)
						for _, k := range eventClasses {
							dq := s.quiet[k][ri][q]
							addT(cell4{s.member, sc, rn, se}, k, func(t *Table) { t.CorrectNegatives += dq })
						}
					}
				}
			}
		}
		for _, k := range eventClasses {
			refMatch, candMatched := match(s, k, minIoU)
			count := func(st *evStat, f func(*Table)) {
				for ri, rn := range regionNames {
					if ri > 0 && !st.regions[ri-1] {
						continue
					}
					for _, sc := range []string{s.scenario, All} {
						for _, se := range []string{Seasons[st.season], All} {
							addT(cell4{s.member, sc, rn, se}, k, f)
						}
					}
				}
			}
			for i, st := range s.ref[k].ev {
				if refMatch[i] >= 0 {
					count(st, func(t *Table) { t.Hits++ })
				} else {
					count(st, func(t *Table) { t.Misses++ })
				}
			}
			for i, st := range s.cand[k].ev {
				if !candMatched[i] {
					count(st, func(t *Table) { t.FalseAlarms++ })
				}
			}
		}
	}
	keys := make([]cell4, 0, len(conf))
	for c := range conf {
		keys = append(keys, c)
	}
	rank := func(list []string, x string) int {
		for i, v := range list {
			if v == x {
				return i
			}
		}
		return len(list)
	}
	seasonList := append([]string{All}, Seasons...)
	less := func(a, b string) bool { // "all" first, then sorted
		if a == b {
			return false
		}
		if a == All || b == All {
			return a == All
		}
		return a < b
	}
	sort.Slice(keys, func(i, j int) bool {
		a, b := keys[i], keys[j]
		if a.m != b.m {
			return a.m < b.m
		}
		if a.sc != b.sc {
			return less(a.sc, b.sc)
		}
		if a.r != b.r {
			return rank(regionNames, a.r) < rank(regionNames, b.r)
		}
		return rank(seasonList, a.se) < rank(seasonList, b.se)
	})
	res := &Results{}
	for _, c := range keys {
		key := Key{Member: c.m, Scenario: c.sc, Region: c.r, Season: c.se}
		m := conf[c]
		for _, w := range []string{"count", "area"} {
			mat := m.Weighted(w == "area")
			var sumP, sumR, sumF float64
			var nP, nR, nF int
			for k := 0; k < K; k++ {
				cs := PerClass(mat, K, k)
				res.Pixel = append(res.Pixel, PixelRow{Key: key, Weighting: w, Class: catalog.ClassNames[k],
					TP: Num(cs.TP), FP: Num(cs.FP), FN: Num(cs.FN), TN: Num(cs.TN), IoU: Num(cs.IoU),
					Precision: Num(cs.Precision), Recall: Num(cs.Recall), F1: Num(cs.F1), Accuracy: Num(math.NaN())})
				if !math.IsNaN(cs.Precision) {
					sumP += cs.Precision
					nP++
				}
				if !math.IsNaN(cs.Recall) {
					sumR += cs.Recall
					nR++
				}
				if !math.IsNaN(cs.F1) {
					sumF += cs.F1
					nF++
				}
			}
			nan := Num(math.NaN())
			res.Pixel = append(res.Pixel, PixelRow{Key: key, Weighting: w, Class: "mean",
				TP: nan, FP: nan, FN: nan, TN: nan, IoU: Num(MeanIoU(mat, K)),
				Precision: Num(ratio(sumP, float64(nP))), Recall: Num(ratio(sumR, float64(nR))),
				F1: Num(ratio(sumF, float64(nF))), Accuracy: Num(Accuracy(mat, K))})
			rows := make([][]float64, K)
			for r := range rows {
				rows[r] = mat[r*K : (r+1)*K]
			}
			res.Confusion = append(res.Confusion, ConfusionRow{Key: key, Weighting: w, Classes: catalog.ClassNames[:], Matrix: rows})
		}
		if tb := tables[c]; tb != nil {
			for _, k := range eventClasses {
				sc := tb[k].Scores()
				vals := sc.values()
				mp := map[string]Num{}
				for i, n := range scoreNames {
					mp[n] = Num(vals[i])
				}
				res.Events = append(res.Events, EventRow{Key: key, Class: catalog.ClassNames[k], Table: tb[k], Scores: mp})
			}
		}
	}
	return res
}

// WriteCSV writes pixel_scores.csv, confusion.csv and event_scores.csv
// into dir (columns in doc.go).
func (r *Results) WriteCSV(dir string) error {
	write := func(name string, header []string, rows [][]string) error {
		var buf bytes.Buffer
		w := csv.NewWriter(&buf)
		_ = w.Write(header)
		_ = w.WriteAll(rows)
		if err := w.Error(); err != nil {
			return fmt.Errorf("write %s: %w", name, err)
		}
		return os.WriteFile(dir+"/"+name, buf.Bytes(), 0o644)
	}
	var px [][]string
	for _, p := range r.Pixel {
		px = append(px, append(p.Key.cells(), p.Weighting, p.Class, p.TP.String(), p.FP.String(), p.FN.String(),
			p.TN.String(), p.IoU.String(), p.Precision.String(), p.Recall.String(), p.F1.String(), p.Accuracy.String()))
	}
	if err := write("pixel_scores.csv", append(append([]string{}, keyColumns...), pixelColumns...), px); err != nil {
		return err
	}
	var cf [][]string
	for _, c := range r.Confusion {
		for i, rn := range c.Classes {
			for j, cn := range c.Classes {
				cf = append(cf, append(c.Key.cells(), c.Weighting, rn, cn, Num(c.Matrix[i][j]).String()))
			}
		}
	}
	if err := write("confusion.csv", append(append([]string{}, keyColumns...), "weighting", "reference_class", "candidate_class", "value"), cf); err != nil {
		return err
	}
	var ev [][]string
	for _, e := range r.Events {
		row := append(e.Key.cells(), e.Class, Num(e.Table.Hits).String(), Num(e.Table.FalseAlarms).String(),
			Num(e.Table.Misses).String(), Num(e.Table.CorrectNegatives).String())
		for _, n := range scoreNames {
			row = append(row, e.Scores[n].String())
		}
		ev = append(ev, row)
	}
	head := append(append([]string{}, keyColumns...), "class", "hits", "false_alarms", "misses", "correct_negatives")
	return write("event_scores.csv", append(head, scoreNames...), ev)
}

// WriteJSON writes scores.json: the results plus a header describing the
// run and the rules.
func (r *Results) WriteJSON(path string, header map[string]any) error {
	doc := map[string]any{}
	for k, v := range header {
		doc[k] = v
	}
	doc["pixel"] = r.Pixel
	doc["confusion"] = r.Confusion
	doc["events"] = r.Events
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", " ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(doc); err != nil {
		return fmt.Errorf("encode %s: %w", path, err)
	}
	return os.WriteFile(path, buf.Bytes(), 0o644)
}
