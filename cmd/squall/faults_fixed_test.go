package main

// Reliability tests that fail today because of bugs reported to the
// owners (see DEVELOPERS.md, Reliability). Not committed until fixed.

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
)

// A crash inside the netCDF C library must reach the user with the file
// that caused it (pipeline/execute.go runChild reports only "instance
// process exited with status 2").
func TestFaultsNetCDFCrashNamesTheFile(t *testing.T) {
	dir := t.TempDir()
	f := relCrashFixture(t, dir)
	relSquall(t, "run", "--report", "-", "-j", "2", f)
	rec, err := pipeline.LastRunRecord(filepath.Join(dir, ".squall"))
	if err != nil {
		t.Fatal(err)
	}
	for _, in := range rec.Instances {
		if in.Label == "fields[control/1991]" && !strings.Contains(in.Error, "fields_1991.nc") {
			t.Errorf("crash reported as %q; want the file fields_1991.nc named", in.Error)
		}
	}
}

// On a full disk the instance's own error ("the disk may be full") must
// reach the user; today the child's stderr goes to a log file on the full
// disk and is lost.
func TestFaultsDiskFullErrorIsClear(t *testing.T) {
	file, _, _ := relDiskFullSetup(t)
	relSquall(t, "run", "--report", "-", "-j", "1", file)
	rec, err := pipeline.LastRunRecord(filepath.Join(filepath.Dir(file), "full", "store"))
	if err != nil {
		t.Fatal(err)
	}
	for _, in := range rec.Instances {
		if in.State == pipeline.StateFailed && !strings.Contains(in.Error, "disk may be full") && !strings.Contains(in.Error, "no space left on device") {
			t.Errorf("%s failed with %q; want the cause (disk full) and the file", in.Label, in.Error)
		}
	}
}

// subset/doc.go: "Several files may share a variable (split in time) as
// long as they do not overlap." A single-level variable split over two
// files is refused today with "other levels than in the block's other
// files" (stages/subset/sources.go sameLevels(nil, nil)).
func TestBadInputBlockSplitInTimeIsAccepted(t *testing.T) {
	dir := t.TempDir()
	relNcgen(t, filepath.Join(dir, "data", "fields_1991_01.nc"), "nc4", relCDL)
	relNcgen(t, filepath.Join(dir, "data", "fields_1991_02.nc"), "nc4", relEdit(t, relCDL, "time = 10, 10.25 ;", "time = 40, 40.25 ;"))
	f := filepath.Join(dir, "c.yaml")
	os.WriteFile(f, []byte(relCampaign), 0o644)
	code, out, errs := relSquall(t, "run", "--report", "-", f)
	if code != exitOK {
		t.Fatalf("a year split over two files: exit %d\n%s%s", code, out, errs)
	}
	if d := relNcdump(t, dir, "fields.nc", "time"); !strings.Contains(d, "time = 10, 10.25, 40, 40.25 ;") {
		t.Errorf("time steps of a split year:\n%s", d)
	}
}

// Region names from a GeoJSON file must obey the same rule as names in
// the campaign (at most 64 characters); pipeline/geojson.go
// readGeoJSONRegions checks the characters but not the length.
func TestBadInputGeoJSONRegionNameLength(t *testing.T) {
	dir := t.TempDir()
	relNcgen(t, filepath.Join(dir, "data", "fields_1991.nc"), "nc4", relCDL)
	long := strings.Repeat("a", 65)
	os.WriteFile(filepath.Join(dir, "r.geojson"), []byte(`{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"name": "`+long+
		`"}, "geometry": {"type": "Polygon", "coordinates": [[[100, 0], [120, 0], [120, 10], [100, 0]]]}}]}`), 0o644)
	f := filepath.Join(dir, "c.yaml")
	os.WriteFile(f, []byte(relCampaign+"regions:\n  - file: r.geojson\n"), 0o644)
	if code, _, errs := relSquall(t, "plan", f); code != exitInvalid {
		t.Errorf("a 65-character region name from GeoJSON: exit %d, want %d\n%s", code, exitInvalid, errs)
	}
}

// A damaged page inside the bbolt index (not its header) must be refused
// like a truncated index (exit 5, `squall store rebuild`), never crash.
// Today cache.Store.get (cache/record.go) runs bbolt's View with no
// recover: bbolt's page assertion panics, squall dies with a stack trace
// and exit status 2 (the code for an invalid campaign).
func TestFaultsCorruptIndexPageIsRefused(t *testing.T) {
	f, _ := relStoreFixture(t)
	index := filepath.Join(filepath.Dir(f), ".squall", "index.db")
	good, _ := os.ReadFile(index)
	for page := 2; page*4096 < len(good); page++ {
		b := append([]byte(nil), good...)
		for i := page * 4096; i < (page+1)*4096; i++ {
			b[i] = 0x5a
		}
		os.WriteFile(index, b, 0o644)
		cmd := exec.Command(os.Args[0], "plan", f)
		cmd.Env = append(os.Environ(), relRealMainEnv+"=1")
		out, err := cmd.CombinedOutput()
		code := 0
		if ee, ok := err.(*exec.ExitError); ok {
			code = ee.ExitCode()
		}
		if strings.Contains(string(out), "panic:") || (code != exitOK && code != exitDamaged) {
			t.Errorf("page %d overwritten: exit %d\n%.300s", page, code, out)
		}
	}
}
