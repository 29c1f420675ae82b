package catalog

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
)

// Labels carried by every row: the scenario and sweep member the events
// come from.
type Labels struct {
	Scenario string
	Member   string
}

// num formats a float for CSV: shortest round-trip text, "" for NaN (a
// missing or not-applicable value, read as NaN/NA by data-frame readers).
func num(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

func numOrNil(x float64) any {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return x
}

func idOrEmpty(id int) string {
	if id == 0 {
		return ""
	}
	return strconv.Itoa(id)
}

// EventColumns are the columns of events.csv, in order (see doc.go).
var EventColumns = []string{
	"event_id", "scenario", "member", "class", "start", "end", "duration_hours", "steps",
	"start_lat", "start_lon", "end_lat", "end_lon", "max_area_km2",
	"min_slp_pa", "max_wind_ms", "saffir_simpson_category", "storm_stage",
	"max_ivt_kg_m_s", "mean_ivt_kg_m_s", "max_iwv_kg_m2",
	"landfall", "landfall_time", "landfall_lat", "landfall_lon", "landfall_regions",
	"regions", "split_from", "merged_into",
}

// eventRow is one row of events.csv.
func eventRow(lb Labels, e *Event) []string {
	first, last := e.Points[0], e.Points[len(e.Points)-1]
	cat, stage := "", ""
	if e.Class == TropicalCyclone && !math.IsNaN(e.MaxWind) {
		cat = strconv.Itoa(e.Category())
		stage = StormStage(e.MaxWind)
	}
	lf := []string{"false", "", "", "", ""}
	if e.Landfall != nil {
		lf = []string{"true", e.Landfall.Time.ISO, num(e.Landfall.Lat), num(e.Landfall.Lon), strings.Join(e.Landfall.Regions, ";")}
	}
	row := []string{
		strconv.Itoa(e.ID), lb.Scenario, lb.Member, ClassNames[e.Class], first.Time.ISO, last.Time.ISO,
		num(e.DurationHours()), strconv.Itoa(len(e.Points)),
		num(first.Lat), num(first.Lon), num(last.Lat), num(last.Lon), num(e.MaxAreaKm2),
		num(e.MinSLP), num(e.MaxWind), cat, stage,
		num(e.MaxIVT), num(e.MeanIVT), num(e.MaxIWV),
	}
	row = append(row, lf...)
	return append(row, strings.Join(e.Regions, ";"), idOrEmpty(e.SplitFrom), idOrEmpty(e.MergedInto))
}

// PointColumns are the columns of track_points.csv, in order (see doc.go).
var PointColumns = []string{
	"event_id", "scenario", "member", "class", "index", "time", "hours_since_start",
	"lat", "lon", "area_km2", "pixels",
	"min_slp_pa", "max_wind_ms", "max_ivt_kg_m_s", "mean_ivt_kg_m_s", "max_iwv_kg_m2", "on_land",
}

func pointRow(lb Labels, e *Event, i int) []string {
	p := e.Points[i]
	return []string{
		strconv.Itoa(e.ID), lb.Scenario, lb.Member, ClassNames[e.Class], strconv.Itoa(i), p.Time.ISO,
		num(p.Time.Hours - e.Points[0].Time.Hours),
		num(p.Lat), num(p.Lon), num(p.AreaKm2), strconv.Itoa(p.Pixels),
		num(p.MinSLP), num(p.MaxWind), num(p.MaxIVT), num(p.MeanIVT), num(p.MaxIWV), strconv.FormatBool(p.OnLand),
	}
}

// Catalog is the events of one instance, grouped by their labels.
type Catalog struct {
	Groups []Group
}

// Group is the events of one (scenario, member).
type Group struct {
	Labels
	Events []*Event
}

// WriteCSV writes events.csv and track_points.csv.
func (c *Catalog) WriteCSV(eventsPath, pointsPath string) error {
	var ev, pt bytes.Buffer
	we, wp := csv.NewWriter(&ev), csv.NewWriter(&pt)
	_ = we.Write(EventColumns)
	_ = wp.Write(PointColumns)
	for _, g := range c.Groups {
		for _, e := range g.Events {
			_ = we.Write(eventRow(g.Labels, e))
			for i := range e.Points {
				_ = wp.Write(pointRow(g.Labels, e, i))
			}
		}
	}
	we.Flush()
	wp.Flush()
	if err := we.Error(); err != nil {
		return fmt.Errorf("write %s: %w", eventsPath, err)
	}
	if err := wp.Error(); err != nil {
		return fmt.Errorf("write %s: %w", pointsPath, err)
	}
	if err := os.WriteFile(eventsPath, ev.Bytes(), 0o644); err != nil {
		return err
	}
	return os.WriteFile(pointsPath, pt.Bytes(), 0o644)
}

// Features returns one GeoJSON feature per event: its track and the
// columns of events.csv as properties (numbers as numbers, missing as null).
func (c *Catalog) Features() []Feature {
	var out []Feature
	for _, g := range c.Groups {
		for _, e := range g.Events {
			lons := make([]float64, len(e.Points))
			lats := make([]float64, len(e.Points))
			for i, p := range e.Points {
				lons[i], lats[i] = p.Lon, p.Lat
			}
			props := map[string]any{}
			row := eventRow(g.Labels, e)
			for i, col := range EventColumns {
				props[col] = jsonValue(col, row[i])
			}
			out = append(out, Feature{Lons: lons, Lats: lats, Properties: props})
		}
	}
	return out
}

// jsonValue turns a CSV cell back into a typed JSON value: numbers for
// numeric columns, booleans for landfall, null for empty.
func jsonValue(col, s string) any {
	switch col {
	case "scenario", "member", "class", "start", "end", "storm_stage", "landfall_time", "landfall_regions", "regions":
		if s == "" && col != "scenario" && col != "member" && col != "regions" {
			return nil
		}
		return s
	case "landfall":
		return s == "true"
	}
	if s == "" {
		return nil
	}
	f, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return s
	}
	return f
}
