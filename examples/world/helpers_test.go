package world

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
)

// Tests share generated worlds, made once per run in a temporary
// directory removed by TestMain.
var testRoot string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "world-test-")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(2)
	}
	testRoot = dir
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

type generated struct {
	once sync.Once
	opt  Options
	sum  Summary
	err  error
}

func (g *generated) get(t *testing.T) (Options, Summary) {
	t.Helper()
	g.once.Do(func() {
		g.sum, g.err = Generate(context.Background(), g.opt)
	})
	if g.err != nil {
		t.Fatalf("generate %s: %v", g.opt.Dir, g.err)
	}
	return g.opt, g.sum
}

func mustPreset(name string) Options {
	o, err := Preset(name)
	if err != nil {
		panic(err)
	}
	return o
}

// small is the test world: the tiny preset at the demo's 1.5 degree
// spacing, 3 days of the first year of each scenario (about 6 MB raw).
var small = func() *generated {
	o := mustPreset("tiny")
	o.Resolution = 1.5
	o.Days = 3
	for i := range o.Scenarios {
		o.Scenarios[i].LastYear = o.Scenarios[i].FirstYear
		o.Scenarios[i].Rivers = Rate{3, 0}
	}
	return &generated{opt: o}
}()

func smallWorld(t *testing.T) (Options, Summary) {
	if small.opt.Dir == "" {
		small.opt.Dir = filepath.Join(testRoot, "small")
	}
	return small.get(t)
}

// filesOf lists the paths of a kind in a summary.
func filesOf(sum Summary, kind string) []string {
	var out []string
	for _, f := range sum.Files {
		if f.Kind == kind {
			out = append(out, f.Path)
		}
	}
	return out
}

// digests returns the SHA-256 of every file under dir, by relative path.
func digests(t *testing.T, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.Walk(dir, func(p string, info os.FileInfo, err error) error {
		if err != nil || info.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		h := sha256.Sum256(b)
		rel, _ := filepath.Rel(dir, p)
		out[rel] = hex.EncodeToString(h[:])
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func sortedKeys(m map[string]string) []string {
	var ks []string
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

// pyReport is what testdata/check_files.py prints per file.
type pyReport struct {
	Global         map[string]any            `json:"global"`
	Vars           map[string]map[string]any `json:"vars"`
	Dates          []string                  `json:"dates"`
	MaskCounts     []int                     `json:"mask_counts"`
	IWVMedianRatio *float64                  `json:"iwv_median_ratio"`
	IVTMax         *float64                  `json:"ivt_max"`
	HybridOrdered  *bool                     `json:"hybrid_ordered"`
	HybridAbove    *bool                     `json:"hybrid_above_ground"`
	PSMin          *float64                  `json:"ps_min"`
}

// python runs the independent reader on files with Debian's
// /usr/bin/python3 (python3-netcdf4, python3-numpy), skipping the test when
// they are missing.
func python(t *testing.T, files ...string) map[string]pyReport {
	t.Helper()
	const py = "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		t.Skip("skipping: /usr/bin/python3 not found (install Debian python3-netcdf4 and python3-numpy)")
	}
	if out, err := exec.Command(py, "-c", "import netCDF4, numpy").CombinedOutput(); err != nil {
		t.Skipf("skipping: /usr/bin/python3 lacks netCDF4 or numpy (install Debian python3-netcdf4 python3-numpy): %s", strings.TrimSpace(string(out)))
	}
	cmd := exec.Command(py, append([]string{"testdata/check_files.py"}, files...)...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("check_files.py: %v\n%s", err, stderr.String())
	}
	rep := map[string]pyReport{}
	if err := json.Unmarshal(out, &rep); err != nil {
		t.Fatalf("check_files.py output: %v", err)
	}
	return rep
}

// readF32 reads a little-endian float32 file written by check_files.py.
func readF32(t *testing.T, path string) []float32 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	out := make([]float32, len(b)/4)
	for i := range out {
		u := uint32(b[4*i]) | uint32(b[4*i+1])<<8 | uint32(b[4*i+2])<<16 | uint32(b[4*i+3])<<24
		out[i] = math.Float32frombits(u)
	}
	return out
}
