package main

import (
	"github.com/spf13/cobra"
)

func newDemoCmd(e *env) *cobra.Command {
	return &cobra.Command{
		Use:   "demo [DIR]",
		Short: "Generate the invented demo world, write its campaign file and run it",
	}
}
