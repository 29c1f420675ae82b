package main

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"github.com/squall-climate/squall/cache"
	"github.com/squall-climate/squall/pipeline"
)

func newStoreCmd(e *env) *cobra.Command {
	st := &cobra.Command{Use: "store", Short: "Check, prune or rebuild a campaign's store"}
	st.AddCommand(&cobra.Command{
		Use:   "check CAMPAIGN",
		Short: "Re-hash every recorded output and report any that is missing or altered",
		Args:  argsExactly(1, "one campaign file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			c, err := pipeline.Load(args[0], e.registry)
			if err != nil {
				return err
			}
			s, err := cache.Open(c.StoreDir, cache.Options{Command: "squall store check"})
			if err != nil {
				return err
			}
			defer s.Close()
			recs, err := s.Records()
			if err != nil {
				return &cache.CorruptError{Path: filepath.Join(c.StoreDir, "index.db"), Err: err}
			}
			bad := 0
			for _, r := range recs {
				if p := s.CheckOutputs(r, true); p != nil {
					bad++
					fmt.Fprintf(e.stdout, "altered  %s (%s %s): %s\n", r.Key.Short(), r.Stage, r.Instance, p)
					// Never trust it again: the next run recomputes it.
					if err := s.Forget(r.Key); err != nil {
						return err
					}
				}
			}
			fmt.Fprintf(e.stdout, "%d recorded instance outputs checked, %d altered or missing (forgotten; the next run recomputes them)\n", len(recs), bad)
			if bad > 0 {
				return fmt.Errorf("store check found %d damaged instance outputs", bad)
			}
			return nil
		},
	})
	st.AddCommand(&cobra.Command{
		Use:   "prune CAMPAIGN [CAMPAIGN...]",
		Short: "Delete stored outputs that none of the given campaigns would reuse",
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) == 0 {
				return &usageError{"store prune: name at least one campaign file"}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			keep := map[cache.Digest]bool{}
			var storeDir string
			var campaigns []*pipeline.Campaign
			for _, a := range args {
				c, err := pipeline.Load(a, e.registry)
				if err != nil {
					return err
				}
				if storeDir != "" && c.StoreDir != storeDir {
					return &usageError{fmt.Sprintf("%s uses store %s, not %s: prune one store at a time", a, c.StoreDir, storeDir)}
				}
				storeDir = c.StoreDir
				campaigns = append(campaigns, c)
			}
			s, err := cache.Open(storeDir, cache.Options{Command: "squall store prune"})
			if err != nil {
				return err
			}
			defer s.Close()
			for _, c := range campaigns {
				keys, err := pipeline.ReferencedKeys(c, s)
				if err != nil {
					return err
				}
				for k := range keys {
					keep[k] = true
				}
			}
			n, bytes, err := s.Prune(keep)
			if err != nil {
				return err
			}
			fmt.Fprintf(e.stdout, "pruned %d instance outputs (%.1f MB); kept %d referenced\n", n, float64(bytes)/1e6, len(keep))
			return nil
		},
	})
	st.AddCommand(&cobra.Command{
		Use:   "rebuild CAMPAIGN",
		Short: "Rebuild a damaged index from the receipts beside the stored outputs",
		Args:  argsExactly(1, "one campaign file"),
		RunE: func(cmd *cobra.Command, args []string) error {
			c, err := pipeline.Load(args[0], e.registry)
			if err != nil {
				return err
			}
			if _, err := os.Stat(c.StoreDir); err != nil {
				return fmt.Errorf("no store at %s", c.StoreDir)
			}
			kept, dropped, err := cache.Rebuild(c.StoreDir)
			if err != nil {
				return err
			}
			fmt.Fprintf(e.stdout, "index rebuilt: %d instances recovered from receipts, %d receipts dropped (outputs missing or altered); the old index is kept as index.db.damaged\n", kept, dropped)
			return nil
		},
	})
	return st
}
