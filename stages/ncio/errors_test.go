package ncio

import (
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// wantErr checks that err exists and mentions every fragment.
func wantErr(t *testing.T, what string, err error, fragments ...string) {
	t.Helper()
	if err == nil {
		t.Errorf("%s: no error", what)
		return
	}
	for _, f := range fragments {
		if !strings.Contains(err.Error(), f) {
			t.Errorf("%s: error %q does not mention %q", what, err, f)
		}
	}
}

func TestOpenBadFiles(t *testing.T) {
	dir := t.TempDir()
	text := filepath.Join(dir, "notes.nc")
	os.WriteFile(text, []byte("time,slp\n0,101325\n"), 0o644)
	_, err := Open(text)
	wantErr(t, "text file", err, text, "not a netCDF file")

	empty := filepath.Join(dir, "empty.nc")
	os.WriteFile(empty, nil, 0o644)
	_, err = Open(empty)
	wantErr(t, "empty file", err, empty, "empty")

	missing := filepath.Join(dir, "missing.nc")
	_, err = Open(missing)
	wantErr(t, "missing file", err, missing, "no such file")
	if !errors.Is(err, ErrNotFound) {
		t.Error("missing file should wrap ErrNotFound")
	}
	_, err = Open(dir)
	wantErr(t, "directory", err, dir, "directory")

	// A netCDF-3 magic number followed by garbage (zeros would be a valid
	// empty file).
	junk := filepath.Join(dir, "junk.nc")
	garbage := make([]byte, 64)
	for i := range garbage {
		garbage[i] = 0xA5
	}
	os.WriteFile(junk, append([]byte("CDF\x01"), garbage...), 0o644)
	_, err = Open(junk)
	wantErr(t, "bad netCDF-3 header", err, junk)
}

// cutInHalf copies the first half of src to dst.
func cutInHalf(t *testing.T, src, dst string) {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(dst, b[:len(b)/2], 0o644); err != nil {
		t.Fatal(err)
	}
}

func TestOpenTruncatedClassic(t *testing.T) {
	src := sample(t, "vinth2p.nc")
	dst := filepath.Join(t.TempDir(), "vinth2p-half.nc")
	cutInHalf(t, src, dst)
	// The header survives, so the library alone would open this file and
	// read zeros past the end; ncio compares the size with the header.
	_, err := Open(dst)
	wantErr(t, "truncated classic file", err, dst, "truncated")
	// Losing only the last few bytes is caught too: the check uses the
	// offsets in the header, not an estimate.
	b, _ := os.ReadFile(src)
	os.WriteFile(dst, b[:len(b)-3], 0o644)
	_, err = Open(dst)
	wantErr(t, "classic file short by 3 bytes", err, dst, "truncated", strconv.Itoa(len(b)))
}

func TestOpenTruncatedNetCDF4(t *testing.T) {
	dir := t.TempDir()
	src := filepath.Join(dir, "whole.nc")
	if _, _, err := RawWriteFloat32(src, RawSpec{NT: 20, NY: 30, NX: 40}); err != nil {
		t.Fatal(err)
	}
	dst := filepath.Join(dir, "half.nc")
	cutInHalf(t, src, dst)
	f, err := Open(dst)
	if err == nil {
		// If HDF5 opened it, the data read must fail, not return zeros.
		defer f.Close()
		v, verr := f.Var("field")
		if verr != nil {
			t.Fatal(verr)
		}
		_, err = v.ReadFloat32(nil, nil)
	}
	wantErr(t, "truncated netCDF-4 file", err, dst)
}

func TestMissingVariable(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.nc")
	writeSample(t, path, 1)
	f := mustOpen(t, path)
	_, err := f.Var("psl")
	wantErr(t, "Var", err, path, `"psl"`, "slp(time,lat,lon; air_pressure_at_mean_sea_level)")
	if !errors.Is(err, ErrNotFound) {
		t.Error("missing variable should wrap ErrNotFound")
	}
	_, err = f.FindVar("eastward_wind", "ua", "u")
	wantErr(t, "FindVar", err, path, `"eastward_wind"`, `"ua"`, "ta(time,lat,lon; air_temperature)", "variables section")
	// Found by standard name, then by a mapped name.
	if v, err := f.FindVar("air_temperature", "slp"); err != nil || v.Name() != "ta" {
		t.Errorf("FindVar by standard_name: %v %v", v, err)
	}
	if v, err := f.FindVar("surface_air_pressure", "nope", "slp"); err != nil || v.Name() != "slp" {
		t.Errorf("FindVar by name: %v %v", v, err)
	}
	if v, err := f.FindVarMapped("northward_wind", map[string]string{"va": "northward_wind", "slp": "air_pressure_at_mean_sea_level", "ta": "northward_wind"}); err != nil || v.Name() != "ta" {
		t.Errorf("FindVarMapped: %v %v", v, err)
	}
	_, err = f.DimLen("plev")
	wantErr(t, "DimLen", err, path, "plev", "lat")
	v := mustVar(t, f, "slp")
	_, err = v.ReadFloat32([]int{0, 0, 0}, []int{nt + 1, ny, nx})
	wantErr(t, "slab out of range", err, path, `"slp"`, "outside")
	_, err = v.ReadFloat32([]int{0}, []int{1})
	wantErr(t, "wrong rank", err, `"slp"`, "3 entries")
	_, err = mustVar(t, f, "class_mask").ReadText(nil, nil)
	wantErr(t, "text read of bytes", err, `"class_mask"`)
}

// Every netCDF-3 sample file of libncarg-data (classic and 64-bit offset,
// with and without record variables) must open: the size check may not
// raise false alarms on real files.
func TestAllSamplesOpen(t *testing.T) {
	sample(t, "vinth2p.nc")
	var paths []string
	for _, pat := range []string{"*.nc", "*.cdf"} {
		m, _ := filepath.Glob(filepath.Join(sampleDir, pat))
		paths = append(paths, m...)
	}
	if len(paths) < 20 {
		t.Fatalf("only %d sample files", len(paths))
	}
	for _, p := range paths {
		f, err := Open(p)
		if err != nil {
			t.Errorf("%v", err)
			continue
		}
		if end, ok, err := classicDataEnd(p); f.Format() != "netCDF-4" && (err != nil || !ok || end == 0) {
			t.Errorf("%s: header parse end=%d ok=%v err=%v", p, end, ok, err)
		}
		f.Close()
	}
}
