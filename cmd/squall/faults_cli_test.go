package main

// Fault injection through the command line: SIGTERM to the runner, a full
// disk under the store (a small tmpfs mounted by the test, as root), and a
// malformed netCDF-3 header that crashes the C library inside one child.

import (
	"bytes"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/squall-climate/squall/examples/world"
	"github.com/squall-climate/squall/pipeline"
)

// TestFaultsSIGTERMStopsChildrenAndExits130 sends SIGTERM (what a batch
// system or `kill` sends; Ctrl-C is covered by main_test.go) to a runner
// with two children mid-flight: exit code 130, no child left alive (read
// from /proc), no work directory, nothing recorded for the stopped
// instances, the lock released, and a rerun that completes.
func TestFaultsSIGTERMStopsChildrenAndExits130(t *testing.T) {
	dir := t.TempDir()
	for _, y := range []int{2001, 2002} {
		p := filepath.Join(dir, "data", fmt.Sprintf("f_%d.nc", y))
		os.MkdirAll(filepath.Dir(p), 0o755)
		os.WriteFile(p, []byte(fmt.Sprint(y)), 0o644)
	}
	f := filepath.Join(dir, "c.yaml")
	// copy is main_test.go's test kind: it sleeps, honouring cancellation.
	os.WriteFile(f, []byte(`campaign: sigterm
scenarios:
  base: {files: data/*.nc, period: 2001-2002}
stages:
  copy: {kind: copy, inputs: [scenarios], settings: {sleep_ms: 2500}}
`), 0o644)
	cmd := exec.Command(os.Args[0], "run", "-j", "2", "--report", "-", f)
	cmd.Env = append(os.Environ(), "SQUALL_CLI_MAIN=1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	store := filepath.Join(dir, ".squall")
	var children []int
	for i := 0; i < 500 && len(children) < 2; i++ {
		time.Sleep(10 * time.Millisecond)
		children = children[:0]
		for _, pid := range relProcsMentioning(filepath.Join(store, "tmp")) {
			cmdline, _ := os.ReadFile(fmt.Sprintf("/proc/%d/cmdline", pid))
			if bytes.Contains(cmdline, []byte("exec-instance")) {
				children = append(children, pid)
			}
		}
	}
	if len(children) != 2 {
		cmd.Process.Kill()
		cmd.Wait()
		t.Fatalf("found %d instance children, want 2 running", len(children))
	}
	cmd.Process.Signal(syscall.SIGTERM)
	err := cmd.Wait()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != exitInterrupted {
		t.Fatalf("runner after SIGTERM: %v, want exit %d; stderr:\n%s", err, exitInterrupted, stderr.String())
	}
	for _, pid := range children {
		if cmdline, err := os.ReadFile(fmt.Sprintf("/proc/%d/cmdline", pid)); err == nil && bytes.Contains(cmdline, []byte("exec-instance")) {
			t.Errorf("child %d still alive after the runner exited: %s", pid, cmdline)
		}
	}
	if left := relProcsMentioning(dir); len(left) > 0 {
		t.Errorf("processes of the stopped run still alive: %v", left)
	}
	if m, _ := filepath.Glob(filepath.Join(store, "tmp", "*")); len(m) != 0 {
		t.Errorf("work directories left after SIGTERM: %v", m)
	}
	if m, _ := filepath.Glob(filepath.Join(store, "objects", "*", "*")); len(m) != 0 {
		t.Errorf("outputs recorded for stopped instances: %v", m)
	}
	if _, err := os.Stat(filepath.Join(store, "owner.json")); err == nil {
		t.Error("owner.json left: the lock holder did not let go")
	}
	rec, err := pipeline.LastRunRecord(store)
	if err != nil || rec.Status != "interrupted" || rec.Counts[pipeline.StateNotRun] != 2 {
		t.Fatalf("run record after SIGTERM: %v %+v; want interrupted, 2 not run", err, rec)
	}
	code, out, errs := run(t, "run", "--report", "-", f)
	if code != exitOK || !strings.Contains(out, "2 ran") {
		t.Fatalf("rerun after SIGTERM: exit %d\n%s%s", code, out, errs)
	}
}

// relNC3Header patches one 4-byte big-endian count of a netCDF-3 classic
// header (format: NetCDF Users Guide, "File Format Specification").
func relNC3Header(t *testing.T, path string, offset int, value uint32) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(b, []byte("CDF\x01")) {
		t.Fatalf("%s is not a netCDF-3 classic file", path)
	}
	binary.BigEndian.PutUint32(b[offset:], value)
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// relCrashFixture writes three years of netCDF-3 files; the 1991 header
// claims 2^31-1 dimensions. libnetcdf 4.9.0 (Debian bookworm) allocates
// for that count and then dies with SIGSEGV inside nc_open; `ncdump -h`
// crashes the same way. Where the allocation fails the library returns
// NC_ENOMEM instead: either way the instance must fail alone.
func relCrashFixture(t *testing.T, dir string) string {
	t.Helper()
	for _, y := range []string{"1990", "1991", "1992"} {
		p := filepath.Join(dir, "data", "fields_"+y+".nc")
		relNcgen(t, p, "classic", relEdit(t, relCDL, "days since 1991", "days since "+y))
	}
	bad := filepath.Join(dir, "data", "fields_1991.nc")
	// Header: magic (4), numrecs (4), NC_DIMENSION tag (4), ndims (4).
	relNC3Header(t, bad, 12, 0x7fffffff)
	f := filepath.Join(dir, "c.yaml")
	os.WriteFile(f, []byte(strings.Replace(relCampaign, "period: 1991", "period: 1990-1992", 1)), 0o644)
	return f
}

// TestFaultsNetCDFCrashFailsOnlyItsInstance runs the real subset kind over
// three years, one of whose files crashes the netCDF C library: that
// instance's child dies, the runner reports it (run summary, run record,
// `squall status`), the other years complete, and only the failed year
// runs again next time.
func TestFaultsNetCDFCrashFailsOnlyItsInstance(t *testing.T) {
	dir := t.TempDir()
	f := relCrashFixture(t, dir)
	code, out, errs := relSquall(t, "run", "--report", "-", "-j", "2", f)
	if code != exitStageFailed {
		t.Fatalf("exit %d, want %d\n%s%s", code, exitStageFailed, out, errs)
	}
	rec, err := pipeline.LastRunRecord(filepath.Join(dir, ".squall"))
	if err != nil {
		t.Fatal(err)
	}
	for _, in := range rec.Instances {
		switch in.Label {
		case "fields[control/1991]":
			if in.State != pipeline.StateFailed || in.Error == "" {
				t.Errorf("crashed instance: %s %q; want failed with an error", in.State, in.Error)
			}
			t.Logf("reported: %s", in.Error)
			if !strings.Contains(out, "failed fields[control/1991]: "+firstLineOf(in.Error)) {
				t.Errorf("run summary does not report the crash:\n%s", out)
			}
		default:
			if in.State != pipeline.StateRan {
				t.Errorf("%s: %s %q; a crash in another child must not touch it", in.Label, in.State, in.Error)
			}
		}
	}
	code, out, _ = relSquall(t, "status", f)
	if code != exitOK || !strings.Contains(out, "fields[control/1991] failed") {
		t.Errorf("status after the crash: exit %d\n%s", code, out)
	}
	code, out, _ = relSquall(t, "plan", f)
	if code != exitOK || !strings.Contains(out, "1 to run, 2 to reuse") || strings.Count(out, "failed last time") != 1 {
		t.Errorf("plan after the crash: exit %d\n%s", code, out)
	}
}

// relDiskFullWorld generates a small invented world (one scenario, two
// years) and returns the campaign text with %s for the store path.
func relDiskFullWorld(t *testing.T, dir string) string {
	t.Helper()
	o, err := world.Preset("tiny")
	if err != nil {
		t.Fatal(err)
	}
	o.Dir = filepath.Join(dir, "world")
	o.Scenarios = o.Scenarios[:1]
	if _, err := world.Generate(context.Background(), o); err != nil {
		t.Fatal(err)
	}
	return `campaign: disk-full
store: %s
scenarios:
  control: {files: world/control/fields_*.nc, period: 1991-1992, calendar: noleap}
channels:
  - {name: psl,   standard_name: air_pressure_at_mean_sea_level, units: Pa}
  - {name: ta850, standard_name: air_temperature, level: 850 hPa, units: K}
  - {name: ta500, standard_name: air_temperature, level: 500 hPa, units: K}
  - {name: ivt,   derived: ivt, units: kg m-1 s-1}
  - {name: iwv,   derived: iwv, units: kg m-2}
stages:
  fields: {kind: subset, inputs: [scenarios], settings: {deflate: 0}}
`
}

// relMountTmpfs mounts a tmpfs of the given size at dir, unmounted in
// Cleanup; it skips the test when that is not possible.
func relMountTmpfs(t *testing.T, dir, size string) {
	t.Helper()
	if os.Geteuid() != 0 {
		t.Skip("needs root to mount a small tmpfs for the disk-full test (CI runs the suite as root)")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "size="+size, "tmpfs", dir).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a tmpfs at %s (%v: %s); a container without CAP_SYS_ADMIN cannot run this test", dir, err, out)
	}
	t.Cleanup(func() {
		if out, err := exec.Command("umount", dir).CombinedOutput(); err != nil {
			t.Logf("umount %s: %v %s; detaching lazily", dir, err, out)
			exec.Command("umount", "-l", dir).Run()
		}
	})
}

// relFreeBytes is the space left on the file system holding dir.
func relFreeBytes(t *testing.T, dir string) int64 {
	t.Helper()
	var st syscall.Statfs_t
	if err := syscall.Statfs(dir, &st); err != nil {
		t.Fatal(err)
	}
	return int64(st.Bavail) * st.Bsize
}

// relDiskFullSetup prepares the world, a reference run on the ordinary
// disk, and a store on a 2 MB tmpfs filled by a ballast file so that
// only about one and a half instance outputs fit. It returns the campaign
// file on the tmpfs store, the ballast path and the reference digests.
func relDiskFullSetup(t *testing.T) (file, ballast string, want map[string]string) {
	dir := t.TempDir()
	full := filepath.Join(dir, "full")
	relMountTmpfs(t, full, "2m")
	text := relDiskFullWorld(t, dir)
	ref := filepath.Join(dir, "reference.yaml")
	os.WriteFile(ref, []byte(fmt.Sprintf(text, "reference-store")), 0o644)
	if code, out, errs := relSquall(t, "run", "--report", "-", ref); code != exitOK {
		t.Fatalf("reference run: exit %d\n%s%s", code, out, errs)
	}
	rec, err := pipeline.LastRunRecord(filepath.Join(dir, "reference-store"))
	if err != nil {
		t.Fatal(err)
	}
	want = map[string]string{}
	var size int64
	for _, in := range rec.Instances {
		want[in.Label] = in.OutputDigest
		for _, o := range in.Outputs {
			size = max(size, o.Size)
		}
	}
	file = filepath.Join(dir, "c.yaml")
	os.WriteFile(file, []byte(fmt.Sprintf(text, "full/store")), 0o644)
	// Create the store (index, directories) before measuring the space.
	if code, out, errs := relSquall(t, "plan", file); code != exitOK {
		t.Fatalf("plan: exit %d\n%s%s", code, out, errs)
	}
	ballast = filepath.Join(full, "ballast")
	keep := size + size/2
	free := relFreeBytes(t, full)
	if free < keep+64<<10 {
		t.Fatalf("tmpfs has %d bytes free, outputs are %d bytes each: enlarge the tmpfs", free, size)
	}
	if err := os.WriteFile(ballast, make([]byte, free-keep), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("each output %d bytes; %d bytes left free on the store's tmpfs", size, relFreeBytes(t, full))
	return file, ballast, want
}

// TestFaultsDiskFullLeavesTheStoreConsistent fills the file system of the
// store: an instance whose output does not fit fails, nothing partial is
// recorded (no object, receipt or work directory), `squall store check`
// verifies every recorded output, and after space is freed the rerun
// redoes only what failed and gives the digests of a run on a roomy disk.
func TestFaultsDiskFullLeavesTheStoreConsistent(t *testing.T) {
	file, ballast, want := relDiskFullSetup(t)
	store := filepath.Join(filepath.Dir(file), "full", "store")
	code, out, errs := relSquall(t, "run", "--report", "-", "-j", "1", file)
	if code != exitStageFailed {
		t.Fatalf("run on a full disk: exit %d, want %d\n%s%s", code, exitStageFailed, out, errs)
	}
	rec, err := pipeline.LastRunRecord(store)
	if err != nil {
		t.Fatal(err)
	}
	failed, ran := 0, 0
	for _, in := range rec.Instances {
		switch in.State {
		case pipeline.StateFailed:
			failed++
			t.Logf("%s failed: %s", in.Label, in.Error)
			if in.Key != "" {
				if _, err := os.Stat(filepath.Join(store, "objects", in.Key[:2], in.Key)); err == nil {
					t.Errorf("%s failed but its object directory exists", in.Label)
				}
				if _, err := os.Stat(filepath.Join(store, "objects", in.Key[:2], in.Key+".receipt.json")); err == nil {
					t.Errorf("%s failed but has a receipt", in.Label)
				}
			}
		case pipeline.StateRan:
			ran++
		}
	}
	if failed == 0 || failed+ran != 2 {
		t.Fatalf("on a full disk: %d failed, %d ran; want at least one failure and no other state", failed, ran)
	}
	if m, _ := filepath.Glob(filepath.Join(store, "tmp", "*")); len(m) != 0 {
		t.Errorf("work directories (partial outputs) left on the full disk: %v", m)
	}
	code, out, errs = relSquall(t, "store", "check", file)
	if code != exitOK || !strings.Contains(out, fmt.Sprintf("%d recorded instance outputs checked, 0 altered or missing", ran)) {
		t.Errorf("store check after the full disk: exit %d\n%s%s", code, out, errs)
	}
	if err := os.Remove(ballast); err != nil {
		t.Fatal(err)
	}
	code, out, errs = relSquall(t, "run", "--report", "-", "-j", "1", file)
	if code != exitOK || !strings.Contains(out, fmt.Sprintf("%d ran, %d reused", failed, ran)) {
		t.Fatalf("rerun after freeing space: exit %d\n%s%s", code, out, errs)
	}
	rec, err = pipeline.LastRunRecord(store)
	if err != nil {
		t.Fatal(err)
	}
	for _, in := range rec.Instances {
		if in.OutputDigest != want[in.Label] {
			t.Errorf("%s: digest %s after the full disk, %s on a roomy one", in.Label, in.OutputDigest, want[in.Label])
		}
	}
}
