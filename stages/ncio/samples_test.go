package ncio

import (
	"errors"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

// Real model output from Debian's libncarg-data, read by ncio and by the
// netCDF4 Python module; every value must agree exactly (both go through
// the same C library, so no tolerance is needed).

func TestSampleVinth2pValues(t *testing.T) {
	path := sample(t, "vinth2p.nc")
	f := mustOpen(t, path)
	if f.Format() != "classic" {
		t.Errorf("format %q, want classic (ncdump -k vinth2p.nc)", f.Format())
	}
	// Names and shape as printed by `ncdump -h vinth2p.nc`.
	if got, want := f.VarNames(), []string{"T", "time", "lev", "lat", "lon", "hyam", "hybm", "PS"}; !reflect.DeepEqual(got, want) {
		t.Errorf("VarNames = %v, want %v", got, want)
	}
	T := mustVar(t, f, "T")
	if got, want := T.Shape(), []int{2, 18, 64, 128}; !reflect.DeepEqual(got, want) {
		t.Errorf("T shape %v, want %v (ncdump -h)", got, want)
	}
	if T.Units() != "K" || T.LongName() != "temperature" || T.Type() != Float {
		t.Errorf("T units %q long_name %q type %v; ncdump -h says K, temperature, float", T.Units(), T.LongName(), T.Type())
	}
	if c, err := T.Chunking(); c != nil || err != nil {
		t.Errorf("classic file chunking %v %v, want none", c, err)
	}
	if s, l, err := T.Deflate(); s || l != 0 || err != nil {
		t.Errorf("classic file deflate %v %v %v, want none", s, l, err)
	}
	got, err := T.ReadFloat64([]int{1, 0, 0, 0}, []int{1, 18, 64, 128})
	if err != nil {
		t.Fatal(err)
	}
	ref := pyReads(t, path, "T", "[1:2, :, :, :]", "T", "[0:2, 5:8, 10:14, 20:25]", "PS", "[:]")
	sameFloats(t, "T[1]", got, ref[0])
	got32, err := T.ReadFloat32([]int{0, 5, 10, 20}, []int{2, 3, 4, 5})
	if err != nil {
		t.Fatal(err)
	}
	sameFloats(t, "T[0:2,5:8,10:14,20:25]", f32to64(got32), ref[1])
	ps, err := mustVar(t, f, "PS").ReadFloat64(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	sameFloats(t, "PS", ps, ref[2])
}

func TestSampleVinth2pGridLevelsTimes(t *testing.T) {
	path := sample(t, "vinth2p.nc")
	f := mustOpen(t, path)
	g, err := f.Grid()
	if err != nil {
		t.Fatal(err)
	}
	// A T42 Gaussian grid: 64 latitudes south to north, 128 longitudes
	// 0..357.1875 every 2.8125 degrees (ncdump -v lat,lon vinth2p.nc).
	if g.LatVar != "lat" || g.LonDim != "lon" || g.NY() != 64 || g.NX() != 128 {
		t.Errorf("grid %s/%s %dx%d, want lat/lon 64x128", g.LatVar, g.LonDim, g.NY(), g.NX())
	}
	if g.LatDescending || g.LonConv != Lon0To360 || !g.Global {
		t.Errorf("descending=%v conv=%v global=%v, want false, 0..360, true", g.LatDescending, g.LonConv, g.Global)
	}
	ref := pyReads(t, path, "lat", "[:]", "lon", "[:]", "hyam", "[:]", "hybm", "[:]", "lev", "[:]")
	sameFloats(t, "lat", g.Lat, ref[0])
	sameFloats(t, "lon", g.Lon, ref[1])

	lv, err := f.Levels()
	if err != nil {
		t.Fatal(err)
	}
	if lv.Kind != HybridSigmaPressure || lv.Var != "lev" || lv.PSVar != "PS" || lv.N() != 18 {
		t.Fatalf("levels %+v, want hybrid lev with PS, 18 levels", lv)
	}
	// The file names P0_var = "P0" but has no P0: the CAM reference
	// pressure 1000 hPa is assumed (common practice for CAM files).
	if !lv.P0Assumed || lv.P0 != 100000 {
		t.Errorf("P0 = %v assumed=%v, want 100000 assumed", lv.P0, lv.P0Assumed)
	}
	sameFloats(t, "A", lv.A, ref[2])
	sameFloats(t, "B", lv.B, ref[3])
	// The file's own definition (lev:long_name): lev = 1000*(A+B).
	levs := ref[4]
	const levTol = 1e-3 // lev is stored as float with 4 decimals
	for k := range levs {
		if d := math.Abs(1000*(lv.A[k]+lv.B[k]) - levs[k]); d > levTol {
			t.Errorf("level %d: 1000*(A+B) = %v, lev = %v", k, 1000*(lv.A[k]+lv.B[k]), levs[k])
		}
	}
	// CF appendix D: p = a p0 + b ps, against numpy on the same file.
	pref := runPython(t, `
import sys, netCDF4
d = netCDF4.Dataset(sys.argv[1])
p = d["hyam"][:].astype("f8")*100000.0 + d["hybm"][:].astype("f8")*d["PS"][1, 30, 40]
print(" ".join(repr(float(x)) for x in p))
`, path)
	psv, err := mustVar(t, f, "PS").ReadFloat64([]int{1, 30, 40}, []int{1, 1, 1})
	if err != nil {
		t.Fatal(err)
	}
	for k, s := range strings.Fields(pref) {
		want, _ := strconv.ParseFloat(s, 64)
		const pTol = 1e-9 // relative; same arithmetic in float64
		if got := lv.Pressure(k, psv[0]); math.Abs(got-want) > pTol*want {
			t.Errorf("p(level %d) = %v Pa, numpy %v", k, got, want)
		}
	}

	ta, err := f.Times()
	if err != nil {
		t.Fatal(err)
	}
	// "days since 0049-09-01 00:00:00", no calendar attribute: CF default
	// standard, Julian in year 49. cftime.num2date gives 0049-12-17 and
	// 0049-12-18 for the values 107 and 108.
	if ta.Calendar() != Standard || ta.CalendarAttr != "" || ta.Len() != 2 {
		t.Errorf("calendar %v (attr %q), %d steps", ta.Calendar(), ta.CalendarAttr, ta.Len())
	}
	checkTimesWithCftime(t, path, "time", "standard", ta.Times)
}

// checkTimesWithCftime compares decoded times with cftime.num2date.
func checkTimesWithCftime(t *testing.T, path, varName, cal string, got []CFTime) {
	t.Helper()
	out := runPython(t, `
import sys, netCDF4, cftime
d = netCDF4.Dataset(sys.argv[1])
v = d.variables[sys.argv[2]]
for x in cftime.num2date(v[:], v.units, sys.argv[3]):
    print(x.year, x.month, x.day, x.hour, x.minute, x.second, x.microsecond)
`, path, varName, cal)
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if len(lines) != len(got) {
		t.Fatalf("%d times, cftime %d", len(got), len(lines))
	}
	for i, l := range lines {
		var w CFTime
		fmt.Sscan(l, &w.Year, &w.Month, &w.Day, &w.Hour, &w.Minute, &w.Second, &w.Microsecond)
		if got[i] != w {
			t.Errorf("time %d = %v, cftime %v", i, got[i], w)
		}
	}
}

func TestSampleUV300FillValues(t *testing.T) {
	path := sample(t, "uv300.nc")
	f := mustOpen(t, path)
	ref := pyReads(t, path, "U", "[:]", "V", "[:]")
	for i, name := range []string{"U", "V"} {
		v := mustVar(t, f, name)
		// ncdump -h: U:_FillValue = -999.f, units "m/s".
		if fv, ok := v.AttrFloat64("_FillValue"); !ok || fv != -999 {
			t.Errorf("%s _FillValue %v %v, want -999", name, fv, ok)
		}
		got, err := v.ReadFloat32(nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		sameFloats(t, name, f32to64(got), ref[i])
	}
	// m/s is a CF spelling of m s-1.
	if !SameUnits(mustVar(t, f, "U").Units(), "m s-1") {
		t.Error("m/s and m s-1 should be the same unit")
	}
	if f.AttrString("title") != "UV300: January and July" {
		t.Errorf("title %q (ncdump -h)", f.AttrString("title"))
	}
	// time:units = "month" is not a CF time unit: clear error naming it.
	_, err := f.Times()
	if err == nil || !strings.Contains(err.Error(), `"month"`) || !strings.Contains(err.Error(), path) {
		t.Errorf("Times error %v, want one naming the units and the file", err)
	}
}

func TestSamplePstormNamesOnly(t *testing.T) {
	path := sample(t, "Pstorm.cdf")
	f := mustOpen(t, path)
	// lat and lon carry no attributes at all (ncdump -h Pstorm.cdf): found
	// by name. 33 x 36 grid, 64 steps (reference-values.md).
	g, err := f.Grid()
	if err != nil {
		t.Fatal(err)
	}
	if g.NY() != 33 || g.NX() != 36 || g.LonConv != LonMinus180To180 || g.Global {
		t.Errorf("grid %dx%d conv %v global %v, want 33x36, -180..180, regional", g.NY(), g.NX(), g.LonConv, g.Global)
	}
	ref := pyReads(t, path, "lon", "[:]", "p", "[:]")
	sameFloats(t, "lon", g.Lon, ref[0])
	p := mustVar(t, f, "p")
	got, err := p.ReadFloat64(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := ref[1]
	sameFloats(t, "p", got, want)
	if countNaN(want) == 0 {
		t.Error("reference has no masked values; the fill test would be vacuous")
	}
	txt, err := mustVar(t, f, "reftime").ReadText(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if s := strings.TrimRight(string(txt), "\x00"); s != "1996 01 05 00:00" { // ncdump -v reftime Pstorm.cdf
		t.Errorf("reftime %q", s)
	}
	// "timestep" has no units: there is no CF time coordinate.
	if _, err := f.Times(); !errors.Is(err, ErrNotFound) {
		t.Errorf("Times: %v, want ErrNotFound", err)
	}
	if _, err := f.Levels(); !errors.Is(err, ErrNotFound) {
		t.Errorf("Levels: %v, want ErrNotFound", err)
	}
}

func TestSampleLandseaBytes(t *testing.T) {
	path := sample(t, "landsea.nc")
	f := mustOpen(t, path)
	m := mustVar(t, f, "LSMASK")
	if m.Type() != Byte {
		t.Fatalf("LSMASK type %v, want byte (ncdump -h)", m.Type())
	}
	u8, err := m.ReadUint8(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	i8, err := m.ReadInt8(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := pyRead(t, path, "LSMASK", "[:]")
	got := make([]float64, len(u8))
	for i := range u8 {
		got[i] = float64(u8[i])
		if int(i8[i]) != int(u8[i]) {
			t.Fatalf("int8 %d vs uint8 %d at %d", i8[i], u8[i], i)
		}
	}
	sameFloats(t, "LSMASK", got, want)
	// Classes 0 ocean .. 4 ice shelf (the file's title); all five occur.
	var count [5]int
	for _, x := range u8 {
		if x > 4 {
			t.Fatalf("class %d outside 0..4", x)
		}
		count[x]++
	}
	for c, n := range count {
		if n == 0 {
			t.Errorf("class %d never occurs", c)
		}
	}
	g, err := f.Grid()
	if err != nil {
		t.Fatal(err)
	}
	// 1 degree grid, cell centres -89.5..89.5 and 0.5..359.5.
	if g.NY() != 180 || g.NX() != 360 || g.Lat[0] != -89.5 || g.Lon[0] != 0.5 || !g.Global || g.LonConv != Lon0To360 {
		t.Errorf("grid %dx%d first %v,%v global %v conv %v", g.NY(), g.NX(), g.Lat[0], g.Lon[0], g.Global, g.LonConv)
	}
}

func TestSampleHgtMonthsRejected(t *testing.T) {
	path := sample(t, "hgt.nc")
	f := mustOpen(t, path)
	h := mustVar(t, f, "HGT")
	got, err := h.ReadFloat32([]int{3, 0, 0}, []int{2, 73, 144})
	if err != nil {
		t.Fatal(err)
	}
	sameFloats(t, "HGT[3:5]", f32to64(got), pyRead(t, path, "HGT", "[3:5, :, :]"))
	// time:units = "months since 1958-1-1 00:00:00" in the standard
	// calendar: months have no fixed length; cftime refuses them too.
	_, err = f.Times()
	if err == nil || !strings.Contains(err.Error(), "months") {
		t.Errorf("Times error %v, want one about months", err)
	}
	if lev, ok := h.AttrFloat64("lev"); !ok || lev != 500 {
		t.Errorf("HGT:lev = %v, want 500 (ncdump -h)", lev)
	}
}

func TestSampleNetCDF4StringAttrsAndPressure(t *testing.T) {
	path := sample(t, "nc4uvt.nc")
	f := mustOpen(t, path)
	if f.Format() != "netCDF-4" {
		t.Errorf("format %q, want netCDF-4", f.Format())
	}
	lev := mustVar(t, f, "lev")
	if typ, _ := lev.AttrType("units"); typ != String || lev.Units() != "hPa" {
		t.Errorf("lev:units type %v value %q, want NC_STRING hPa (ncdump -h)", typ, lev.Units())
	}
	lv, err := f.LevelsOf(mustVar(t, f, "T"))
	if err != nil {
		t.Fatal(err)
	}
	refs := pyReads(t, path, "lev", "[:]", "U", "[:]")
	ref := refs[0]
	if lv.Kind != PressureLevels || len(lv.Pa) != len(ref) {
		t.Fatalf("levels %+v", lv)
	}
	for k := range ref {
		if lv.Pa[k] != ref[k]*100 { // 1 hPa = 100 Pa (SI)
			t.Errorf("level %d = %v Pa, want %v", k, lv.Pa[k], ref[k]*100)
		}
	}
	c, err := mustVar(t, f, "T").Chunking()
	if err != nil || !reflect.DeepEqual(c, []int{1, 7, 32, 64}) {
		t.Errorf("T chunking %v %v, ncdump -hs says 1, 7, 32, 64", c, err)
	}
	got, err := mustVar(t, f, "U").ReadFloat32(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	sameFloats(t, "U", f32to64(got), refs[1])
}

func TestSampleSSTLatOnOtherDim(t *testing.T) {
	path := sample(t, "sst30e_netcdf.nc")
	f := mustOpen(t, path)
	sst := mustVar(t, f, "sst")
	// Variables lat(latitude) and lon(longitude): the coordinate variable
	// names differ from the dimension names (ncdump -h).
	g, err := f.GridOf(sst)
	if err != nil {
		t.Fatal(err)
	}
	if g.LatVar != "lat" || g.LatDim != "latitude" || g.LonDim != "longitude" {
		t.Errorf("grid vars %s(%s) %s(%s)", g.LatVar, g.LatDim, g.LonVar, g.LonDim)
	}
	// valid_range = -1.8, 35 together with _FillValue = -999.
	got, err := sst.ReadFloat64(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	sameFloats(t, "sst", got, pyRead(t, path, "sst", "[:]"))
	if _, lo, hi := sst.Missing(); lo != float64(float32(-1.8)) || hi != 35 {
		t.Errorf("valid range %v..%v, want -1.8f..35", lo, hi)
	}
}
