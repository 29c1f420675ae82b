package main

// Helpers for the reliability tests of this package (faults_*_test.go and
// badinput_*_test.go): the real command line with the real stage kinds,
// tiny netCDF fixtures written by ncgen from CDL text, and snapshots of a
// directory tree to prove that a failure changed nothing it should not.

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"os/signal"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"testing"

	"github.com/squall-climate/squall/stages/all"
)

// relRealMainEnv makes this test binary behave exactly like the squall
// binary (main's signal handling, every real stage kind). The runner
// re-executes the test binary for each instance (`exec-instance JOB`) and
// children inherit the environment, so setting it in a test makes every
// child of that test use the real kinds.
const relRealMainEnv = "SQUALL_RELIABILITY_REAL_MAIN"

func init() {
	// Runs before TestMain: a child (or a runner started by a test) with
	// the variable set is squall itself.
	if os.Getenv(relRealMainEnv) != "1" {
		return
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	e := &env{stdout: os.Stdout, stderr: os.Stderr, registry: all.Registry()}
	code := execute(ctx, e, os.Args[1:])
	stop()
	os.Exit(code)
}

// relSquall runs the real command line in this process with every real
// stage kind; instance children are this binary with relRealMainEnv set.
func relSquall(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	t.Setenv(relRealMainEnv, "1")
	var out, errw bytes.Buffer
	e := &env{stdout: &out, stderr: &errw, registry: all.Registry()}
	code := execute(context.Background(), e, args)
	return code, out.String(), errw.String()
}

// relNcgen writes a netCDF file from CDL text with ncgen (netcdf-bin), the
// library's own reference tool. format is an ncgen -k value: "nc4" or
// "classic".
func relNcgen(t *testing.T, path, format, cdl string) {
	t.Helper()
	if _, err := exec.LookPath("ncgen"); err != nil {
		t.Skip("ncgen not installed (Debian package netcdf-bin); CI installs it")
	}
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	cdlFile := path + ".cdl"
	if err := os.WriteFile(cdlFile, []byte(cdl), 0o644); err != nil {
		t.Fatal(err)
	}
	defer os.Remove(cdlFile)
	out, err := exec.Command("ncgen", "-k", format, "-o", path, cdlFile).CombinedOutput()
	if err != nil {
		t.Fatalf("ncgen %s: %v\n%s\n%s", path, err, out, cdl)
	}
}

// relCDL is a small raw model file in the shape the subset kind reads:
// CF-1.13, two 6-hourly steps on 11 January 1991 in the noleap calendar,
// two pressure levels, a 3 x 4 latitude-longitude grid; psl and ta with
// _FillValue 1e20 (the CMIP convention). Cases change it by text
// replacement so each case shows exactly what is wrong.
const relCDL = `netcdf fields {
dimensions:
	time = 2 ;
	plev = 2 ;
	lat = 3 ;
	lon = 4 ;
variables:
	double time(time) ;
		time:standard_name = "time" ;
		time:units = "days since 1991-01-01 00:00:00" ;
		time:calendar = "noleap" ;
	double plev(plev) ;
		plev:standard_name = "air_pressure" ;
		plev:units = "Pa" ;
		plev:positive = "down" ;
	double lat(lat) ;
		lat:standard_name = "latitude" ;
		lat:units = "degrees_north" ;
	double lon(lon) ;
		lon:standard_name = "longitude" ;
		lon:units = "degrees_east" ;
	float psl(time, lat, lon) ;
		psl:standard_name = "air_pressure_at_mean_sea_level" ;
		psl:units = "Pa" ;
		psl:_FillValue = 1.e+20f ;
	float ta(time, plev, lat, lon) ;
		ta:standard_name = "air_temperature" ;
		ta:units = "K" ;
		ta:_FillValue = 1.e+20f ;

// global attributes:
		:Conventions = "CF-1.13" ;
data:
 time = 10, 10.25 ;
 plev = 85000, 50000 ;
 lat = 10, 20, 30 ;
 lon = 100, 110, 120, 130 ;
 psl = 100000, 100100, 100200, 100300, 100400, 100500, 100600, 100700, 100800, 100900, 101000, 101100,
       101200, 101300, 101400, 101500, 101600, 101700, 101800, 101900, 102000, 102100, 102200, 102300 ;
 ta = 290, 291, 292, 293, 294, 295, 296, 297, 298, 299, 300, 301,
      250, 251, 252, 253, 254, 255, 256, 257, 258, 259, 260, 261,
      280, 281, 282, 283, 284, 285, 286, 287, 288, 289, 290, 291,
      240, 241, 242, 243, 244, 245, 246, 247, 248, 249, 250, 251 ;
}
`

// relEdit applies old->new replacements to CDL text and fails the test
// when one does not apply (a fixture that silently stays valid would make
// a bad-input case pass for the wrong reason).
func relEdit(t *testing.T, cdl string, pairs ...string) string {
	t.Helper()
	for i := 0; i+1 < len(pairs); i += 2 {
		if !strings.Contains(cdl, pairs[i]) {
			t.Fatalf("fixture edit: %q not in the CDL", pairs[i])
		}
		cdl = strings.Replace(cdl, pairs[i], pairs[i+1], 1)
	}
	return cdl
}

// relSnapshot maps every path below dir (relative, slash-separated) to
// its type and content digest.
func relSnapshot(t *testing.T, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		rel = filepath.ToSlash(rel)
		switch {
		case d.IsDir():
			out[rel] = "dir"
		case d.Type().IsRegular():
			b, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			sum := sha256.Sum256(b)
			out[rel] = hex.EncodeToString(sum[:])
		default:
			out[rel] = d.Type().String()
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// relDiff lists paths added, removed or changed between two snapshots.
func relDiff(before, after map[string]string) (added, removed, changed []string) {
	for p, v := range after {
		w, ok := before[p]
		switch {
		case !ok:
			added = append(added, p)
		case w != v:
			changed = append(changed, p)
		}
	}
	for p := range before {
		if _, ok := after[p]; !ok {
			removed = append(removed, p)
		}
	}
	sort.Strings(added)
	sort.Strings(removed)
	sort.Strings(changed)
	return
}

// relOnlyBookkeeping checks that a failed run changed nothing but the
// store's bookkeeping: its directories, the index, run records and the
// logs of failed instances (at most maxLogs). No object, receipt or work
// directory may remain, and nothing outside the store may change.
func relOnlyBookkeeping(t *testing.T, before, after map[string]string, store string, maxLogs int) {
	t.Helper()
	added, removed, changed := relDiff(before, after)
	if len(removed)+len(changed) > 0 {
		t.Errorf("a failed run removed %v and changed %v", removed, changed)
	}
	logs := 0
	for _, p := range added {
		rest, inStore := strings.CutPrefix(p, store)
		ok := false
		switch {
		case !inStore:
		case rest == "" || rest == "/objects" || rest == "/tmp" || rest == "/logs" || rest == "/runs" || rest == "/index.db":
			ok = true
		case strings.HasPrefix(rest, "/runs/") && strings.HasSuffix(rest, ".json"):
			ok = true
		case strings.HasPrefix(rest, "/logs/") && strings.HasSuffix(rest, ".log"):
			ok = true
			logs++
		}
		if !ok {
			t.Errorf("a failed run left %s", p)
		}
	}
	if logs > maxLogs {
		t.Errorf("%d instance logs written, want at most %d", logs, maxLogs)
	}
}

// relProcsMentioning lists live processes (not zombies) whose command line
// or environment contains s.
func relProcsMentioning(s string) []int {
	var pids []int
	ents, _ := os.ReadDir("/proc")
	for _, e := range ents {
		var pid int
		if _, err := fmt.Sscan(e.Name(), &pid); err != nil || pid == os.Getpid() {
			continue
		}
		envb, _ := os.ReadFile(filepath.Join("/proc", e.Name(), "environ"))
		cmd, _ := os.ReadFile(filepath.Join("/proc", e.Name(), "cmdline"))
		if !bytes.Contains(envb, []byte(s)) && !bytes.Contains(cmd, []byte(s)) {
			continue
		}
		st, _ := os.ReadFile(filepath.Join("/proc", e.Name(), "stat"))
		if i := bytes.LastIndexByte(st, ')'); i > 0 && i+2 < len(st) && st[i+2] == 'Z' {
			continue
		}
		pids = append(pids, pid)
	}
	return pids
}
