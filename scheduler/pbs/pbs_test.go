package pbs_test

import (
	"bufio"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/enginetest"
	"github.com/squall-climate/squall/scheduler/pbs"
)

var update = flag.Bool("update", false, "rewrite golden files")

// TestMain lets this test binary act as fake qsub, qstat and qdel.
func TestMain(m *testing.M) {
	switch filepath.Base(os.Args[0]) {
	case "qsub":
		os.Exit(fakeQsub(os.Args[1:]))
	case "qstat":
		os.Exit(fakeQstat(os.Args[1:]))
	case "qdel":
		os.Exit(fakeQdel(os.Args[1:]))
	}
	os.Exit(m.Run())
}

const server = ".fakeserver"

// fakeQsub accepts: qsub [-W depend=afterok:ID[:ID...]] [-j oe -o PATH] SCRIPT,
// checks every #PBS line of SCRIPT against the directive grammar, and runs
// it through the fake.
func fakeQsub(args []string) int {
	var after []string
	var log string
	for len(args) > 1 {
		switch args[0] {
		case "-W":
			dep, ok := strings.CutPrefix(args[1], "depend=afterok:")
			if !ok {
				fmt.Fprintf(os.Stderr, "qsub: fake understands only -W depend=afterok:..., got %q\n", args[1])
				return 2
			}
			for _, id := range strings.Split(dep, ":") {
				after = append(after, strings.TrimSuffix(id, server))
			}
		case "-o":
			log = args[1]
		case "-j":
			if args[1] != "oe" {
				return 2
			}
		default:
			fmt.Fprintf(os.Stderr, "qsub: unexpected option %q\n", args[0])
			return 2
		}
		args = args[2:]
	}
	if len(args) != 1 {
		fmt.Fprintln(os.Stderr, "qsub: want exactly one script")
		return 2
	}
	if err := checkDirectives(args[0]); err != nil {
		fmt.Fprintln(os.Stderr, "qsub:", err)
		return 1
	}
	n, err := enginetest.OpenFake().Submit(args[0], after, log, "")
	if err != nil {
		fmt.Fprintln(os.Stderr, "qsub:", err)
		return 1
	}
	fmt.Println(n + server)
	return 0
}

func checkDirectives(script string) error {
	f, err := os.Open(script)
	if err != nil {
		return err
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if l := sc.Text(); strings.HasPrefix(l, "#PBS") && !pbs.DirectiveRE.MatchString(l) {
			return fmt.Errorf("directive outside the grammar: %q", l)
		}
	}
	return sc.Err()
}

// fakeQstat answers `qstat -x -f -F json ID...` in PBS's JSON layout.
func fakeQstat(args []string) int {
	if len(args) < 4 || strings.Join(args[:4], " ") != "-x -f -F json" {
		fmt.Fprintf(os.Stderr, "qstat: fake understands only -x -f -F json, got %q\n", args)
		return 2
	}
	var ns []string
	for _, id := range args[4:] {
		ns = append(ns, strings.TrimSuffix(id, server))
	}
	st, err := enginetest.OpenFake().States(ns)
	if err != nil {
		fmt.Fprintln(os.Stderr, "qstat:", err)
		return 1
	}
	jobs := map[string]map[string]any{}
	rc := 0
	for _, n := range ns {
		s := st[n]
		j := map[string]any{}
		switch s.State {
		case scheduler.Pending:
			j["job_state"] = "Q"
		case scheduler.Running:
			j["job_state"] = "R"
		case scheduler.Succeeded, scheduler.Failed:
			j["job_state"], j["Exit_status"] = "F", s.ExitCode
		case scheduler.Cancelled:
			j["job_state"] = "F"
			if s.Reason == "DependencyNeverSatisfied" {
				j["comment"] = "Job deleted as result of dependency on job"
			} else {
				j["Exit_status"] = 256 + 15
			}
		default:
			fmt.Fprintf(os.Stderr, "qstat: Unknown Job Id %s%s\n", n, server)
			rc = 153
			continue
		}
		jobs[n+server] = j
	}
	if len(jobs) > 0 {
		json.NewEncoder(os.Stdout).Encode(map[string]any{"Jobs": jobs})
	}
	return rc
}

func fakeQdel(args []string) int {
	var ns []string
	for _, id := range args {
		ns = append(ns, strings.TrimSuffix(id, server))
	}
	if err := enginetest.OpenFake().Cancel(ns); err != nil {
		fmt.Fprintln(os.Stderr, "qdel:", err)
		return 1
	}
	return 0
}

func profile(t *testing.T) *scheduler.Profile {
	p := scheduler.Default()
	p.Engine = "pbs"
	p.Walltime = scheduler.Duration(time.Hour)
	p.Node.Cores = 2
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestConformance(t *testing.T) {
	enginetest.InstallFake(t, "qsub", "qstat", "qdel")
	enginetest.Run(t, enginetest.Harness{
		Profile: profile(t),
		New:     func(p *scheduler.Profile) scheduler.Engine { return pbs.New(p) },
	})
}

func TestGolden(t *testing.T) {
	e := pbs.New(enginetest.GoldenProfile("pbs", "-m n", "-r y"))
	scripts := enginetest.Golden(t, e, enginetest.GoldenSpecs(), filepath.Join("testdata", "golden"), ".pbs", *update)
	for name, s := range scripts {
		for _, l := range strings.Split(string(s), "\n") {
			if strings.HasPrefix(l, "#PBS") && !pbs.DirectiveRE.MatchString(l) {
				t.Errorf("%s: directive outside the grammar: %q", name, l)
			}
		}
	}
	// The select statement carries the node shape (PBS Professional
	// Reference Guide: select=N:ncpus=..:mpiprocs=..:ngpus=..).
	if !strings.Contains(string(scripts["train-seg1"]), "#PBS -l select=4:ncpus=42:mpiprocs=6:ngpus=6\n") {
		t.Errorf("train-seg1: select statement missing or wrong:\n%s", scripts["train-seg1"])
	}
}

func TestBadDirective(t *testing.T) {
	p := enginetest.GoldenProfile("pbs", "-l select=1:ncpus=2 extra words")
	_, err := pbs.New(p).Render(&scheduler.JobSpec{Name: "x", Argv: []string{"true"}})
	if err == nil || !strings.Contains(err.Error(), "directives[0]") {
		t.Errorf("Render with a directive outside the grammar: %v, want an error naming directives[0]", err)
	}
}
