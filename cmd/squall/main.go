// Command squall runs extreme-weather detection campaigns: see README.md.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/cache"
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/all"
)

// version is set at build time with -ldflags "-X main.version=...".
var version = "0.1.0-dev"

// Exit codes are part of the interface; keep them in step with exitHelp.
const (
	exitOK          = 0
	exitError       = 1
	exitInvalid     = 2
	exitStageFailed = 3
	exitLocked      = 4
	exitDamaged     = 5
	exitInterrupted = 130
)

const exitHelp = `Exit codes:
  0    success
  1    other error (file system, internal)
  2    invalid campaign file, site profile or command line
  3    a stage instance failed (others may have completed; rerun retries only what failed)
  4    the store is in use by another squall process
  5    the store index is damaged (squall store rebuild CAMPAIGN)
  130  interrupted (Ctrl-C or SIGTERM); state is consistent, rerun to continue`

// env is what a subcommand needs from the outside world; tests inject it.
type env struct {
	stdout, stderr io.Writer
	registry       *pipeline.Registry
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	e := &env{stdout: os.Stdout, stderr: os.Stderr, registry: all.Registry()}
	os.Exit(execute(ctx, e, os.Args[1:]))
}

func execute(ctx context.Context, e *env, args []string) int {
	root := newRoot(e)
	root.SetArgs(args)
	root.SetOut(e.stdout)
	root.SetErr(e.stderr)
	err := root.ExecuteContext(ctx)
	code := exitCode(err)
	if err != nil && code != exitOK {
		fmt.Fprintln(e.stderr, "squall:", err)
	}
	return code
}

// exitCode maps errors to the documented codes, in one switch.
func exitCode(err error) int {
	var invalid *pipeline.InvalidError
	var spec pipeline.SpecErrors
	var failed *pipeline.StageFailedError
	var locked *cache.LockedError
	var damaged *cache.CorruptError
	var usage *usageError
	switch {
	case err == nil:
		return exitOK
	case errors.Is(err, pipeline.ErrInterrupted), errors.Is(err, context.Canceled):
		return exitInterrupted
	case errors.As(err, &locked):
		return exitLocked
	case errors.As(err, &damaged):
		return exitDamaged
	case errors.As(err, &failed):
		return exitStageFailed
	case errors.As(err, &invalid), errors.As(err, &spec), errors.As(err, &usage):
		return exitInvalid
	}
	return exitError
}

type usageError struct{ msg string }

func (u *usageError) Error() string { return u.msg }

func newRoot(e *env) *cobra.Command {
	root := &cobra.Command{
		Use:   "squall",
		Short: "Run extreme-weather detection campaigns over climate-model output",
		Long: `squall runs a whole detection campaign (subset, normalize, label, shard,
batch scripts, evaluate, catalog, trends) from one YAML file, reusing every
stage instance whose inputs did not change.

Heuristic detections and trends are research output, not forecasts or
warnings; decisions about risk belong to official forecast agencies.

` + exitHelp,
		SilenceUsage:  true,
		SilenceErrors: true,
		Version:       version,
	}
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error {
		return &usageError{err.Error() + " (see `" + c.CommandPath() + " --help`)"}
	})
	root.AddCommand(
		newRunCmd(e), newPlanCmd(e), newStatusCmd(e), newKindsCmd(e), newGraphCmd(e),
		newStoreCmd(e), newRecordCmd(e), newCompareCmd(e), newExecInstanceCmd(e), newExecJobCmd(e), newDemoCmd(e),
	)
	return root
}

func argsExactly(n int, what string) cobra.PositionalArgs {
	return func(cmd *cobra.Command, args []string) error {
		if len(args) != n {
			return &usageError{fmt.Sprintf("%s: expected %s (see `%s --help`)", cmd.CommandPath(), what, cmd.CommandPath())}
		}
		return nil
	}
}
