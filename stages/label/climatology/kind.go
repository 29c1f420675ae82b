// Package climatology is the "ivt-climatology" stage kind: a per-cell,
// per-calendar-month percentile of IVT (or IWV, where only column water
// vapour is available) over the training years of a reference scenario.
// The label stage reads it in relative-threshold mode (ar_threshold:
// relative): a pixel is a river candidate where IVT reaches
// max(percentile of its cell and month, ar_ivt_floor).
//
// # Why a stage of its own
//
// A label instance sees one block (year); a climatology needs all training
// years. This kind fans in over the whole campaign (FanCampaign) and its
// single output is broadcast by the engine to every label instance, so
// future-scenario blocks are judged against the reference climate (a
// warmer climate then shows more rivers, which is the point of a fixed
// reference).
//
// # Inputs and outputs
//
// Inputs: the fields.nc of subset instances. Only those of the reference
// scenario whose block (a year) the campaign's split assigns to training
// are read; others are ignored. Output: ivt_climatology.nc (see
// label.WriteClimatology): dims month (12), lat, lon; float threshold
// (month, lat, lon) with attributes quantity, percentile, scenario, years,
// min_samples, and _FillValue where a cell-month has fewer than
// min_samples values; int samples (month, lat, lon).
//
// # Costs
//
// One pass per calendar month over the training files, reading only that
// month's steps, so each value is read once. Memory is one histogram per
// month: cells x 400 bins x 2 bytes (52 MB for a 1-degree global grid,
// 830 MB at 0.25 degrees). The percentile is within one bin width (5 kg
// m-1 s-1 for IVT, 0.25 kg m-2 for IWV) of the exact sample percentile.
package climatology

import (
	"context"
	"fmt"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/label"
)

// Kind is the "ivt-climatology" stage kind.
type Kind struct{}

var _ pipeline.Kind = Kind{}
var _ pipeline.Checker = Kind{}
var _ pipeline.SectionUser = Kind{}

// KindName is the kind's name in campaign files.
const KindName = "ivt-climatology"

// Version changes whenever the same inputs and settings would give
// different outputs.
const Version = 1

func (Kind) Name() string      { return KindName }
func (Kind) Version() int      { return Version }
func (Kind) Fan() pipeline.Fan { return pipeline.FanCampaign }

func (Kind) Doc() string {
	return "Per-cell, per-calendar-month percentile of IVT (or IWV) over the training years of a reference scenario, " +
		"from subset fields.nc inputs; writes ivt_climatology.nc for the label stage's relative AR threshold " +
		"(ar_threshold: relative). Default percentile 85 (Guan & Waliser 2015, from memory)."
}

func (Kind) Settings() []pipeline.Setting {
	b := pipeline.Bound
	return []pipeline.Setting{
		{Name: "percentile", Type: pipeline.TypeFloat, Unit: "percent", Default: 85.0, Min: b(50), Max: b(99.9), Sweep: true,
			Doc: "Percentile of each cell's values in each calendar month. Default 85 (Guan & Waliser 2015, JGR 120; from memory)."},
		{Name: "reference_scenario", Type: pipeline.TypeString, Default: "",
			Doc: "Scenario whose training years make the climatology; empty (default) means the first scenario listed in the campaign, by convention the present-day control run."},
		{Name: "min_samples", Type: pipeline.TypeInt, Unit: "1", Default: 30, Min: b(1),
			Doc: "Least number of values in a cell and month for a percentile; cells with fewer are written as missing and the label stage falls back to the absolute threshold there. Default 30, our choice."},
		{Name: "ar_ivt_top", Type: pipeline.TypeFloat, Unit: "Pa", Default: 30000.0, Min: b(1000), Max: b(90000),
			Doc: "Top of the column when IVT is integrated from q, u, v on levels; keep it equal to the label stage's ar_ivt_top. Default 300 hPa (AMS Glossary; confirmed)."},
	}
}

// CampaignSections: the scenarios (to pick the reference) and the split
// (training years).
func (Kind) CampaignSections() []string {
	return []string{pipeline.SectionScenarios, pipeline.SectionSplit}
}

// CheckStage refuses a campaign without training years or with an
// unknown reference scenario.
func (Kind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	if len(c.Split.Train) == 0 {
		return fmt.Errorf("stage %s (%s): the campaign's split has no training years; the climatology is computed from them", stage, KindName)
	}
	if _, err := referenceScenario(s.String("reference_scenario"), c); err != nil {
		return fmt.Errorf("stage %s: %w", stage, err)
	}
	return nil
}

func referenceScenario(name string, c *pipeline.CampaignInfo) (string, error) {
	if name == "" {
		if len(c.Scenarios) == 0 {
			return "", fmt.Errorf("setting reference_scenario is empty and the campaign lists no scenarios")
		}
		return c.Scenarios[0].Name, nil
	}
	var names []string
	for _, sc := range c.Scenarios {
		if sc.Name == name {
			return name, nil
		}
		names = append(names, sc.Name)
	}
	return "", fmt.Errorf("setting reference_scenario: %q is not a scenario of the campaign (scenarios: %s)", name, strings.Join(names, ", "))
}

// OutputFile is the kind's one output.
const OutputFile = label.ClimatologyFile

type source struct {
	year int
	path string
	fl   *label.Fields
	read func(int) ([]float64, error)
}

// Run computes the climatology.
func (Kind) Run(ctx context.Context, job *pipeline.Job) error {
	v := job.Settings
	ref, err := referenceScenario(v.String("reference_scenario"), &job.Campaign)
	if err != nil {
		return err
	}
	split := job.Campaign.Split
	if len(split.Train) == 0 {
		return fmt.Errorf("stage %s: the campaign's split has no training years", job.Stage)
	}
	var srcs []*source
	for _, in := range job.Inputs {
		if in.Scenario != ref {
			continue
		}
		year, err := strconv.Atoi(in.Block)
		if err != nil || split.Role(year) != "train" {
			continue
		}
		for _, f := range in.Files {
			if filepath.Base(f) == label.FieldsFile {
				srcs = append(srcs, &source{year: year, path: f})
			}
		}
	}
	if len(srcs) == 0 {
		return fmt.Errorf("stage %s: no fields.nc input of scenario %q in a training year (training periods %v); list the subset stage among its inputs", job.Stage, ref, split.Train)
	}
	sort.Slice(srcs, func(a, b int) bool {
		if srcs[a].year != srcs[b].year {
			return srcs[a].year < srcs[b].year
		}
		return srcs[a].path < srcs[b].path
	})
	defer func() {
		for _, s := range srcs {
			if s.fl != nil {
				s.fl.Close()
			}
		}
	}()
	var quantity string
	top := v.Float("ar_ivt_top")
	for i, s := range srcs {
		s.fl, err = label.OpenFields(s.path)
		if err != nil {
			return err
		}
		q, read, err := label.ARQuantity(s.fl, top)
		if err != nil {
			return err
		}
		s.read = read
		if i == 0 {
			quantity = q
			continue
		}
		if err := srcs[0].fl.Grid.SameAs(s.fl.Grid); err != nil {
			return fmt.Errorf("%s and %s: %w", srcs[0].path, s.path, err)
		}
		if q != quantity {
			return fmt.Errorf("%s gives %s but %s gives %s; every training year must carry the same AR channel", s.path, q, srcs[0].path, quantity)
		}
	}
	g := srcs[0].fl.Grid
	width, bins := label.HistogramRange(quantity)
	pct := v.Float("percentile")
	minN := v.Int("min_samples")
	var months [12]label.ClimatologyMonth
	for m := 1; m <= 12; m++ {
		h := label.NewHistogram(g.Len(), bins, width)
		for _, s := range srcs {
			for step, t := range s.fl.Time.Times {
				if t.Month != m {
					continue
				}
				if err := ctx.Err(); err != nil {
					return err
				}
				x, err := s.read(step)
				if err != nil {
					return err
				}
				if err := h.Add(x); err != nil {
					return fmt.Errorf("%s: %w", s.path, err)
				}
			}
		}
		counts := make([]int, g.Len())
		for i := range counts {
			counts[i] = h.Count(i)
		}
		months[m-1] = label.ClimatologyMonth{Threshold: h.Percentile(pct, minN), Samples: counts}
	}
	years := yearsText(srcs)
	job.Logf("%s: %gth percentile of %s from %d files of scenario %s, years %s", KindName, pct, quantity, len(srcs), ref, years)
	info := label.ClimatologyInfo{Quantity: quantity, Percentile: pct, Scenario: ref, Years: years, MinSamples: minN}
	return label.WriteClimatology(filepath.Join(job.OutDir, OutputFile), g, months, info, label.Provenance(KindName, Version, job))
}

// yearsText writes the years as ranges: "1980-1984, 1990".
func yearsText(srcs []*source) string {
	var ys []int
	for _, s := range srcs {
		if len(ys) == 0 || ys[len(ys)-1] != s.year {
			ys = append(ys, s.year)
		}
	}
	var parts []string
	for i := 0; i < len(ys); {
		j := i
		for j+1 < len(ys) && ys[j+1] == ys[j]+1 {
			j++
		}
		if i == j {
			parts = append(parts, strconv.Itoa(ys[i]))
		} else {
			parts = append(parts, fmt.Sprintf("%d-%d", ys[i], ys[j]))
		}
		i = j + 1
	}
	return strings.Join(parts, ", ")
}
