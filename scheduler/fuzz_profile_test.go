package scheduler_test

// FuzzProfile feeds arbitrary bytes to the site-profile decoder and
// validator. Properties: never panics; a refusal names the profile file;
// an accepted profile only holds values the engines may write into
// directive lines (names from the safe set, one-line setup, directives and
// launcher words, an absolute state_dir), and every engine renders a
// plain job for it whose header holds nothing but comments and directives
// (so no profile value becomes a command before the prologue).
//
// A longer run: go test -run '^$' -fuzz FuzzProfile -fuzztime 10m ./scheduler

import (
	"os"
	"regexp"
	"strings"
	"testing"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/all"
)

var (
	// The rule Validate applies to partition and account.
	profileNameRE = regexp.MustCompile(`^[A-Za-z0-9_.+@:][A-Za-z0-9_.+@:-]{0,127}$`)
	// What the header of a job script may contain, per engine.
	headerLineRE = regexp.MustCompile(`^(#!/bin/bash|#(SBATCH|PBS|BSUB) .*|# .*)$`)
)

func FuzzProfile(f *testing.F) {
	for _, p := range []string{"../examples/demo/site-workstation.yaml", "../examples/demo/site-cluster.yaml"} {
		if b, err := os.ReadFile(p); err == nil {
			f.Add(b)
		}
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		const file = "site.yaml"
		p := scheduler.Default()
		err := p.Decode(file, data)
		if err == nil {
			err = p.Validate()
		}
		if err != nil {
			if !strings.Contains(err.Error(), file) {
				t.Fatalf("refusal does not name the profile file: %v", err)
			}
			return
		}
		for _, v := range []string{p.Partition, p.Account} {
			if v != "" && !profileNameRE.MatchString(v) {
				t.Fatalf("accepted partition or account %q", v)
			}
		}
		for _, l := range append(append(append([]string{p.Node.Scratch.Path}, p.Setup...), p.Directives...), p.Launcher...) {
			if strings.ContainsAny(l, "\n\r\x00") {
				t.Fatalf("accepted a value with a line break or NUL: %q", l)
			}
		}
		if p.StateDir != "" && !strings.HasPrefix(p.StateDir, "/") {
			t.Fatalf("accepted a relative state_dir %q", p.StateDir)
		}
		e, err := all.New(p)
		if err != nil {
			t.Fatalf("validated profile without an engine: %v", err)
		}
		script, err := e.Render(&scheduler.JobSpec{Name: "fuzz", Argv: []string{"true"}, Dir: "/tmp"})
		if err != nil {
			return // a profile may be too small for even one core-hour; that is an error, not a script
		}
		for _, l := range strings.Split(string(script), "\n") {
			if l == "set -eo pipefail" {
				break
			}
			if !headerLineRE.MatchString(l) {
				t.Fatalf("job script header has a line that is neither a comment nor a directive: %q\n%s", l, script)
			}
		}
	})
}
