package main

import (
	"encoding/json"
	"fmt"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/pipeline"
)

func newKindsCmd(e *env) *cobra.Command {
	var asJSON bool
	cmd := &cobra.Command{
		Use:   "kinds [KIND...]",
		Short: "List the stage kinds with their settings, types, units and defaults",
		RunE: func(cmd *cobra.Command, args []string) error {
			names := e.registry.Names()
			if len(args) > 0 {
				names = args
			}
			type settingOut struct {
				Name    string   `json:"name"`
				Type    string   `json:"type"`
				Unit    string   `json:"unit,omitempty"`
				Default any      `json:"default"`
				Min     *float64 `json:"min,omitempty"`
				Max     *float64 `json:"max,omitempty"`
				Choices []string `json:"choices,omitempty"`
				Sweep   bool     `json:"sweep,omitempty"`
				Doc     string   `json:"doc"`
			}
			type kindOut struct {
				Name     string       `json:"name"`
				Version  int          `json:"version"`
				Fan      string       `json:"fan"`
				Doc      string       `json:"doc"`
				Settings []settingOut `json:"settings"`
			}
			var out []kindOut
			for _, n := range names {
				k, ok := e.registry.Lookup(n)
				if !ok {
					return &usageError{fmt.Sprintf("no stage kind %q; known: %s", n, strings.Join(e.registry.Names(), ", "))}
				}
				ko := kindOut{Name: k.Name(), Version: k.Version(), Fan: k.Fan().String(), Doc: k.Doc()}
				for _, s := range k.Settings() {
					ko.Settings = append(ko.Settings, settingOut{s.Name, string(s.Type), s.Unit, s.Default, s.Min, s.Max, s.Choices, s.Sweep, s.Doc})
				}
				out = append(out, ko)
			}
			if asJSON {
				return json.NewEncoder(e.stdout).Encode(out)
			}
			for _, k := range out {
				fmt.Fprintf(e.stdout, "%s (version %d, one instance %s)\n  %s\n", k.Name, k.Version, k.Fan, k.Doc)
				if len(k.Settings) == 0 {
					fmt.Fprintln(e.stdout)
					continue
				}
				tw := tabwriter.NewWriter(e.stdout, 0, 4, 2, ' ', 0)
				fmt.Fprintln(tw, "  SETTING\tTYPE\tUNIT\tDEFAULT\tMEANING")
				for _, s := range k.Settings {
					def := "(required)"
					if s.Default != nil {
						b, _ := json.Marshal(s.Default)
						def = string(b)
					}
					typ := s.Type
					if s.Sweep {
						typ += " (sweepable)"
					}
					fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\n", s.Name, typ, dash(s.Unit), def, s.Doc)
				}
				tw.Flush()
				fmt.Fprintln(e.stdout)
			}
			return nil
		},
	}
	cmd.Flags().BoolVar(&asJSON, "json", false, "print as JSON")
	return cmd
}

func newGraphCmd(e *env) *cobra.Command {
	return &cobra.Command{
		Use:   "graph CAMPAIGN",
		Short: "Print the stage graph in Graphviz DOT (pipe to `dot -Tsvg`)",
		Args:  argsExactly(1, "one campaign file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			c, err := pipeline.Load(args[0], e.registry)
			if err != nil {
				return err
			}
			return c.WriteDOT(e.stdout)
		},
	}
}
