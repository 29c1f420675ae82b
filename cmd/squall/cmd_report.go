package main

import (
	"encoding/json"
	"path/filepath"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/report"
)

// writeReport writes the HTML report of a run; path "" means report.html
// beside the campaign file. It returns the path written.
func writeReport(e *env, rec *pipeline.RunRecord, path string) (string, error) {
	if path == "" {
		path = filepath.Join(filepath.Dir(rec.CampaignFile), "report.html")
	}
	return path, report.Write(path, reportInput(rec))
}

// reportInput maps a run record onto the report's own input type.
func reportInput(rec *pipeline.RunRecord) report.Input {
	pretty, _ := json.MarshalIndent(rec, "", "  ")
	in := report.Input{
		Campaign: rec.Campaign, CampaignFile: rec.CampaignFile, Tool: rec.Tool, RunID: rec.ID,
		Status: rec.Status, Record: string(pretty),
	}
	for _, sc := range rec.Info.Scenarios {
		in.Scenarios = append(in.Scenarios, report.Scenario{Name: sc.Name, FirstYear: sc.FirstYear, LastYear: sc.LastYear, Calendar: sc.Calendar, Blocks: sc.Blocks})
	}
	for _, ch := range rec.Info.Channels {
		q := ch.StandardName
		if ch.Derived != "" {
			q = ch.Derived
		}
		if q == "" {
			q = ch.Variable
		}
		in.Channels = append(in.Channels, report.Channel{Name: ch.Name, Quantity: q, LevelPa: ch.LevelPa, Units: ch.Units})
	}
	for _, st := range rec.Stages {
		in.Stages = append(in.Stages, report.Stage{Name: st.Name, Kind: st.Kind, Fan: st.Fan, Inputs: st.Inputs})
	}
	for _, i := range rec.Instances {
		reason := i.Reason
		if i.State == pipeline.StateFailed {
			reason = firstLineOf(i.Error)
		}
		in.Instances = append(in.Instances, report.Instance{Stage: i.Stage, Scenario: i.Scenario, Block: i.Block, Member: i.Member,
			State: i.State, Seconds: i.Seconds, Reason: reason})
		if i.OutputDir != "" {
			in.Outputs = append(in.Outputs, report.Output{Stage: i.Stage, Kind: i.Kind, Scenario: i.Scenario, Block: i.Block, Member: i.Member, Dir: i.OutputDir})
		}
	}
	return in
}
