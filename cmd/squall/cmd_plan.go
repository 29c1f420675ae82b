package main

import (
	"encoding/json"
	"fmt"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/cache"
	"github.com/squall-climate/squall/pipeline"
)

type planRow struct {
	Stage    string `json:"stage"`
	Scenario string `json:"scenario"`
	Block    string `json:"block"`
	Member   string `json:"member,omitempty"`
	Action   string `json:"action"`
	Reason   string `json:"reason"`
}

func newPlanCmd(e *env) *cobra.Command {
	var asJSON bool
	cmd := &cobra.Command{
		Use:   "plan CAMPAIGN",
		Short: "Show which instances would run or be reused, and why, without running anything",
		Args:  argsExactly(1, "one campaign file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			c, err := pipeline.Load(args[0], e.registry)
			if err != nil {
				return err
			}
			s, err := cache.Open(c.StoreDir, cache.Options{Command: "squall plan " + args[0]})
			if err != nil {
				return err
			}
			defer s.Close()
			p, err := pipeline.NewPlan(c, s)
			if err != nil {
				return err
			}
			rows := make([]planRow, 0, len(p.Steps))
			for _, st := range p.Steps {
				rows = append(rows, planRow{st.Stage.Name, st.Scenario, st.Block, st.Member, string(st.Action), st.Reason})
			}
			if asJSON {
				return json.NewEncoder(e.stdout).Encode(map[string]any{"instances": rows})
			}
			tw := tabwriter.NewWriter(e.stdout, 0, 4, 2, ' ', 0)
			fmt.Fprintln(tw, "STAGE\tSCENARIO\tBLOCK\tMEMBER\tACTION\tWHY")
			for _, r := range rows {
				fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\n", r.Stage, dash(r.Scenario), dash(r.Block), dash(r.Member), r.Action, r.Reason)
			}
			tw.Flush()
			run, reuse := p.Counts()
			fmt.Fprintf(e.stdout, "%d to run, %d to reuse\n", run, reuse)
			return nil
		},
	}
	cmd.Flags().BoolVar(&asJSON, "json", false, `print {"instances":[...]} for scripts`)
	return cmd
}

func dash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}
