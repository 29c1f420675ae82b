package main

import (
	"encoding/json"
	"fmt"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

func newRecordCmd(e *env) *cobra.Command {
	return &cobra.Command{
		Use:   "record CAMPAIGN",
		Short: "Print the reproducibility record of the last run (settings, tool version, input and output digests)",
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
			enc := json.NewEncoder(e.stdout)
			enc.SetIndent("", "  ")
			return enc.Encode(rec)
		},
	}
}

func newCompareCmd(e *env) *cobra.Command {
	return &cobra.Command{
		Use:   "compare RECORD RECORD",
		Short: "Compare two reproducibility records: which instances' outputs differ",
		Args:  argsExactly(2, "two record files"),
		RunE: func(cmd *cobra.Command, args []string) error {
			a, err := pipeline.LoadRunRecord(args[0])
			if err != nil {
				return err
			}
			b, err := pipeline.LoadRunRecord(args[1])
			if err != nil {
				return err
			}
			diffs := pipeline.CompareRecords(a, b)
			for _, d := range diffs {
				fmt.Fprintf(e.stdout, "%s: %s\n", d.Instance, d.What)
			}
			if len(diffs) > 0 {
				return fmt.Errorf("%d instances differ between the records", len(diffs))
			}
			fmt.Fprintf(e.stdout, "identical: all %d instances have the same output digests\n", len(a.Instances))
			return nil
		},
	}
}

func newExecInstanceCmd(e *env) *cobra.Command {
	return &cobra.Command{
		Use:    "exec-instance JOBFILE",
		Short:  "Run one stage instance (used by the runner and by cluster jobs)",
		Hidden: true,
		Args:   argsExactly(1, "one job file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			logOpens(e)
			err := pipeline.RunChild(cmd.Context(), args[0], e.registry, e.stderr)
			if err != nil {
				// The runner shows this line as the instance's error.
				fmt.Fprintln(e.stderr, "error: "+err.Error())
			}
			return err
		},
	}
}

func newExecJobCmd(e *env) *cobra.Command {
	return &cobra.Command{
		Use:    "exec-job JOBFILE",
		Short:  "Run one stage instance as a cluster job (used by squall run --site)",
		Hidden: true,
		Args:   argsExactly(1, "one job file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			logOpens(e)
			err := pipeline.RunClusterJob(cmd.Context(), args[0], e.registry, e.stderr)
			if err != nil {
				fmt.Fprintln(e.stderr, "error: "+err.Error())
			}
			return err
		},
	}
}

// logOpens makes every netCDF file an instance opens leave a line in its
// log, so that a crash inside the C library (which no Go code survives)
// is reported with the file that caused it.
func logOpens(e *env) {
	ncio.OnOpen = func(path string) { fmt.Fprintln(e.stderr, "reading "+path) }
}
