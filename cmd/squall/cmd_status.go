package main

import (
	"encoding/json"
	"fmt"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/pipeline"
)

func newStatusCmd(e *env) *cobra.Command {
	var asJSON bool
	cmd := &cobra.Command{
		Use:   "status CAMPAIGN",
		Short: "Show the last run: each instance ok, failed or reused, its time and outputs",
		Args:  argsExactly(1, "one campaign file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			c, err := pipeline.Load(args[0], e.registry)
			if err != nil {
				return err
			}
			rec, err := pipeline.LastRunRecord(c.StoreDir)
			if err != nil {
				return err
			}
			if asJSON {
				return json.NewEncoder(e.stdout).Encode(rec)
			}
			fmt.Fprintf(e.stdout, "last run %s: %s, %.1fs, started %s\n", rec.ID, rec.Status, rec.Seconds, rec.Started.Local().Format("2006-01-02 15:04:05"))
			tw := tabwriter.NewWriter(e.stdout, 0, 4, 2, ' ', 0)
			fmt.Fprintln(tw, "INSTANCE\tSTATE\tSECONDS\tOUTPUT")
			for _, in := range rec.Instances {
				fmt.Fprintf(tw, "%s\t%s\t%.2f\t%s\n", in.Label, in.State, in.Seconds, dash(in.OutputDir))
			}
			tw.Flush()
			for _, in := range rec.Instances {
				if in.State != pipeline.StateFailed {
					continue
				}
				fmt.Fprintf(e.stdout, "\n%s failed: %s\n", in.Label, firstLineOf(in.Error))
				if in.LogTail != "" {
					fmt.Fprintf(e.stdout, "  last lines of its output (%s):\n", in.LogFile)
					for _, l := range strings.Split(in.LogTail, "\n") {
						fmt.Fprintln(e.stdout, "  | "+l)
					}
				}
			}
			return nil
		},
	}
	cmd.Flags().BoolVar(&asJSON, "json", false, "print the whole run record as JSON")
	return cmd
}
