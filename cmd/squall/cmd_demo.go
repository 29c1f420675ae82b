package main

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"runtime"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/examples/demo"
	"github.com/squall-climate/squall/examples/world"
)

func newDemoCmd(e *env) *cobra.Command {
	var preset string
	var seed uint64
	var jobs int
	var noRun bool
	cmd := &cobra.Command{
		Use:   "demo [DIR]",
		Short: "Generate the invented demo world, write its campaign file next to it and run it",
		Long: `Generates the invented Halcyon Basin world (climate-model-like netCDF files
with planted cyclones and rivers and their truth), writes the demo campaign
and site profiles into DIR (default squall-demo), and runs the campaign.
Running it again reuses everything that did not change.`,
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) > 1 {
				return &usageError{"demo: at most one directory"}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := "squall-demo"
			if len(args) == 1 {
				dir = args[0]
			}
			dir, _ = filepath.Abs(dir)
			o, err := world.Preset(preset)
			if err != nil {
				return &usageError{err.Error()}
			}
			o.Seed = seed
			o.Dir = filepath.Join(dir, "world")
			if err := generateOnce(cmd, e, o); err != nil {
				return err
			}
			for name, b := range demo.Files() {
				if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
					return err
				}
			}
			campaign := filepath.Join(dir, "campaign.yaml")
			fmt.Fprintf(e.stdout, "demo campaign: %s\n", campaign)
			if noRun {
				return nil
			}
			rec, err := runCampaign(cmd, e, campaign, jobs, false, false)
			if rec != nil {
				printRunSummary(e, rec)
				if path, rerr := writeReport(e, rec, ""); rerr != nil {
					fmt.Fprintln(e.stderr, "squall: report:", rerr)
				} else if path != "" {
					fmt.Fprintf(e.stdout, "report: %s\n", path)
				}
				fmt.Fprintf(e.stdout, "outputs: `squall status %s` lists every instance's output directory\n", campaign)
			}
			return err
		},
	}
	cmd.Flags().StringVar(&preset, "preset", "demo", "world size: demo, tiny (seconds) or bench (gigabytes)")
	cmd.Flags().Uint64Var(&seed, "seed", 1, "seed of the invented world")
	cmd.Flags().IntVarP(&jobs, "jobs", "j", runtime.NumCPU(), "instances to run at once")
	cmd.Flags().BoolVar(&noRun, "no-run", false, "generate the world and write the campaign, but do not run it")
	return cmd
}

// generateOnce generates the world unless the same options already did:
// generation is deterministic, and skipping it keeps file times, so a
// second demo run reuses every instance without even re-hashing.
func generateOnce(cmd *cobra.Command, e *env, o world.Options) error {
	ob, _ := json.Marshal(o)
	sum := sha256.Sum256(ob)
	stamp := filepath.Join(o.Dir, ".generated")
	want := hex.EncodeToString(sum[:])
	if b, err := os.ReadFile(stamp); err == nil && string(b) == want {
		fmt.Fprintf(e.stdout, "world: %s (already generated)\n", o.Dir)
		return nil
	}
	fmt.Fprintf(e.stdout, "world: generating %s ...\n", o.Dir)
	s, err := world.Generate(cmd.Context(), o)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "world: %d files, %.0f MB of fields at %.1f MB/s\n", len(s.Files), float64(s.RawBytes)/1e6, s.MBPerSecond)
	return os.WriteFile(stamp, []byte(want), 0o644)
}
