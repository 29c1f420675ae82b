package trends

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
)

// Output file names (part of the kind's interface; see doc.go).
const (
	JSONFile        = "trends.json"
	CSVFile         = "trends.csv"
	SeriesFile      = "series.csv"
	DifferencesFile = "differences.csv"
	MapsFile        = "maps.nc"
	MaskFile        = "mask.nc"
)

// Caution travels with every output that reaches people.
const Caution = "Research output: heuristic detections and trends computed from climate-model output. " +
	"They are not forecasts or warnings; decisions about risk belong to official forecast agencies and local codes."

// Num is a float64 that encodes NaN and infinities as JSON null and
// everything else in the shortest form that reads back exactly.
type Num float64

func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 64), nil
}

func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = Num(math.NaN())
		return nil
	}
	f, err := strconv.ParseFloat(string(b), 64)
	*n = Num(f)
	return err
}

// csvNum writes NaN as an empty cell.
func csvNum(n Num) string {
	f := float64(n)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return ""
	}
	return strconv.FormatFloat(f, 'g', -1, 64)
}

// Output is the content of trends.json.
type Output struct {
	Caution     string          `json:"caution"`
	Kind        string          `json:"kind"`
	Version     int             `json:"kind_version"`
	Confidence  float64         `json:"confidence"`
	Correction  string          `json:"serial_correction"`
	MinYears    int             `json:"min_years"`
	Resamples   int             `json:"bootstrap_resamples"`
	Seed        uint64          `json:"seed"`
	Baseline    string          `json:"baseline_scenario"`
	Regions     []string        `json:"regions"`
	Classes     []string        `json:"classes"`
	Scenarios   []ScenarioYears `json:"scenarios"`
	Series      []Series        `json:"series"`
	Trends      []Trend         `json:"trends"`
	Differences []Difference    `json:"differences"`
	Maps        *MapsInfo       `json:"maps,omitempty"`
}

// ScenarioYears summarises one (scenario, member) sample.
type ScenarioYears struct {
	Scenario    string `json:"scenario"`
	Member      string `json:"member,omitempty"`
	First       int    `json:"first_year"`
	Last        int    `json:"last_year"`
	Years       int    `json:"years"`
	Events      int    `json:"events"`
	TrackPoints bool   `json:"track_points"`
}

// Series is one annual series; Values[i] belongs to Years[i] (null: no
// value that year, e.g. a mean intensity in a year without events).
type Series struct {
	Region   string `json:"region"`
	Class    string `json:"class"`
	Scenario string `json:"scenario"`
	Member   string `json:"member,omitempty"`
	Metric   string `json:"metric"`
	Unit     string `json:"unit"`
	Years    []int  `json:"years"`
	Values   []Num  `json:"values"`
}

// Trend is one row of trends.csv. Slopes are per decade.
type Trend struct {
	Region         string `json:"region"`
	Class          string `json:"class"`
	Scenario       string `json:"scenario"`
	Member         string `json:"member,omitempty"`
	Metric         string `json:"metric"`
	Unit           string `json:"unit"`
	Status         string `json:"status"`
	NYears         int    `json:"n_years"`
	FirstYear      int    `json:"first_year"`
	LastYear       int    `json:"last_year"`
	Mean           Num    `json:"mean"`
	Correction     string `json:"mk_correction"`
	MKS            Num    `json:"mk_s"`
	MKVarS         Num    `json:"mk_var_s"`
	MKFactor       Num    `json:"mk_variance_factor"`
	MKTau          Num    `json:"mk_tau"`
	MKZ            Num    `json:"mk_z"`
	MKP            Num    `json:"mk_p"`
	PMethod        string `json:"p_method"` // "exact" or "normal"; empty when mk_p is null
	SenSlope       Num    `json:"sen_slope_per_decade"`
	SenLow         Num    `json:"sen_low_per_decade"`
	SenHigh        Num    `json:"sen_high_per_decade"`
	SenIntercept   Num    `json:"sen_intercept"`
	SenMedianYear  Num    `json:"sen_median_year"`
	SenMedianValue Num    `json:"sen_median_value"`
	OLSSlope       Num    `json:"ols_slope_per_decade"`
	OLSSlopeSE     Num    `json:"ols_slope_se_per_decade"`
	OLSIntercept   Num    `json:"ols_intercept"`
	OLSInterceptSE Num    `json:"ols_intercept_se"`
	OLSR2          Num    `json:"ols_r2"`
	OLSP           Num    `json:"ols_p"`
}

// Difference is one row of differences.csv: a scenario against the
// baseline for one region, class and metric.
type Difference struct {
	Region         string `json:"region"`
	Class          string `json:"class"`
	Metric         string `json:"metric"`
	Unit           string `json:"unit"`
	Scenario       string `json:"scenario"`
	Member         string `json:"member,omitempty"`
	Baseline       string `json:"baseline"`
	Status         string `json:"status"`
	NYears         int    `json:"n_years"`
	NYearsBaseline int    `json:"n_years_baseline"`
	Mean           Num    `json:"mean"`
	MeanBaseline   Num    `json:"mean_baseline"`
	Diff           Num    `json:"difference"`
	DiffLow        Num    `json:"difference_low"`
	DiffHigh       Num    `json:"difference_high"`
	Ratio          Num    `json:"ratio"`
	RatioLow       Num    `json:"ratio_low"`
	RatioHigh      Num    `json:"ratio_high"`
	RankSumU       Num    `json:"rank_sum_u"`
	RankSumP       Num    `json:"rank_sum_p"`
	RankSumExact   bool   `json:"rank_sum_exact"`
}

// MapsInfo describes maps.nc in trends.json.
type MapsInfo struct {
	File      string   `json:"file"`
	Source    string   `json:"source"` // "masks" or "track points"
	Quantity  string   `json:"quantity"`
	Units     string   `json:"units"`
	Variables []string `json:"variables"`
}

// ReadOutput reads a trends.json (used by the report).
func ReadOutput(path string) (*Output, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var o Output
	if err := json.Unmarshal(b, &o); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &o, nil
}

func writeOutputs(dir string, o *Output) error {
	b, err := json.MarshalIndent(o, "", " ")
	if err != nil {
		return err
	}
	if err := os.WriteFile(filepath.Join(dir, JSONFile), append(b, '\n'), 0o644); err != nil {
		return err
	}
	// trends.csv
	rows := [][]string{{"region", "class", "scenario", "member", "metric", "unit", "status", "n_years", "first_year", "last_year",
		"mean", "mk_correction", "mk_s", "mk_var_s", "mk_variance_factor", "mk_tau", "mk_z", "mk_p", "p_method",
		"sen_slope_per_decade", "sen_low_per_decade", "sen_high_per_decade", "sen_intercept",
		"ols_slope_per_decade", "ols_slope_se_per_decade", "ols_intercept", "ols_intercept_se", "ols_r2", "ols_p", "confidence"}}
	conf := strconv.FormatFloat(o.Confidence, 'g', -1, 64)
	for _, t := range o.Trends {
		rows = append(rows, []string{t.Region, t.Class, t.Scenario, t.Member, t.Metric, t.Unit, t.Status,
			strconv.Itoa(t.NYears), yearCell(t.FirstYear, t.NYears), yearCell(t.LastYear, t.NYears),
			csvNum(t.Mean), t.Correction, csvNum(t.MKS), csvNum(t.MKVarS), csvNum(t.MKFactor), csvNum(t.MKTau), csvNum(t.MKZ), csvNum(t.MKP), t.PMethod,
			csvNum(t.SenSlope), csvNum(t.SenLow), csvNum(t.SenHigh), csvNum(t.SenIntercept),
			csvNum(t.OLSSlope), csvNum(t.OLSSlopeSE), csvNum(t.OLSIntercept), csvNum(t.OLSInterceptSE), csvNum(t.OLSR2), csvNum(t.OLSP), conf})
	}
	if err := writeCSV(filepath.Join(dir, CSVFile), rows); err != nil {
		return err
	}
	// series.csv (long format)
	rows = [][]string{{"region", "class", "scenario", "member", "metric", "unit", "year", "value"}}
	for _, s := range o.Series {
		for i, y := range s.Years {
			rows = append(rows, []string{s.Region, s.Class, s.Scenario, s.Member, s.Metric, s.Unit, strconv.Itoa(y), csvNum(s.Values[i])})
		}
	}
	if err := writeCSV(filepath.Join(dir, SeriesFile), rows); err != nil {
		return err
	}
	// differences.csv
	rows = [][]string{{"region", "class", "metric", "unit", "scenario", "member", "baseline", "status", "n_years", "n_years_baseline",
		"mean", "mean_baseline", "difference", "difference_low", "difference_high", "ratio", "ratio_low", "ratio_high",
		"rank_sum_u", "rank_sum_p", "rank_sum_exact", "bootstrap_resamples", "confidence"}}
	for _, d := range o.Differences {
		rows = append(rows, []string{d.Region, d.Class, d.Metric, d.Unit, d.Scenario, d.Member, d.Baseline, d.Status,
			strconv.Itoa(d.NYears), strconv.Itoa(d.NYearsBaseline), csvNum(d.Mean), csvNum(d.MeanBaseline),
			csvNum(d.Diff), csvNum(d.DiffLow), csvNum(d.DiffHigh), csvNum(d.Ratio), csvNum(d.RatioLow), csvNum(d.RatioHigh),
			csvNum(d.RankSumU), csvNum(d.RankSumP), strconv.FormatBool(d.RankSumExact), strconv.Itoa(o.Resamples), conf})
	}
	return writeCSV(filepath.Join(dir, DifferencesFile), rows)
}

func yearCell(y, n int) string {
	if n == 0 {
		return ""
	}
	return strconv.Itoa(y)
}

func writeCSV(path string, rows [][]string) error {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	if err := w.WriteAll(rows); err != nil {
		return err
	}
	return os.WriteFile(path, buf.Bytes(), 0o644)
}
