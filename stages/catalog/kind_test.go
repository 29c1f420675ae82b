package catalog

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// testFile describes a small mask.nc or fields.nc written by the tests in
// the shared formats (brief: file formats shared between stages).
type testFile struct {
	g        *grid.Grid
	times    []float64 // hours since 1990-01-01, noleap
	units    string
	calendar string
	mask     [][]byte // per step; nil: no class_mask
	badFlags bool     // write flag_values without 2 (so value 2 is outside)
	land     []float64
	slp      [][]float32
	wind     [][]float32
	ivt      [][]float32
}

func (tf testFile) write(t testing.TB, path string) {
	t.Helper()
	w, err := ncio.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	units, cal := tf.units, tf.calendar
	if units == "" {
		units = "hours since 1990-01-01 00:00:00"
	}
	if cal == "" {
		cal = "noleap"
	}
	w.DefTime(tf.times, units, cal)
	w.DefLat(tf.g.Lat)
	w.DefLon(tf.g.Lon)
	dims := []string{"time", "lat", "lon"}
	if tf.mask != nil {
		fv, fm := []int8{0, 1, 2}, "background tropical_cyclone atmospheric_river"
		if tf.badFlags {
			fv, fm = []int8{0, 1}, "background tropical_cyclone"
		}
		w.DefVar(ncio.VarSpec{Name: MaskVar, Type: ncio.Byte, Dims: dims, Attrs: []ncio.Attr{
			{Name: "long_name", Value: "class mask"}, {Name: "flag_values", Value: fv}, {Name: "flag_meanings", Value: fm}}})
	}
	if tf.land != nil {
		w.DefVar(ncio.VarSpec{Name: "land_area_fraction", Type: ncio.Float, Dims: []string{"lat", "lon"}, Attrs: []ncio.Attr{
			{Name: "standard_name", Value: "land_area_fraction"}, {Name: "units", Value: "1"}}})
	}
	def := func(name, q, units string) {
		w.DefVar(ncio.VarSpec{Name: name, Type: ncio.Float, Dims: dims, Fill: float32(1e20), Attrs: []ncio.Attr{
			{Name: "quantity", Value: q}, {Name: "units", Value: units}, {Name: "long_name", Value: name}}})
	}
	if tf.slp != nil {
		def("psl", "air_pressure_at_mean_sea_level", "hPa") // hPa on purpose: converted to Pa
	}
	if tf.wind != nil {
		def("wind10", "wind_speed", "m s-1")
	}
	if tf.ivt != nil {
		def("ivt", "ivt", "kg m-1 s-1")
	}
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	ny, nx := tf.g.NLat(), tf.g.NLon()
	for i := range tf.times {
		st, ct := []int{i, 0, 0}, []int{1, ny, nx}
		if tf.mask != nil {
			b := make([]int8, len(tf.mask[i]))
			for k, v := range tf.mask[i] {
				b[k] = int8(v)
			}
			if err := w.WriteInt8(MaskVar, st, ct, b); err != nil {
				t.Fatal(err)
			}
		}
		for name, f := range map[string][][]float32{"psl": tf.slp, "wind10": tf.wind, "ivt": tf.ivt} {
			if f != nil {
				if err := w.WriteFloat32(name, st, ct, f[i]); err != nil {
					t.Fatal(err)
				}
			}
		}
	}
	if tf.land != nil {
		l32 := make([]float32, len(tf.land))
		for k, v := range tf.land {
			l32[k] = float32(v)
		}
		if err := w.WriteFloat32("land_area_fraction", nil, nil, l32); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func defaults(k pipeline.Kind) pipeline.Values {
	v := pipeline.Values{}
	for _, s := range k.Settings() {
		v[s.Name] = s.Default
	}
	return v
}

// smallWorld builds two yearly blocks of a small global world: a cyclone that
// crosses both the date line and the year boundary (so it must be one
// event), deepening over the steps, and a river that makes landfall.
func smallWorld(t *testing.T, dir string) (in []pipeline.Input) {
	t.Helper()
	g, err := grid.Global(2, 2)
	if err != nil {
		t.Fatal(err)
	}
	land := make([]float64, g.Len())
	for i, lat := range g.Lat {
		for j, lon := range g.Lon {
			if lon > 230 && lon < 250 && lat > 20 && lat < 60 { // a continent at 110-130W
				land[g.Index(i, j)] = 1
			}
		}
	}
	blocks := map[string][]float64{
		"1990": {8748, 8754},                   // 1990-12-31 12:00, 18:00 (noleap)
		"1991": {8760, 8766, 8772, 8778, 8784}, // 1991-01-01 00:00 ... 1991-01-02 00:00
	}
	step := 0
	for _, blk := range []string{"1990", "1991"} {
		times := blocks[blk]
		tf := testFile{g: g, times: times}
		ff := testFile{g: g, times: times, land: land}
		for range times {
			m := make([]byte, g.Len())
			slp := make([]float32, g.Len())
			wind := make([]float32, g.Len())
			ivt := make([]float32, g.Len())
			for k := range slp {
				slp[k], wind[k], ivt[k] = 1012, 5, 100
			}
			mid := 172 + 4*float64(step) // cyclone centre, degrees east
			for i, lat := range g.Lat {
				for j, lon := range g.Lon {
					k := g.Index(i, j)
					if lat > 10 && lat < 18 && math.Abs(grid.LonDiff(mid, lon)) < 5 {
						m[k] = TropicalCyclone
						slp[k] = float32(990 - 5*step)
						wind[k] = float32(25 + 5*step)
					}
					// A river along 40N reaching east 200+6*step degrees.
					if lat > 36 && lat < 44 && lon > 196 && lon < 200+6*float64(step) {
						m[k] = AtmosphericRiver
						ivt[k] = float32(400 + 10*step)
					}
				}
			}
			tf.mask = append(tf.mask, m)
			ff.slp = append(ff.slp, slp)
			ff.wind = append(ff.wind, wind)
			ff.ivt = append(ff.ivt, ivt)
			step++
		}
		md := filepath.Join(dir, "label", blk)
		fd := filepath.Join(dir, "subset", blk)
		os.MkdirAll(md, 0o755)
		os.MkdirAll(fd, 0o755)
		tf.write(t, filepath.Join(md, MaskName))
		ff.write(t, filepath.Join(fd, FieldsName))
		in = append(in,
			pipeline.Input{From: "label", Kind: "label", Scenario: "ctl", Block: blk, Dir: md, Files: []string{filepath.Join(md, MaskName)}},
			pipeline.Input{From: "subset", Kind: "subset", Scenario: "ctl", Block: blk, Dir: fd, Files: []string{filepath.Join(fd, FieldsName)}})
	}
	return in
}

func readCSV(t *testing.T, path string) []map[string]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out []map[string]string
	for _, r := range recs[1:] {
		m := map[string]string{}
		for i, c := range recs[0] {
			m[c] = r[i]
		}
		out = append(out, m)
	}
	return out
}

func runCatalog(t *testing.T, in []pipeline.Input, set map[string]any) (string, error) {
	t.Helper()
	out := t.TempDir()
	v := defaults(Kind{})
	for k, x := range set {
		v[k] = x
	}
	job := &pipeline.Job{Stage: "catalog", Kind: "catalog", Scenario: "ctl", Settings: v, Inputs: in, OutDir: out,
		Campaign: pipeline.CampaignInfo{Regions: []pipeline.Region{
			{Name: "dateline", Box: &pipeline.Box{LatMin: 0, LatMax: 30, LonMin: 170, LonMax: -170}},
			{Name: "continent", Polygons: [][][][2]float64{{{{-130, 20}, {-110, 20}, {-110, 60}, {-130, 60}, {-130, 20}}}}},
		}}}
	return out, Kind{}.Run(context.Background(), job)
}

func TestKindRun(t *testing.T) {
	dir := t.TempDir()
	in := smallWorld(t, dir)
	out, err := runCatalog(t, in, nil)
	if err != nil {
		t.Fatal(err)
	}
	evs := readCSV(t, filepath.Join(out, EventsFile))
	if len(evs) != 2 {
		t.Fatalf("%d events, want 2 (one cyclone across the date line and the year boundary, one river): %v", len(evs), evs)
	}
	tc, ar := evs[0], evs[1]
	if tc["class"] != "tropical_cyclone" || ar["class"] != "atmospheric_river" {
		t.Fatalf("classes %s, %s", tc["class"], ar["class"])
	}
	// Planted: 7 steps 6 h apart from 1990-12-31 12:00 (noleap).
	if tc["steps"] != "7" || tc["duration_hours"] != "36" || tc["start"] != "1990-12-31T12:00:00" || tc["end"] != "1991-01-02T00:00:00" {
		t.Errorf("cyclone span: %v", tc)
	}
	// Deepest planted SLP 990 - 5*6 = 960 hPa = 96000 Pa; wind 25 + 5*6 =
	// 55 m/s = 106.9 kt, category 3 (96-112 kt, NHC 2012).
	if tc["min_slp_pa"] != "96000" || tc["max_wind_ms"] != "55" || tc["saffir_simpson_category"] != "3" || tc["storm_stage"] != "hurricane" {
		t.Errorf("cyclone intensity: slp %s wind %s cat %s stage %s", tc["min_slp_pa"], tc["max_wind_ms"], tc["saffir_simpson_category"], tc["storm_stage"])
	}
	if tc["landfall"] != "false" || tc["regions"] != "dateline" {
		t.Errorf("cyclone landfall %s regions %q", tc["landfall"], tc["regions"])
	}
	if ar["max_ivt_kg_m_s"] != "460" || ar["landfall"] != "true" || !strings.Contains(ar["regions"], "continent") || ar["landfall_regions"] != "continent" {
		t.Errorf("river: %v", ar)
	}
	// The river's east end (200+6*step) passes the coast at 230E (cells
	// 231E) when 200+6s > 231, first at s = 6: 1991-01-02 00:00.
	if ar["landfall_time"] != "1991-01-02T00:00:00" {
		t.Errorf("river landfall at %s", ar["landfall_time"])
	}
	pts := readCSV(t, filepath.Join(out, PointsFile))
	if len(pts) != 14 {
		t.Errorf("%d track points, want 14", len(pts))
	}
	// Determinism: a second run gives byte-identical files.
	out2, err := runCatalog(t, in, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{EventsFile, PointsFile, GeoJSONFile, TracksFile} {
		a, _ := os.ReadFile(filepath.Join(out, f))
		b, _ := os.ReadFile(filepath.Join(out2, f))
		if string(a) != string(b) || len(a) == 0 {
			t.Errorf("%s differs between two runs (or is empty)", f)
		}
	}
	checkGeoJSON(t, filepath.Join(out, GeoJSONFile))
	checkTracks(t, filepath.Join(out, TracksFile))
}

// checkGeoJSON opens the file with GDAL's ogrinfo (Debian gdal-bin), the
// reference GeoJSON reader, and checks the antimeridian split.
func checkGeoJSON(t *testing.T, path string) {
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var fc struct {
		Type     string
		Features []struct {
			Geometry struct {
				Type        string
				Coordinates json.RawMessage
			}
			Properties map[string]any
		}
	}
	if err := json.Unmarshal(b, &fc); err != nil {
		t.Fatal(err)
	}
	if fc.Type != "FeatureCollection" || len(fc.Features) != 2 {
		t.Fatalf("GeoJSON: %s with %d features", fc.Type, len(fc.Features))
	}
	// RFC 7946 3.1.9: the cyclone track crossing 180 is a MultiLineString.
	if g := fc.Features[0].Geometry.Type; g != "MultiLineString" {
		t.Errorf("cyclone geometry %s, want MultiLineString", g)
	}
	if g := fc.Features[1].Geometry.Type; g != "LineString" {
		t.Errorf("river geometry %s, want LineString", g)
	}
	ogr, err := exec.LookPath("ogrinfo")
	if err != nil {
		t.Skip("ogrinfo not found: install Debian gdal-bin to check the GeoJSON with GDAL")
	}
	out, err := exec.Command(ogr, "-ro", "-al", path).CombinedOutput()
	s := string(out)
	if err != nil || strings.Contains(s, "ERROR") || strings.Contains(s, "Warning") {
		t.Fatalf("ogrinfo: %v\n%s", err, s)
	}
	if !strings.Contains(s, "Feature Count: 2") || !strings.Contains(s, "MULTILINESTRING ((") ||
		!strings.Contains(s, "\n  LINESTRING (") || !strings.Contains(s, "class (String) = tropical_cyclone") {
		t.Errorf("ogrinfo output unexpected:\n%s", s)
	}
}

// checkTracks reads tracks.nc with ncdump (Debian netcdf-bin) and the
// netCDF4 module of Debian's python, and checks the CF-1.13 discrete
// sampling geometry attributes (section 9; reference-values.md).
func checkTracks(t *testing.T, path string) {
	if nc, err := exec.LookPath("ncdump"); err == nil {
		out, err := exec.Command(nc, "-h", path).CombinedOutput()
		if err != nil {
			t.Fatalf("ncdump: %v\n%s", err, out)
		}
		for _, want := range []string{`:featureType = "trajectory"`, `event_id:cf_role = "trajectory_id"`,
			`row_size:sample_dimension = "obs"`, `area:coordinates = "time lat lon"`, `:Conventions = "CF-1.13"`} {
			if !strings.Contains(string(out), want) {
				t.Errorf("ncdump -h lacks %s", want)
			}
		}
	} else {
		t.Log("ncdump not found (Debian netcdf-bin): skipping that check")
	}
	if _, err := os.Stat("/usr/bin/python3"); err != nil {
		t.Skip("/usr/bin/python3 not found: install Debian python3-netcdf4")
	}
	script := `
import sys, json, netCDF4
d = netCDF4.Dataset(sys.argv[1])
ids = [v for v in d.variables.values() if getattr(v, "cf_role", "") == "trajectory_id"]
cnt = [v for v in d.variables.values() if hasattr(v, "sample_dimension")]
rs = cnt[0][:].tolist()
lon = d["lon"][:].tolist()
t = d["time"]
dates = netCDF4.num2date(t[:], t.units, t.calendar)
print(json.dumps({"featureType": d.featureType, "ids": ids[0][:].tolist(), "row_size": rs,
  "obs": len(d.dimensions["obs"]), "sample_dimension": cnt[0].sample_dimension,
  "first": str(dates[0]), "lon0": lon[:rs[0]], "coords": d["slp_min"].coordinates,
  "slp": float(d["event_slp_min"][0])}))
`
	out, err := exec.Command("/usr/bin/python3", "-c", script, path).CombinedOutput()
	if err != nil {
		if strings.Contains(string(out), "No module named") {
			t.Skipf("python3-netcdf4 missing: %s", out)
		}
		t.Fatalf("netCDF4 read: %v\n%s", err, out)
	}
	var got struct {
		FeatureType     string
		IDs             []int `json:"ids"`
		RowSize         []int `json:"row_size"`
		Obs             int
		SampleDimension string `json:"sample_dimension"`
		First           string
		Lon0            []float64
		Coords          string
		SLP             float64
	}
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	if got.FeatureType != "trajectory" || len(got.IDs) != 2 || got.IDs[0] != 1 || got.Obs != 14 ||
		got.RowSize[0]+got.RowSize[1] != got.Obs || got.SampleDimension != "obs" || got.Coords != "time lat lon" {
		t.Errorf("DSG structure: %+v", got)
	}
	// netCDF4/cftime decodes the first time in the noleap calendar.
	if got.First != "1990-12-31 12:00:00" || got.SLP != 96000 {
		t.Errorf("first time %q, min SLP %g", got.First, got.SLP)
	}
	// Cyclone centroids: 172, 176, 180, -176, ... degrees (planted).
	for i, lon := range got.Lon0 {
		want := grid.NormalizeLon180(172 + 4*float64(i))
		if i == 2 {
			// exactly on the antimeridian: either sign is right
			if math.Abs(math.Abs(lon)-180) > 1e-9 {
				t.Errorf("point %d lon %g, want +-180", i, lon)
			}
			continue
		}
		if math.Abs(lon-want) > 1e-9 {
			t.Errorf("point %d lon %g, want %g", i, lon, want)
		}
	}
}

func TestKindBadInputs(t *testing.T) {
	dir := t.TempDir()
	g, _ := grid.Global(2, 2)
	g4, _ := grid.Global(4, 4)
	m := make([]byte, g.Len())
	mask := filepath.Join(dir, "m", MaskName)
	os.MkdirAll(filepath.Dir(mask), 0o755)
	testFile{g: g, times: []float64{0, 6}, mask: [][]byte{m, m}}.write(t, mask)
	mk := func(name string, tf testFile) pipeline.Input {
		p := filepath.Join(dir, name, FieldsName)
		os.MkdirAll(filepath.Dir(p), 0o755)
		tf.write(t, p)
		return pipeline.Input{From: "subset", Kind: "subset", Scenario: "ctl", Block: "1990", Files: []string{p}}
	}
	maskIn := pipeline.Input{From: "label", Kind: "label", Scenario: "ctl", Block: "1990", Files: []string{mask}}
	one := [][]float32{make([]float32, g.Len()), make([]float32, g.Len())}
	cases := []struct {
		name string
		in   []pipeline.Input
		want string
	}{
		{"fields on another grid", []pipeline.Input{maskIn, mk("g4", testFile{g: g4, times: []float64{0, 6},
			slp: [][]float32{make([]float32, g4.Len()), make([]float32, g4.Len())}})}, "different grids"},
		{"fields at other times", []pipeline.Input{maskIn, mk("t", testFile{g: g, times: []float64{0, 12}, slp: one})}, "same times"},
		{"fields with fewer steps", []pipeline.Input{maskIn, mk("n", testFile{g: g, times: []float64{0}, slp: one[:1]})}, "time steps"},
		{"fields in another calendar", []pipeline.Input{maskIn, mk("c", testFile{g: g, times: []float64{0, 6}, calendar: "360_day", slp: one})}, "calendar"},
		{"no masks", []pipeline.Input{mk("x", testFile{g: g, times: []float64{0, 6}, slp: one})}, "no input has a mask.nc"},
	}
	bad := make([]byte, g.Len())
	bad[5] = 2
	badMask := filepath.Join(dir, "bad", MaskName)
	os.MkdirAll(filepath.Dir(badMask), 0o755)
	testFile{g: g, times: []float64{0}, mask: [][]byte{bad}, badFlags: true}.write(t, badMask)
	cases = append(cases, struct {
		name string
		in   []pipeline.Input
		want string
	}{"mask value outside flag_values", []pipeline.Input{{From: "label", Kind: "label", Scenario: "ctl", Block: "1990", Files: []string{badMask}}}, "not one of the flag_values"})
	for _, c := range cases {
		_, err := runCatalog(t, c.in, nil)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one mentioning %q", c.name, err, c.want)
		}
	}
}

// TestKindLandMaskSetting routes a land mask file through the kind: the
// real 1-degree landsea.nc (Debian libncarg-data) regridded by nearest
// neighbour onto the 2-degree test world, or refused when asked to.
func TestKindLandMaskSetting(t *testing.T) {
	needLandsea(t)
	in := smallWorld(t, t.TempDir())
	in = append(in, pipeline.Input{From: "land_mask", Kind: "file", Files: []string{landsea}})
	set := map[string]any{"land_mask_variable": "LSMASK", "land_values": []float64{1, 2, 3, 4}, "land_mask_regrid": RegridRefuse}
	if _, err := runCatalog(t, in, set); err == nil || !strings.Contains(err.Error(), "land_mask_regrid") {
		t.Errorf("refused regrid: error %v", err)
	}
	set["land_mask_regrid"] = RegridNearest
	out, err := runCatalog(t, in, set)
	if err != nil {
		t.Fatal(err)
	}
	// The river (36-44N, cells 197E to 235E, i.e. 163W-125W) stays over
	// the North Pacific: the coast of northern California near 40N lies
	// at about 124W (common knowledge of geography), east of its last
	// cells; this is close to the coast, and the file agrees.
	for _, e := range readCSV(t, filepath.Join(out, EventsFile)) {
		if e["class"] == "atmospheric_river" && e["landfall"] != "false" {
			t.Errorf("river over the Pacific made landfall at %s %s", e["landfall_lat"], e["landfall_lon"])
		}
	}
}
