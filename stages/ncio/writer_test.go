package ncio

import (
	"crypto/sha256"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"
)

const (
	nt, ny, nx = 4, 3, 5
)

// writeSample writes a small file exercising every writer feature; scale
// changes the data so that determinism tests can tell contents apart.
func writeSample(t testing.TB, path string, scale float32) {
	t.Helper()
	w, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefTime([]float64{0, 0.25, 0.5, 0.75}, "days since 1990-01-01 00:00:00", "noleap")
	w.DefLat([]float64{-10, 0, 10})
	w.DefBounds("lat", []float64{-15, -5, -5, 5, 5, 15})
	w.DefLon([]float64{0, 72, 144, 216, 288})
	dims := []string{"time", "lat", "lon"}
	w.DefVar(VarSpec{Name: "slp", Type: Float, Dims: dims, Fill: 1e20, Deflate: 1, Shuffle: true, Chunks: []int{1, ny, nx},
		Attrs: []Attr{{"standard_name", "air_pressure_at_mean_sea_level"}, {"long_name", "sea level pressure"}, {"units", "Pa"},
			{"quantity", "air_pressure_at_mean_sea_level"}}})
	w.DefVar(VarSpec{Name: "ta", Type: Double, Dims: dims, Fill: -999.0,
		Attrs: []Attr{{"standard_name", "air_temperature"}, {"units", "K"}, {"level_pa", 85000.0}}})
	w.DefVar(VarSpec{Name: "count", Type: Int, Dims: []string{"lat", "lon"}, Fill: -1})
	w.DefVar(VarSpec{Name: "class_mask", Type: Byte, Dims: dims, Deflate: 4, Chunks: []int{1, ny, nx},
		Attrs: []Attr{{"long_name", "event class"}, {"flag_values", []int{0, 1, 2}},
			{"flag_meanings", "background tropical_cyclone atmospheric_river"}}})
	w.DefVar(VarSpec{Name: "u8", Type: UByte, Dims: []string{"lon"}})
	w.PutGlobalAttr("int_list", []int32{1, 2, 3})
	w.PutGlobalAttr("empty", "")
	w.PutConventions("ncio test file", Provenance{Tool: "squall test", Kind: "ncio", KindVersion: "1",
		Settings: map[string]string{"b": "2", "a": "x y"}, Inputs: []InputDigest{{"in.nc", "blake3:00ff"}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	slp := make([]float32, nt*ny*nx)
	ta := make([]float64, nt*ny*nx)
	mask := make([]uint8, nt*ny*nx)
	for i := range slp {
		slp[i] = 100000 + scale*float32(i)
		ta[i] = 250 + float64(i)/8
		mask[i] = uint8(i % 3)
	}
	ta[7] = math.NaN() // a NaN is stored as is; only the fill value is missing
	for tt := 0; tt < nt; tt++ {
		if err := w.WriteFloat32("slp", []int{tt, 0, 0}, []int{1, ny, nx}, slp[tt*ny*nx:(tt+1)*ny*nx]); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.WriteFloat64("ta", nil, nil, ta); err != nil {
		t.Fatal(err)
	}
	cnt := make([]int32, ny*nx)
	for i := range cnt {
		cnt[i] = int32(i * 1000)
	}
	if err := w.WriteInt32("count", nil, nil, cnt); err != nil {
		t.Fatal(err)
	}
	if err := w.WriteUint8("class_mask", nil, nil, mask); err != nil {
		t.Fatal(err)
	}
	if err := w.WriteUint8("u8", nil, nil, []uint8{0, 128, 255, 7, 9}); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func TestWriteReadBack(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.nc")
	writeSample(t, path, 1)
	if _, err := os.Stat(filepath.Join(filepath.Dir(path), ".out.nc.partial")); !os.IsNotExist(err) {
		t.Errorf("temporary file left behind: %v", err)
	}
	f := mustOpen(t, path)
	if f.Format() != "netCDF-4" || f.AttrString("Conventions") != "CF-1.13" {
		t.Errorf("format %q Conventions %q", f.Format(), f.AttrString("Conventions"))
	}
	wantHist := "squall test: stage kind ncio version 1\nsettings: a=x y; b=2\ninput: in.nc blake3:00ff"
	if h := f.AttrString("history"); h != wantHist {
		t.Errorf("history %q, want %q", h, wantHist)
	}
	slp, err := mustVar(t, f, "slp").ReadFloat32(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range slp {
		if x != 100000+float32(i) {
			t.Fatalf("slp[%d] = %v", i, x)
		}
	}
	ta := mustVar(t, f, "ta")
	if lp, _ := ta.AttrFloat64("level_pa"); lp != 85000 {
		t.Errorf("level_pa %v", lp)
	}
	m := mustVar(t, f, "class_mask")
	if typ, _ := m.AttrType("flag_values"); typ != Byte {
		t.Errorf("flag_values stored as %v, CF wants the variable's type (byte)", typ)
	}
	if a, _ := m.Attr("flag_values"); !reflect.DeepEqual(a, []int8{0, 1, 2}) {
		t.Errorf("flag_values %#v", a)
	}
	mask, err := m.ReadUint8(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range mask {
		if int(x) != i%3 {
			t.Fatalf("mask[%d] = %d", i, x)
		}
	}
	u8, err := mustVar(t, f, "u8").ReadUint8(nil, nil)
	if err != nil || !reflect.DeepEqual(u8, []uint8{0, 128, 255, 7, 9}) {
		t.Errorf("u8 %v %v", u8, err)
	}
	if c, _ := mustVar(t, f, "slp").Chunking(); !reflect.DeepEqual(c, []int{1, ny, nx}) {
		t.Errorf("chunks %v", c)
	}
	if s, l, _ := mustVar(t, f, "slp").Deflate(); !s || l != 1 {
		t.Errorf("shuffle %v level %d", s, l)
	}
	ax, err := f.Times()
	if err != nil {
		t.Fatal(err)
	}
	if ax.Calendar() != NoLeap || ax.Times[3] != Date(1990, 1, 1, 18) {
		t.Errorf("times %v %v", ax.Calendar(), ax.Times)
	}
	g, err := f.GridOf(ta)
	if err != nil {
		t.Fatal(err)
	}
	if g.LatVar != "lat" || g.NX() != nx || !g.Global || g.LonConv != Lon0To360 {
		t.Errorf("grid %+v", g)
	}
	v, err := f.FindVar("air_pressure_at_mean_sea_level")
	if err != nil || v.Name() != "slp" {
		t.Errorf("FindVar: %v %v", v, err)
	}
}

func TestWrittenFileWithNcdump(t *testing.T) {
	ncdump := needNcdump(t)
	path := filepath.Join(t.TempDir(), "out.nc")
	writeSample(t, path, 1)
	out, err := exec.Command(ncdump, "-hs", path).CombinedOutput()
	if err != nil {
		t.Fatalf("ncdump -hs: %v\n%s", err, out)
	}
	h := string(out)
	// Lines as ncdump (netcdf-bin) prints the special virtual attributes.
	for _, want := range []string{
		"float slp(time, lat, lon) ;",
		"slp:_FillValue = 1.e+20f ;",
		"slp:_ChunkSizes = 1, 3, 5 ;",
		"slp:_DeflateLevel = 1 ;",
		`slp:_Shuffle = "true" ;`,
		"double ta(time, lat, lon) ;",
		"ta:_FillValue = -999. ;",
		"ta:level_pa = 85000. ;",
		"int count(lat, lon) ;",
		"count:_FillValue = -1 ;",
		"byte class_mask(time, lat, lon) ;",
		"class_mask:flag_values = 0b, 1b, 2b ;",
		`class_mask:flag_meanings = "background tropical_cyclone atmospheric_river" ;`,
		"class_mask:_DeflateLevel = 4 ;",
		"ubyte u8(lon) ;",
		`time:calendar = "noleap" ;`,
		`lat:bounds = "lat_bnds" ;`,
		`:Conventions = "CF-1.13" ;`,
		":int_list = 1, 2, 3 ;",
		`:_Format = "netCDF-4" ;`,
	} {
		if !strings.Contains(h, want) {
			t.Errorf("ncdump -hs lacks %q", want)
		}
	}
	if strings.Contains(h, "slp:_Storage = \"contiguous\"") {
		t.Error("slp should be chunked")
	}
	data, err := exec.Command(ncdump, "-v", "u8,count", path).CombinedOutput()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(data), "u8 = 0, 128, 255, 7, 9 ;") {
		t.Errorf("ncdump -v u8: %s", data)
	}
}

func TestWrittenFileWithNetCDF4Python(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.nc")
	writeSample(t, path, 1)
	out := runPython(t, `
import sys, json, numpy as np, netCDF4, cftime
d = netCDF4.Dataset(sys.argv[1])
r = {}
for n in ["slp", "ta", "count", "class_mask", "u8"]:
    v = d[n]
    r[n] = {"dtype": str(v.dtype), "chunking": v.chunking(), "filters": {k: v.filters()[k] for k in ("zlib", "shuffle", "complevel")},
            "attrs": {a: (str(np.asarray(v.getncattr(a)).dtype), np.asarray(v.getncattr(a)).tolist()) for a in v.ncattrs()},
            "values": np.nan_to_num(np.ma.filled(v[:].astype("f8"), -12345), nan=-777).ravel().tolist()}
t = d["time"]
r["dates"] = [str(x) for x in cftime.num2date(t[:], t.units, t.calendar)]
r["global"] = {a: str(d.getncattr(a)) for a in d.ncattrs()}
print(json.dumps(r))
`, path)
	var r map[string]json.RawMessage
	if err := json.Unmarshal([]byte(out), &r); err != nil {
		t.Fatal(err)
	}
	type varInfo struct {
		Dtype    string
		Chunking any
		Filters  map[string]any
		Attrs    map[string][2]any
		Values   []float64
	}
	get := func(n string) varInfo {
		var v varInfo
		if err := json.Unmarshal(r[n], &v); err != nil {
			t.Fatal(err)
		}
		return v
	}
	slp := get("slp")
	if slp.Dtype != "float32" || !reflect.DeepEqual(slp.Chunking, []any{1.0, 3.0, 5.0}) ||
		slp.Filters["zlib"] != true || slp.Filters["shuffle"] != true || slp.Filters["complevel"] != 1.0 {
		t.Errorf("slp: %+v", slp)
	}
	if slp.Attrs["_FillValue"][0] != "float32" || slp.Attrs["_FillValue"][1] != 1e20 && slp.Attrs["_FillValue"][1] != float64(float32(1e20)) {
		t.Errorf("slp _FillValue %v", slp.Attrs["_FillValue"])
	}
	for i, x := range slp.Values {
		if x != float64(100000+float32(i)) {
			t.Fatalf("python slp[%d] = %v", i, x)
		}
	}
	ta := get("ta")
	for i, x := range ta.Values {
		want := 250 + float64(i)/8
		if i == 7 {
			if x != -777 && x != -12345 { // NaN (sent as -777) or masked (-12345)
				t.Errorf("python ta[7] = %v, want NaN", x)
			}
			continue
		}
		if x != want {
			t.Fatalf("python ta[%d] = %v, want %v", i, x, want)
		}
	}
	cm := get("class_mask")
	if cm.Dtype != "int8" || cm.Attrs["flag_values"][0] != "int8" || !reflect.DeepEqual(cm.Attrs["flag_values"][1], []any{0.0, 1.0, 2.0}) {
		t.Errorf("class_mask dtype %s flag_values %v: CF wants flag_values of the variable's type", cm.Dtype, cm.Attrs["flag_values"])
	}
	if cm.Attrs["flag_meanings"][1] != "background tropical_cyclone atmospheric_river" {
		t.Errorf("flag_meanings %v", cm.Attrs["flag_meanings"])
	}
	// 255 is NC_FILL_UBYTE, which netCDF4-python masks (-12345 here)
	// because the variable has no _FillValue; ncdump shows the stored 255.
	if u8 := get("u8"); u8.Dtype != "uint8" || !reflect.DeepEqual(u8.Values, []float64{0, 128, -12345, 7, 9}) {
		t.Errorf("u8 %+v", u8)
	}
	var dates []string
	json.Unmarshal(r["dates"], &dates)
	if !reflect.DeepEqual(dates, []string{"1990-01-01 00:00:00", "1990-01-01 06:00:00", "1990-01-01 12:00:00", "1990-01-01 18:00:00"}) {
		t.Errorf("cftime dates %v", dates)
	}
}

// TestMaskingMatchesNetCDF4Python builds a file with every kind of missing
// data marker and packing, then compares ReadFloat64 and ReadFloat32 with
// netCDF4-python's masked, scaled reads value by value.
func TestMaskingMatchesNetCDF4Python(t *testing.T) {
	path := filepath.Join(t.TempDir(), "mask.nc")
	w, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	const n = 10
	w.DefDim("n", n)
	d := []string{"n"}
	w.DefVar(VarSpec{Name: "fill", Type: Float, Dims: d, Fill: float32(-999)})
	w.DefVar(VarSpec{Name: "missing", Type: Float, Dims: d, Attrs: []Attr{{"missing_value", []float64{-1, 1e30}}}})
	w.DefVar(VarSpec{Name: "minmax", Type: Double, Dims: d, Attrs: []Attr{{"valid_min", 0.0}, {"valid_max", 5.0}}})
	w.DefVar(VarSpec{Name: "range", Type: Float, Dims: d, Fill: float32(-999), Attrs: []Attr{{"valid_range", []float32{-2, 2}}}})
	w.DefVar(VarSpec{Name: "packed", Type: Short, Dims: d, Fill: int16(-32767),
		Attrs: []Attr{{"scale_factor", 0.01}, {"add_offset", 100000.0}}})
	// float32 packing attributes: netCDF4-python unpacks in float32, ncio
	// in float64, so this one compares within float32 rounding.
	w.DefVar(VarSpec{Name: "packed32", Type: Short, Dims: d, Fill: int16(-32767),
		Attrs: []Attr{{"scale_factor", float32(0.01)}, {"add_offset", float32(1000)}}})
	w.DefVar(VarSpec{Name: "deffill", Type: Double, Dims: d})
	w.DefVar(VarSpec{Name: "bytefill", Type: Byte, Dims: d})
	w.DefVar(VarSpec{Name: "intfill", Type: Int, Dims: d, Attrs: []Attr{{"scale_factor", 0.5}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	vals := []float64{1, -999, -1000, 1e30, -1, 5, 5.5, -2, 3, 0}
	for _, name := range []string{"fill", "missing", "minmax", "range"} {
		if err := w.WriteFloat64(name, nil, nil, vals); err != nil {
			t.Fatal(err)
		}
	}
	for _, name := range []string{"packed", "packed32"} {
		if err := w.WriteInt32(name, nil, nil, []int32{0, 1, -1, -32767, 32767, 100, -32768, 5, 6, 7}); err != nil {
			t.Fatal(err)
		}
	}
	// Leave part of these unwritten so that the default fill shows.
	if err := w.WriteFloat64("deffill", []int{0}, []int{6}, vals[:6]); err != nil {
		t.Fatal(err)
	}
	if err := w.WriteInt8("bytefill", []int{0}, []int{4}, []int8{0, 1, -1, 2}); err != nil {
		t.Fatal(err)
	}
	if err := w.WriteInt32("intfill", []int{2}, []int{3}, []int32{1, 2, 3}); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	names := []string{"fill", "missing", "minmax", "range", "packed", "packed32", "deffill", "bytefill", "intfill"}
	var pairs []string
	for _, nm := range names {
		pairs = append(pairs, nm, "[:]")
	}
	ref := pyReads(t, path, pairs...)
	f := mustOpen(t, path)
	for i, nm := range names {
		v := mustVar(t, f, nm)
		got, err := v.ReadFloat64(nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		if nm == "packed32" {
			const f32Tol = 1.2e-7 // relative: one float32 rounding (eps 2^-23) of the result
			for j := range got {
				if math.IsNaN(got[j]) != math.IsNaN(ref[i][j]) || math.Abs(got[j]-ref[i][j]) > f32Tol*math.Abs(ref[i][j]) {
					t.Errorf("packed32[%d] = %v, reference %v", j, got[j], ref[i][j])
				}
			}
			continue
		}
		sameFloats(t, nm, got, ref[i])
		got32, err := v.ReadFloat32(nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		want32 := make([]float64, len(ref[i]))
		for j, x := range ref[i] {
			want32[j] = float64(float32(x))
		}
		sameFloats(t, nm+" (float32)", f32to64(got32), want32)
		if countNaN(ref[i]) == 0 {
			t.Errorf("%s: reference masks nothing, the case tests nothing", nm)
		}
	}
}

func TestWriteDeterministic(t *testing.T) {
	dir := t.TempDir()
	digest := func(name string, scale float32) [32]byte {
		p := filepath.Join(dir, name)
		writeSample(t, p, scale)
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		return sha256.Sum256(b)
	}
	a := digest("a.nc", 1)
	// HDF5 can store object modification times with one-second
	// resolution; waiting past a second makes such a timestamp differ.
	time.Sleep(1100 * time.Millisecond)
	b := digest("b.nc", 1)
	c := digest("c.nc", 2)
	if a != b {
		t.Errorf("two writes of the same content differ: %x vs %x", a, b)
	}
	if a == c {
		t.Error("different contents gave identical files: the digest comparison is blind")
	}
}

func TestWriterErrors(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "bad.nc")
	w, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefDim("x", 3)
	if err := w.DefVar(VarSpec{Name: "v", Type: Float, Dims: []string{"y"}}); err == nil || !strings.Contains(err.Error(), `"y"`) {
		t.Errorf("undefined dimension: %v", err)
	}
	if err := w.EndDef(); err == nil || !strings.Contains(err.Error(), path) {
		t.Errorf("EndDef should repeat the first error naming the file: %v", err)
	}
	w.Close()
	if _, err := os.Stat(path); !os.IsNotExist(err) {
		t.Error("a failed writer left a file under the final name")
	}

	w, _ = Create(path)
	w.DefDim("x", 3)
	if err := w.DefVar(VarSpec{Name: "v", Type: Float, Dims: []string{"x"}, Chunks: []int{4}}); err == nil {
		t.Error("chunk larger than the dimension accepted")
	}
	w.Abort()

	w, _ = Create(path)
	w.DefDim("x", 3)
	w.DefVar(VarSpec{Name: "v", Type: Byte, Dims: []string{"x"}})
	if err := w.WriteFloat32("v", nil, nil, []float32{1, 2}); err == nil || !strings.Contains(err.Error(), `"v"`) {
		t.Errorf("short slab: %v", err)
	}
	if err := w.WriteFloat32("v", []int{2}, []int{2}, []float32{1, 2}); err == nil {
		t.Error("slab past the end accepted")
	}
	if err := w.WriteUint8("v", nil, nil, []uint8{1, 200, 3}); err == nil {
		t.Error("200 into a signed byte accepted")
	}
	if err := w.WriteFloat32("nope", nil, nil, nil); err == nil || !strings.Contains(err.Error(), `"nope"`) {
		t.Errorf("unknown variable: %v", err)
	}
	if err := w.DefDim("late", 2); err == nil {
		t.Error("definition after writing accepted")
	}
	w.Abort()
	if _, err := Create(filepath.Join(dir, "no", "such", "dir.nc")); err == nil {
		t.Error("create in a missing directory accepted")
	}
}
