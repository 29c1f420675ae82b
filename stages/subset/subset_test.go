package subset

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// smallGlobal is a 10-degree global grid, south to north.
func smallGlobal() (lat, lon []float64) { return seq(-85, 10, 18), seq(5, 10, 36) }

func constVar(name, std, units string, levels bool, x float32) rawVar {
	return rawVar{name: name, std: std, units: units, levels: levels, value: func(int, int, int, int) float32 { return x }}
}

// TestCalendars: the block is decoded in the file's model calendar. A
// noleap year has 365 daily steps and a 360_day year 360, including
// February 30 (CF-1.13 section 4.4.1); the time values are copied.
func TestCalendars(t *testing.T) {
	lat, lon := seq(-10, 10, 3), seq(0, 10, 4)
	cases := []struct {
		cal     string
		steps   int // days in year 2001 of the calendar (CF-1.13 4.4.1)
		first   float64
		months  []int
		nMonths int // steps in the selected months
	}{
		{"noleap", 365, 365, []int{2}, 28},
		{"360_day", 360, 360, []int{2}, 30},
		{"all_leap", 366, 366, []int{2}, 29},
		{"", 365, 366, []int{2}, 28}, // standard: 2000 is a leap year, 2001 is not
	}
	for _, c := range cases {
		dir := t.TempDir()
		path := filepath.Join(dir, "tas_2000-2001.nc")
		writeRaw(t, path, rawFile{times: seq(0, 1, 800), timeUnits: "days since 2000-01-01", calendar: c.cal,
			lat: lat, lon: lon, vars: []rawVar{{name: "tas", std: "air_temperature", units: "K",
				value: func(ti, k, j, i int) float32 { return float32(ti) }}}})
		ch := []pipeline.Channel{{Name: "tas", StandardName: "air_temperature"}}
		out, err := runSubset(t, []string{path}, "2001", ch, nil, defaults())
		if err != nil {
			t.Fatal(err)
		}
		tv, _ := readVar(t, out, "time")
		if len(tv) != c.steps || tv[0] != c.first {
			t.Errorf("%q: %d steps from %v; want %d from %v", c.cal, len(tv), tv[0], c.steps, c.first)
		}
		x, _ := readVar(t, out, "tas")
		if x[0] != c.first {
			t.Errorf("%q: first value %v is not day %v", c.cal, x[0], c.first)
		}
		f, _ := ncio.Open(out)
		ta, err := f.Times()
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		wantCal := c.cal
		if wantCal == "" {
			wantCal = "standard" // CF default written explicitly
		}
		if ta.CalendarAttr != wantCal || ta.Times[len(ta.Times)-1].Year != 2001 {
			t.Errorf("%q: calendar attribute %q, last %v", c.cal, ta.CalendarAttr, ta.Times[len(ta.Times)-1])
		}
		out, err = runSubset(t, []string{path}, "2001", ch, nil, defaults("months", []any{2.0}))
		if err != nil {
			t.Fatal(err)
		}
		tv, _ = readVar(t, out, "time")
		if len(tv) != c.nMonths {
			t.Errorf("%q: February has %d steps, want %d", c.cal, len(tv), c.nMonths)
		}
	}
}

func TestStrideAndMonths(t *testing.T) {
	lat, lon := seq(-10, 10, 3), seq(0, 10, 4)
	path := filepath.Join(t.TempDir(), "tas_1990.nc")
	writeRaw(t, path, rawFile{times: seq(0, 0.25, 365*4), timeUnits: "days since 1990-01-01", calendar: "noleap",
		lat: lat, lon: lon, vars: []rawVar{constVar("tas", "air_temperature", "K", false, 280)}})
	out, err := runSubset(t, []string{path}, "1990", []pipeline.Channel{{Name: "tas", StandardName: "air_temperature"}},
		nil, defaults("time_stride", 4, "months", []int{12}))
	if err != nil {
		t.Fatal(err)
	}
	tv, _ := readVar(t, out, "time")
	// December of a noleap year starts on day 334 and has 31 days: one
	// step a day with stride 4 on 6-hourly data (derived).
	if len(tv) != 31 || tv[0] != 334 || tv[1] != 335 {
		t.Fatalf("times %v", tv[:min(3, len(tv))])
	}
}

// TestBoxAcrossSeams: a box crossing 0 on a 0..360 grid and one crossing
// 180 on a -180..180 grid; values follow the longitude they came from.
func TestBoxAcrossSeams(t *testing.T) {
	lat := seq(60, -10, 7) // north to south: order kept
	cases := []struct {
		lon            []float64
		lonMin, lonMax float64
		wantLon        []float64
	}{
		{seq(0, 10, 36), 340, 20, []float64{-20, -10, 0, 10, 20}},
		{seq(-180, 10, 36), 160, -160, []float64{160, 170, 180, 190, 200}},
		{seq(0, 10, 36), -20, 20, []float64{-20, -10, 0, 10, 20}},
		{seq(0, 10, 36), 100, 120, []float64{100, 110, 120}},
	}
	for _, c := range cases {
		path := filepath.Join(t.TempDir(), "psl_1990.nc")
		lon := c.lon
		writeRaw(t, path, rawFile{times: []float64{0, 1}, timeUnits: "days since 1990-01-01", calendar: "standard",
			lat: lat, lon: lon, vars: []rawVar{{name: "psl", std: "air_pressure_at_mean_sea_level", units: "hPa",
				value: func(ti, k, j, i int) float32 { return float32(1000 + lon[i]/10 + lat[j]/1000) }}}})
		out, err := runSubset(t, []string{path}, "1990", []pipeline.Channel{{Name: "slp", StandardName: "air_pressure_at_mean_sea_level", Units: "Pa"}},
			nil, defaults("lat_min", 0.0, "lat_max", 30.0, "lon_min", c.lonMin, "lon_max", c.lonMax))
		if err != nil {
			t.Fatal(err)
		}
		gotLon, _ := readVar(t, out, "lon")
		gotLat, _ := readVar(t, out, "lat")
		if !slicesClose(gotLon, c.wantLon) || !slicesClose(gotLat, []float64{30, 20, 10, 0}) {
			t.Fatalf("box %v..%v: lon %v lat %v", c.lonMin, c.lonMax, gotLon, gotLat)
		}
		x, sh := readVar(t, out, "slp")
		for j := 0; j < sh[1]; j++ {
			for i := 0; i < sh[2]; i++ {
				l := math.Mod(gotLon[i]+360, 360) // the source's convention
				if c.lon[0] < 0 {
					l = math.Mod(gotLon[i]+540, 360) - 180
				}
				want := (1000 + l/10 + gotLat[j]/1000) * 100 // hPa -> Pa
				if math.Abs(x[j*sh[2]+i]-want) > 0.01 {
					t.Fatalf("box %v..%v: (%v, %v) = %v, want %v", c.lonMin, c.lonMax, gotLat[j], gotLon[i], x[j*sh[2]+i], want)
				}
			}
		}
		if _, err := grid.New(gotLat, gotLon); err != nil {
			t.Errorf("output grid rejected by stages/grid: %v", err)
		}
	}
}

func slicesClose(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > 1e-9 {
			return false
		}
	}
	return true
}

// TestIVTDerivedCheck: q = 0.01 kg/kg, wind 10 m/s from 1000 to 300 hPa
// with g = 9.80665 gives IVT 713.8013 kg m-1 s-1 and IWV 71.38013 kg m-2
// (reference-values.md, derived check). The file's levels run past 300 hPa
// and are in hPa, and one column's 1000 hPa level is below ground (fill):
// that column integrates from 850 hPa (derived: 0.01*10*55000/g).
func TestIVTDerivedCheck(t *testing.T) {
	lat, lon := seq(-10, 10, 3), seq(0, 10, 4)
	plev := []float64{1000, 850, 700, 500, 400, 250, 100} // no 300: the top layer is cut
	const fill = 1e20
	q := rawVar{name: "hus", std: "specific_humidity", units: "kg kg-1", levels: true, fill: fill,
		value: func(ti, k, j, i int) float32 {
			if k == 0 && j == 1 && i == 2 {
				return fill
			}
			return 0.01
		}}
	path := filepath.Join(t.TempDir(), "plev_1990.nc")
	writeRaw(t, path, rawFile{times: []float64{0}, timeUnits: "days since 1990-01-01", calendar: "noleap",
		lat: lat, lon: lon, plev: plev, levUnits: "hPa", vars: []rawVar{q,
			constVar("ua", "eastward_wind", "m s-1", true, 6), constVar("va", "northward_wind", "m s-1", true, 8)}})
	chans := []pipeline.Channel{{Name: "ivt", Derived: "ivt"}, {Name: "iwv", Derived: "iwv"},
		{Name: "ivtu", Derived: "ivt_u"}, {Name: "wspd", Derived: "wind_speed", LevelPa: 85000}, {Name: "iwv_mm", Derived: "iwv", Units: "mm"}}
	out, err := runSubset(t, []string{path}, "1990", chans, nil, defaults())
	if err != nil {
		t.Fatal(err)
	}
	const tol = 1e-3 // float32 output of ~700 (derived)
	check := func(name string, k int, want float64) {
		t.Helper()
		x, _ := readVar(t, out, name)
		if math.Abs(x[k]-want) > tol {
			t.Errorf("%s[%d] = %.6f, want %.6f", name, k, x[k], want)
		}
	}
	check("ivt", 0, 713.8013)      // reference-values.md: |(6,8)| = 10 m/s
	check("iwv", 0, 71.38013)      // reference-values.md
	check("iwv_mm", 0, 71.38013)   // 1 kg m-2 = 1 mm (reference-values.md)
	check("ivtu", 0, 713.8013*0.6) // derived: u = 6 of |V| = 10
	check("wspd", 0, 10)
	check("iwv", 1*4+2, 0.01*55000/9.80665) // derived: starts at 850 hPa
	f, _ := ncio.Open(out)
	defer f.Close()
	v, _ := f.Var("ivt")
	if v.AttrString("quantity") != "ivt" || v.AttrString("units") != "kg m-1 s-1" || v.StandardName() != "" {
		t.Errorf("ivt attributes: quantity %q units %q standard_name %q", v.AttrString("quantity"), v.AttrString("units"), v.StandardName())
	}
	if v, _ := f.Var("ivtu"); v.StandardName() != "eastward_atmosphere_water_vapor_transport_across_unit_distance" {
		t.Errorf("ivt_u standard_name %q (CF-1.13)", v.StandardName())
	}
}

// TestIntegrateLinear: for q linear in p the trapezoid with cut layers is
// exact: int_{30000}^{100000} 1e-7 p dp / g = 1e-7 (1e10 - 9e8)/2 / g
// (derived), on levels that straddle both limits.
func TestIntegrateLinear(t *testing.T) {
	lv := fixedLevels{105000, 92500, 70000, 40000, 25000, 10000}
	dst := make([]float64, 1)
	integrate(dst, func(k, c int) float64 { return 1e-7 * lv[k] }, lv, 30000, 100000)
	want := 1e-7 * (1e10 - 9e8) / 2 / G0
	if math.Abs(dst[0]-want) > 1e-12*want {
		t.Fatalf("got %.15g want %.15g", dst[0], want)
	}
}

// TestInterpLogP: linear in ln p, exact on levels, NaN outside.
func TestInterpLogP(t *testing.T) {
	lv := fixedLevels{100000, 50000, 25000}
	x := [][]float32{{10}, {20}, {30}}
	dst := make([]float32, 1)
	for _, c := range []struct{ p, want float64 }{
		{100000, 10}, {50000, 20}, {70710.678, 15}, // sqrt(1e5*5e4): halfway in ln p (derived)
		{35355.339, 25}, {100001, math.NaN()}, {20000, math.NaN()},
	} {
		interpLogP(dst, x, lv, c.p)
		if math.IsNaN(c.want) != math.IsNaN(float64(dst[0])) || (!math.IsNaN(c.want) && math.Abs(float64(dst[0])-c.want) > 1e-4) {
			t.Errorf("p=%v: %v want %v", c.p, dst[0], c.want)
		}
	}
}

// TestVorticitySolidBody: u = U cos(phi), v = 0 (solid-body rotation) has
// relative vorticity 2 U sin(phi) / R; v = V cos(lambda), u = 0 has
// -V sin(lambda) / (R cos phi) (both derived from the curl on the sphere).
// Centred differences at 2.5 degrees err by O(dphi^2) ~ 1e-3 relative.
func TestVorticitySolidBody(t *testing.T) {
	lat, lon := seq(-88.75, 2.5, 72), seq(0, 2.5, 144)
	const U, V = 20.0, 15.0
	const rad = math.Pi / 180
	path := filepath.Join(t.TempDir(), "uv_1990.nc")
	writeRaw(t, path, rawFile{times: []float64{0}, timeUnits: "days since 1990-01-01", calendar: "noleap",
		lat: lat, lon: lon, plev: []float64{85000}, levUnits: "Pa", vars: []rawVar{
			{name: "ua", std: "eastward_wind", units: "m s-1", levels: true, value: func(ti, k, j, i int) float32 {
				return float32(U * math.Cos(lat[j]*rad))
			}},
			{name: "va", std: "northward_wind", units: "m s-1", levels: true, value: func(ti, k, j, i int) float32 {
				return float32(V * math.Cos(lon[i]*rad))
			}}}})
	chans := []pipeline.Channel{{Name: "vort", Derived: "relative_vorticity"}}
	out, err := runSubset(t, []string{path}, "1990", chans, nil, defaults())
	if err != nil {
		t.Fatal(err)
	}
	x, _ := readVar(t, out, "vort")
	const relTol = 2e-3 // O(dphi^2) truncation at 2.5 degrees (derived)
	want := func(j, i int) float64 {
		return 2*U*math.Sin(lat[j]*rad)/grid.EarthRadius - V*math.Sin(lon[i]*rad)/(grid.EarthRadius*math.Cos(lat[j]*rad))
	}
	scale := 2 * U / grid.EarthRadius
	for j := range lat {
		for i := range lon {
			got := x[j*len(lon)+i]
			if j == 0 || j == len(lat)-1 {
				if !math.IsNaN(got) {
					t.Fatalf("outermost row %d has %v, want fill", j, got)
				}
				continue
			}
			if d := math.Abs(got - want(j, i)); d > relTol*math.Max(scale, math.Abs(want(j, i))) {
				t.Fatalf("(%v,%v): %g want %g", lat[j], lon[i], got, want(j, i))
			}
		}
	}
	// A box crossing the date line gets the same values as the global run
	// (its halo is read across the seam).
	out2, err := runSubset(t, []string{path}, "1990", chans, nil, defaults("lon_min", 350.0, "lon_max", 10.0, "lat_min", 0.0, "lat_max", 20.0))
	if err != nil {
		t.Fatal(err)
	}
	y, sh := readVar(t, out2, "vort")
	bl, _ := readVar(t, out2, "lon")
	by, _ := readVar(t, out2, "lat")
	for j := 0; j < sh[1]; j++ {
		for i := 0; i < sh[2]; i++ {
			gj := int(math.Round((by[j] + 88.75) / 2.5))
			gi := int(math.Round(math.Mod(bl[i]+360, 360) / 2.5))
			if y[j*sh[2]+i] != x[gj*len(lon)+gi] {
				t.Fatalf("box (%v,%v) = %v, global %v", by[j], bl[i], y[j*sh[2]+i], x[gj*len(lon)+gi])
			}
		}
	}
}

// TestBadInput: messages a person can act on.
func TestBadInput(t *testing.T) {
	lat, lon := seq(-10, 10, 3), seq(0, 10, 4)
	dir := t.TempDir()
	good := filepath.Join(dir, "atm_1990.nc")
	writeRaw(t, good, rawFile{times: []float64{0}, timeUnits: "days since 1990-01-01", calendar: "noleap",
		lat: lat, lon: lon, vars: []rawVar{constVar("psl", "air_pressure_at_mean_sea_level", "Pa", false, 1e5),
			constVar("uas", "eastward_wind", "m s-1", false, 1), constVar("nounits", "", "", false, 1)}})
	run := func(files []string, ch pipeline.Channel) string {
		_, err := runSubset(t, files, "1990", []pipeline.Channel{ch}, nil, defaults())
		if err == nil {
			t.Fatalf("channel %+v: no error", ch)
		}
		return err.Error()
	}
	msg := run([]string{good}, pipeline.Channel{Name: "tas", StandardName: "air_temperature"})
	for _, want := range []string{"air_temperature", "atm_1990.nc", "psl (air_pressure_at_mean_sea_level)", "uas (eastward_wind)", "variables:"} {
		if !strings.Contains(msg, want) {
			t.Errorf("missing-variable error lacks %q: %s", want, msg)
		}
	}
	msg = run([]string{good}, pipeline.Channel{Name: "slp", StandardName: "air_pressure_at_mean_sea_level", Units: "K"})
	for _, want := range []string{`"psl"`, `"Pa"`, `"K"`, "atm_1990.nc"} {
		if !strings.Contains(msg, want) {
			t.Errorf("wrong-units error lacks %q: %s", want, msg)
		}
	}
	msg = run([]string{good}, pipeline.Channel{Name: "x", Variable: "nounits"})
	if !strings.Contains(msg, `"nounits"`) || !strings.Contains(msg, "no units") {
		t.Errorf("missing-units error: %s", msg)
	}
	msg = run([]string{good}, pipeline.Channel{Name: "w", Derived: "wind_speed"})
	if !strings.Contains(msg, "northward_wind") {
		t.Errorf("derived missing input: %s", msg)
	}
	msg = run([]string{good}, pipeline.Channel{Name: "t", StandardName: "air_pressure_at_mean_sea_level", LevelPa: 85000})
	if !strings.Contains(msg, "on levels") || !strings.Contains(msg, "psl") {
		t.Errorf("single-level variable asked at a level: %s", msg)
	}
	// Truncated and non-netCDF files: the error names the file.
	data, _ := os.ReadFile(good)
	trunc := filepath.Join(dir, "cut_1990.nc")
	os.WriteFile(trunc, data[:len(data)/2], 0o644)
	text := filepath.Join(dir, "notes_1990.nc")
	os.WriteFile(text, []byte("these are not the data you are looking for\n"), 0o644)
	for _, bad := range []string{trunc, text} {
		msg = run([]string{good, bad}, pipeline.Channel{Name: "slp", StandardName: "air_pressure_at_mean_sea_level"})
		if !strings.Contains(msg, bad) {
			t.Errorf("error does not name %s: %s", bad, msg)
		}
	}
}

// TestDeterministicAndLand: two runs give identical bytes; land fraction in
// percent is copied as a fraction; ncdump opens the file.
func TestDeterministicAndLand(t *testing.T) {
	lat, lon := smallGlobal()
	land := make([]float32, len(lat)*len(lon))
	for i := range land {
		land[i] = float32(i % 101)
	}
	path := filepath.Join(t.TempDir(), "atm_1990.nc")
	writeRaw(t, path, rawFile{times: seq(0, 1, 5), timeUnits: "days since 1990-01-01", calendar: "360_day",
		lat: lat, lon: lon, land: land, vars: []rawVar{{name: "psl", std: "air_pressure_at_mean_sea_level", units: "Pa",
			value: func(ti, k, j, i int) float32 { return float32(100000 + ti*10 + j + i) }}}})
	ch := []pipeline.Channel{{Name: "slp", StandardName: "air_pressure_at_mean_sea_level"}}
	a, err := runSubset(t, []string{path}, "1990", ch, nil, defaults())
	if err != nil {
		t.Fatal(err)
	}
	testWorkers = 1
	b, err := runSubset(t, []string{path}, "1990", ch, nil, defaults())
	testWorkers = 2
	if err != nil {
		t.Fatal(err)
	}
	da, _ := os.ReadFile(a)
	db, _ := os.ReadFile(b)
	if !bytes.Equal(da, db) {
		t.Fatal("two runs differ")
	}
	lf, _ := readVar(t, a, "land_area_fraction")
	if lf[50] != 0.5 { // 50 % (derived)
		t.Fatalf("land fraction %v, want 0.5", lf[50])
	}
	h := ncdump(t, a)
	if !strings.Contains(h, "float land_area_fraction(lat, lon)") || !strings.Contains(h, `slp:quantity = "air_pressure_at_mean_sea_level"`) {
		t.Fatalf("ncdump -h:\n%s", h)
	}
}

// TestIVTHybrid: on pure sigma levels (a = 0, b = p/ps) with q = 0.01 and
// a 10 m/s wind the integral runs over the model levels of each column:
// from 1000 hPa where ps = 1000 hPa (713.8013, reference-values.md) and
// from the lowest level, ps = 900 hPa, where ps is lower (derived:
// 0.01*10*(90000-30000)/9.80665; no extrapolation to 1000 hPa).
func TestIVTHybrid(t *testing.T) {
	path := filepath.Join(t.TempDir(), "hyb_1990.nc")
	sigma := []float64{0.2, 0.3, 0.5, 0.7, 0.85, 0.95, 1}
	lat, lon := seq(-10, 10, 3), seq(0, 10, 4)
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefTime([]float64{0}, "days since 1990-01-01", "noleap")
	w.DefCoord("lev", sigma, ncio.Attr{Name: "standard_name", Value: "atmosphere_hybrid_sigma_pressure_coordinate"},
		ncio.Attr{Name: "formula_terms", Value: "a: hyam b: hybm p0: P0 ps: PS"}, ncio.Attr{Name: "positive", Value: "down"})
	w.DefLat(lat)
	w.DefLon(lon)
	w.DefVar(ncio.VarSpec{Name: "hyam", Type: ncio.Double, Dims: []string{"lev"}})
	w.DefVar(ncio.VarSpec{Name: "hybm", Type: ncio.Double, Dims: []string{"lev"}})
	w.DefVar(ncio.VarSpec{Name: "P0", Type: ncio.Double, Attrs: []ncio.Attr{{Name: "units", Value: "Pa"}}})
	w.DefVar(ncio.VarSpec{Name: "PS", Type: ncio.Float, Dims: []string{"time", "lat", "lon"}, Attrs: []ncio.Attr{{Name: "units", Value: "Pa"}}})
	for _, v := range []struct{ n, s, u string }{{"Q", "specific_humidity", "1"}, {"U", "eastward_wind", "m/s"}, {"V", "northward_wind", "m/s"}} {
		w.DefVar(ncio.VarSpec{Name: v.n, Type: ncio.Float, Dims: []string{"time", "lev", "lat", "lon"},
			Attrs: []ncio.Attr{{Name: "standard_name", Value: v.s}, {Name: "units", Value: v.u}}})
	}
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	w.WriteFloat64("hyam", nil, nil, make([]float64, len(sigma)))
	w.WriteFloat64("hybm", nil, nil, sigma)
	w.WriteFloat64("P0", nil, nil, []float64{100000})
	ps := make([]float32, 12)
	for i := range ps {
		ps[i] = 100000
	}
	ps[5] = 90000
	w.WriteFloat32("PS", nil, nil, ps)
	n := len(sigma) * 12
	fillc := func(x float32) []float32 {
		out := make([]float32, n)
		for i := range out {
			out[i] = x
		}
		return out
	}
	w.WriteFloat32("Q", nil, nil, fillc(0.01))
	w.WriteFloat32("U", nil, nil, fillc(10))
	w.WriteFloat32("V", nil, nil, fillc(0))
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	out, err := runSubset(t, []string{path}, "1990", []pipeline.Channel{{Name: "ivt", Derived: "ivt"}, {Name: "u925", StandardName: "eastward_wind", LevelPa: 92500}}, nil, defaults())
	if err != nil {
		t.Fatal(err)
	}
	x, _ := readVar(t, out, "ivt")
	if math.Abs(x[0]-713.8013) > 1e-3 || math.Abs(x[5]-0.01*10*60000/G0) > 1e-3 {
		t.Fatalf("ivt %v and %v", x[0], x[5])
	}
	u, _ := readVar(t, out, "u925")
	if u[0] != 10 || !math.IsNaN(u[5]) { // 925 hPa is below the 900 hPa surface there: fill
		t.Fatalf("u925 %v %v", u[0], u[5])
	}
}
