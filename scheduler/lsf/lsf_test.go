package lsf_test

import (
	"bufio"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/enginetest"
	"github.com/squall-climate/squall/scheduler/lsf"
)

var update = flag.Bool("update", false, "rewrite golden files")

// TestMain lets this test binary act as fake bsub, bjobs and bkill.
func TestMain(m *testing.M) {
	switch filepath.Base(os.Args[0]) {
	case "bsub":
		os.Exit(fakeBsub(os.Args[1:]))
	case "bjobs":
		os.Exit(fakeBjobs(os.Args[1:]))
	case "bkill":
		os.Exit(fakeBkill(os.Args[1:]))
	}
	os.Exit(m.Run())
}

var doneRE = regexp.MustCompile(`^done\(([0-9]+)\)$`)

// fakeBsub accepts: bsub [-w "done(ID) && ..." -ti] [-o PATH] [-cwd DIR]
// with the script on standard input, checks its #BSUB lines against the
// grammar, and runs it through the fake.
func fakeBsub(args []string) int {
	var after []string
	var log, dir string
	ti := false
	for len(args) > 0 {
		switch args[0] {
		case "-ti":
			ti = true
			args = args[1:]
			continue
		case "-w":
			for _, c := range strings.Split(args[1], " && ") {
				m := doneRE.FindStringSubmatch(c)
				if m == nil {
					fmt.Fprintf(os.Stderr, "bsub: fake understands only done(ID) conditions, got %q\n", c)
					return 2
				}
				after = append(after, m[1])
			}
		case "-o":
			log = args[1]
		case "-cwd":
			dir = args[1]
		default:
			fmt.Fprintf(os.Stderr, "bsub: unexpected argument %q\n", args[0])
			return 2
		}
		args = args[2:]
	}
	if len(after) > 0 && !ti {
		fmt.Fprintln(os.Stderr, "bsub: a dependency without -ti would pend for ever when it fails")
		return 2
	}
	script, err := io.ReadAll(os.Stdin)
	if err != nil || !strings.HasPrefix(string(script), "#!") {
		fmt.Fprintln(os.Stderr, "bsub: no script on standard input")
		return 2
	}
	sc := bufio.NewScanner(strings.NewReader(string(script)))
	for sc.Scan() {
		if l := sc.Text(); strings.HasPrefix(l, "#BSUB") && !lsf.DirectiveRE.MatchString(l) {
			fmt.Fprintf(os.Stderr, "bsub: directive outside the grammar: %q\n", l)
			return 1
		}
	}
	f, err := os.CreateTemp(os.Getenv(enginetest.FakeStateEnv), "stdin-*.sh")
	if err != nil {
		return 1
	}
	f.Write(script)
	f.Close()
	n, err := enginetest.OpenFake().Submit(f.Name(), after, log, dir)
	if err != nil {
		fmt.Fprintln(os.Stderr, "bsub:", err)
		return 1
	}
	fmt.Printf("Job <%s> is submitted to queue <normal>.\n", n)
	return 0
}

// fakeBjobs answers `bjobs -a -noheader -o "jobid stat exit_code exit_reason delimiter='|'" ID...`.
func fakeBjobs(args []string) int {
	if len(args) < 4 || args[0] != "-a" || args[1] != "-noheader" || args[2] != "-o" || args[3] != "jobid stat exit_code exit_reason delimiter='|'" {
		fmt.Fprintf(os.Stderr, "bjobs: unexpected arguments %q\n", args)
		return 2
	}
	ns := args[4:]
	st, err := enginetest.OpenFake().States(ns)
	if err != nil {
		fmt.Fprintln(os.Stderr, "bjobs:", err)
		return 1
	}
	rc := 0
	for _, n := range ns {
		s := st[n]
		switch s.State {
		case scheduler.Pending:
			fmt.Printf("%s|PEND|-|-\n", n)
		case scheduler.Running:
			fmt.Printf("%s|RUN|-|-\n", n)
		case scheduler.Succeeded:
			fmt.Printf("%s|DONE|-|-\n", n)
		case scheduler.Failed:
			fmt.Printf("%s|EXIT|%d|-\n", n, s.ExitCode)
		case scheduler.Cancelled:
			if s.Reason == "DependencyNeverSatisfied" {
				fmt.Printf("%s|EXIT|-|Job killed because the dependency condition is invalid\n", n)
			} else {
				fmt.Printf("%s|EXIT|130|Job killed by owner\n", n)
			}
		default:
			fmt.Fprintf(os.Stderr, "Job <%s> is not found\n", n)
			rc = 255
		}
	}
	return rc
}

func fakeBkill(args []string) int {
	if err := enginetest.OpenFake().Cancel(args); err != nil {
		fmt.Fprintln(os.Stderr, "bkill:", err)
		return 1
	}
	return 0
}

func profile(t *testing.T) *scheduler.Profile {
	p := scheduler.Default()
	p.Engine = "lsf"
	p.Walltime = scheduler.Duration(time.Hour)
	p.Node.Cores = 2
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestConformance(t *testing.T) {
	enginetest.InstallFake(t, "bsub", "bjobs", "bkill")
	enginetest.Run(t, enginetest.Harness{
		Profile: profile(t),
		New:     func(p *scheduler.Profile) scheduler.Engine { return lsf.New(p) },
	})
}

func TestGolden(t *testing.T) {
	e := lsf.New(enginetest.GoldenProfile("lsf", `-R "select[mem>4000]"`, "-alloc_flags smt4"))
	scripts := enginetest.Golden(t, e, enginetest.GoldenSpecs(), filepath.Join("testdata", "golden"), ".lsf", *update)
	for name, s := range scripts {
		for _, l := range strings.Split(string(s), "\n") {
			if strings.HasPrefix(l, "#BSUB") && !lsf.DirectiveRE.MatchString(l) {
				t.Errorf("%s: directive outside the grammar: %q", name, l)
			}
		}
	}
	// 4 nodes x 6 ranks: -n is the total, span[ptile=] the ranks per host,
	// -W minutes, -wt minutes (LSF command reference for bsub).
	for _, want := range []string{"#BSUB -n 24\n", `#BSUB -R "span[ptile=6] affinity[core(7)]"` + "\n", "#BSUB -W 360\n", "#BSUB -wa USR1\n#BSUB -wt 10\n"} {
		if !strings.Contains(string(scripts["train-seg1"]), want) {
			t.Errorf("train-seg1 lacks %q", want)
		}
	}
}

func TestBadDirective(t *testing.T) {
	p := enginetest.GoldenProfile("lsf", `-R "a" "b"`)
	_, err := lsf.New(p).Render(&scheduler.JobSpec{Name: "x", Argv: []string{"true"}})
	if err == nil || !strings.Contains(err.Error(), "directives[0]") {
		t.Errorf("Render with a directive outside the grammar: %v, want an error naming directives[0]", err)
	}
}
