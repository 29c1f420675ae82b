package main

import (
	"encoding/json"
	"fmt"
	"os"
	"runtime"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/cache"
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/scheduler"
	schedall "github.com/squall-climate/squall/scheduler/all"
)

func newRunCmd(e *env) *cobra.Command {
	var jobs int
	var failFast, asJSON bool
	var reportPath, site string
	cmd := &cobra.Command{
		Use:   "run CAMPAIGN",
		Short: "Run every stage instance that is not up to date; reuse the rest",
		Args:  argsExactly(1, "one campaign file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			var rec *pipeline.RunRecord
			var err error
			if site != "" {
				rec, err = runOnSite(cmd, e, args[0], site, asJSON)
			} else {
				rec, err = runCampaign(cmd, e, args[0], jobs, failFast, asJSON)
			}
			if rec != nil && !asJSON {
				printRunSummary(e, rec)
			}
			if rec != nil && asJSON {
				b, _ := json.Marshal(map[string]any{"type": "summary", "status": rec.Status, "counts": rec.Counts, "seconds": rec.Seconds, "record": rec.ID})
				fmt.Fprintln(e.stdout, string(b))
			}
			if rec != nil && reportPath != "-" {
				if path, rerr := writeReport(e, rec, reportPath); rerr != nil {
					fmt.Fprintln(e.stderr, "squall: report:", rerr)
				} else if path != "" && !asJSON {
					fmt.Fprintln(e.stdout, "report:", path)
				}
			}
			return err
		},
	}
	cmd.Flags().IntVarP(&jobs, "jobs", "j", runtime.NumCPU(), "instances to run at once")
	cmd.Flags().BoolVar(&failFast, "fail-fast", false, "stop starting new instances after the first failure (default: independent instances continue)")
	cmd.Flags().BoolVar(&asJSON, "json", false, "print progress and the summary as JSON lines")
	cmd.Flags().StringVar(&site, "site", "", "run every instance as a job of the batch system in this site profile (YAML) instead of on this machine")
	cmd.Flags().StringVar(&reportPath, "report", "", "where to write the HTML report (default report.html beside the campaign file; - for none)")
	return cmd
}

func runCampaign(cmd *cobra.Command, e *env, file string, jobs int, failFast, asJSON bool) (*pipeline.RunRecord, error) {
	c, err := pipeline.Load(file, e.registry)
	if err != nil {
		return nil, err
	}
	s, err := cache.Open(c.StoreDir, cache.Options{Command: "squall run " + file})
	if err != nil {
		return nil, err
	}
	defer s.Close()
	p, err := pipeline.NewPlan(c, s)
	if err != nil {
		return nil, err
	}
	prog := newProgress(e, asJSON)
	defer prog.close()
	return pipeline.Execute(cmd.Context(), p, s, pipeline.RunOptions{
		Jobs: jobs, FailFast: failFast, Tool: "squall " + version, OnEvent: prog.event,
	})
}

func printRunSummary(e *env, rec *pipeline.RunRecord) {
	fmt.Fprintf(e.stdout, "%s: %d ran, %d reused, %d failed, %d blocked, %d not run in %.1fs (record %s)\n",
		rec.Status, rec.Counts[pipeline.StateRan], rec.Counts[pipeline.StateReused], rec.Counts[pipeline.StateFailed],
		rec.Counts[pipeline.StateBlocked], rec.Counts[pipeline.StateNotRun], rec.Seconds, rec.ID)
	for _, in := range rec.Instances {
		if in.State == pipeline.StateFailed {
			fmt.Fprintf(e.stdout, "  failed %s: %s\n", in.Label, firstLineOf(in.Error))
		}
	}
}

func firstLineOf(s string) string {
	for i, r := range s {
		if r == '\n' {
			return s[:i]
		}
	}
	return s
}

// runOnSite runs the campaign's instances as jobs of a site's batch
// system; the coordinator (this process) holds the store and folds the
// jobs' receipts into it.
func runOnSite(cmd *cobra.Command, e *env, file, site string, asJSON bool) (*pipeline.RunRecord, error) {
	c, err := pipeline.Load(file, e.registry)
	if err != nil {
		return nil, err
	}
	_, engine, err := schedall.Load(site)
	if err != nil {
		return nil, &pipeline.InvalidError{Err: err}
	}
	s, err := cache.Open(c.StoreDir, cache.Options{Command: "squall run --site " + site + " " + file})
	if err != nil {
		return nil, err
	}
	defer s.Close()
	p, err := pipeline.NewPlan(c, s)
	if err != nil {
		return nil, err
	}
	self, err := os.Executable()
	if err != nil {
		return nil, err
	}
	prog := newProgress(e, asJSON)
	defer prog.close()
	return pipeline.ExecuteCluster(cmd.Context(), p, s, scheduler.ForPipeline(engine), pipeline.ClusterOptions{
		Tool: "squall " + version, OnEvent: prog.event,
		Argv: func(job string) []string { return []string{self, "exec-job", job} },
	})
}
