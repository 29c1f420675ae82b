package ncio

import (
	"errors"
	"math"
	"path/filepath"
	"reflect"
	"testing"
)

// hybridFile writes a small file with a CF hybrid sigma-pressure level
// coordinate; formula picks the "a p0" or the "ap" form.
func hybridFile(t *testing.T, apForm bool) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "hybrid.nc")
	w, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w.DefDim("time", 1)
	w.DefLat([]float64{0, 10})
	w.DefLon([]float64{0, 120, 240})
	ft := "a: hyam b: hybm p0: P0 ps: PS"
	if apForm {
		ft = "ap: ap b: hybm ps: PS"
	}
	w.DefCoord("lev", []float64{0.8, 0.5, 0.2}, Attr{"standard_name", "atmosphere_hybrid_sigma_pressure_coordinate"},
		Attr{"positive", "down"}, Attr{"formula_terms", ft})
	w.DefVar(VarSpec{Name: "hyam", Type: Double, Dims: []string{"lev"}})
	w.DefVar(VarSpec{Name: "ap", Type: Double, Dims: []string{"lev"}, Attrs: []Attr{{"units", "hPa"}}})
	w.DefVar(VarSpec{Name: "hybm", Type: Double, Dims: []string{"lev"}})
	w.DefVar(VarSpec{Name: "P0", Type: Double, Attrs: []Attr{{"units", "hPa"}}})
	w.DefVar(VarSpec{Name: "PS", Type: Float, Dims: []string{"time", "lat", "lon"}, Attrs: []Attr{{"units", "Pa"}}})
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	w.WriteFloat64("hyam", nil, nil, []float64{0.1, 0.3, 0.2})
	w.WriteFloat64("ap", nil, nil, []float64{100, 300, 200}) // hPa: = hyam * 1000 hPa
	w.WriteFloat64("hybm", nil, nil, []float64{0.7, 0.2, 0})
	w.WriteFloat64("P0", nil, nil, []float64{1000})
	w.WriteFloat32("PS", nil, nil, []float32{98000, 99000, 100000, 101000, 102000, 103000})
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestHybridFormulaTerms(t *testing.T) {
	for _, ap := range []bool{false, true} {
		f := mustOpen(t, hybridFile(t, ap))
		lv, err := f.Levels()
		if err != nil {
			t.Fatal(err)
		}
		if lv.Kind != HybridSigmaPressure || lv.PSVar != "PS" || lv.PSUnits != "Pa" || lv.P0Assumed || lv.N() != 3 {
			t.Fatalf("ap=%v: %+v", ap, lv)
		}
		// CF-1.13 appendix D: p = a p0 + b ps = ap + b ps. Level 0 at
		// ps = 98000 Pa: 0.1*100000 + 0.7*98000 = 78600 Pa (derived).
		const tol = 1e-9 // Pa; exact arithmetic up to one rounding
		if p := lv.Pressure(0, 98000); math.Abs(p-78600) > tol {
			t.Errorf("ap=%v: p(0) = %v, want 78600", ap, p)
		}
		// Level 2 has b = 0: a pure pressure level of 20000 Pa.
		if p := lv.Pressure(2, 50000); math.Abs(p-20000) > tol {
			t.Errorf("ap=%v: p(2) = %v, want 20000", ap, p)
		}
	}
}

func TestPressureLevels(t *testing.T) {
	path := filepath.Join(t.TempDir(), "plev.nc")
	w, _ := Create(path)
	w.DefDim("time", 2)
	w.DefCoord("plev", []float64{1000, 850, 500}, Attr{"standard_name", "air_pressure"}, Attr{"units", "hPa"}, Attr{"positive", "down"})
	w.DefCoord("level", []float64{925, 700}, Attr{"units", "mbar"})
	// A pressure time series is not a vertical coordinate.
	w.DefVar(VarSpec{Name: "p_station", Type: Double, Dims: []string{"time"}, Attrs: []Attr{{"units", "Pa"}}})
	w.DefVar(VarSpec{Name: "ua", Type: Float, Dims: []string{"time", "level"}})
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	f := mustOpen(t, path)
	lv, err := f.Levels()
	if err != nil {
		t.Fatal(err)
	}
	// 1 hPa = 100 Pa (SI).
	if lv.Kind != PressureLevels || lv.Var != "plev" || !reflect.DeepEqual(lv.Pa, []float64{100000, 85000, 50000}) {
		t.Errorf("levels %+v", lv)
	}
	lv, err = f.LevelsOf(mustVar(t, f, "ua"))
	if err != nil || lv.Var != "level" || !reflect.DeepEqual(lv.Pa, []float64{92500, 70000}) {
		t.Errorf("levels of ua: %+v %v", lv, err)
	}
	if _, err := f.LevelsOf(mustVar(t, f, "p_station")); !errors.Is(err, ErrNotFound) {
		t.Errorf("p_station has no vertical coordinate, got %v", err)
	}
}

func TestGridConventions(t *testing.T) {
	path := filepath.Join(t.TempDir(), "grid.nc")
	w, _ := Create(path)
	lat := []float64{90, 60, 30, 0, -30, -60, -90}
	var lon []float64
	for x := -180.0; x < 180; x += 30 {
		lon = append(lon, x)
	}
	w.DefLat(lat)
	w.DefLon(lon)
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	g, err := mustOpen(t, path).Grid()
	if err != nil {
		t.Fatal(err)
	}
	if !g.LatDescending || g.LonConv != LonMinus180To180 || !g.Global || g.NX() != 12 {
		t.Errorf("grid %+v", g)
	}
	for in, want := range map[float64]float64{200: -160, -190: 170, 180: -180, 359: -1} {
		if got := g.WrapLon(in); math.Abs(got-want) > 1e-12 {
			t.Errorf("WrapLon(%v) = %v, want %v", in, got, want)
		}
	}
	g.LonConv = Lon0To360
	if got := g.WrapLon(-10); got != 350 {
		t.Errorf("WrapLon(-10) in 0..360 = %v", got)
	}

	// Not monotonic: an error naming the variable.
	bad := filepath.Join(t.TempDir(), "bad.nc")
	w, _ = Create(bad)
	w.DefLat([]float64{0, 10, 5})
	w.DefLon([]float64{0, 1})
	w.Close()
	_, err = mustOpen(t, bad).Grid()
	wantErr(t, "non-monotonic latitude", err, bad, `"lat"`, "monotonic")
}

func TestUnlimitedTime(t *testing.T) {
	path := filepath.Join(t.TempDir(), "rec.nc")
	w, _ := Create(path)
	w.DefUnlimitedDim("time")
	w.DefDim("x", 2)
	w.DefVar(VarSpec{Name: "time", Type: Double, Dims: []string{"time"},
		Attrs: []Attr{{"units", "hours since 2000-01-01"}, {"calendar", "360_day"}}})
	w.DefVar(VarSpec{Name: "v", Type: Float, Dims: []string{"time", "x"}, Chunks: []int{1, 2}})
	for i := 0; i < 3; i++ {
		if err := w.WriteFloat64("time", []int{i}, []int{1}, []float64{float64(6 * i)}); err != nil {
			t.Fatal(err)
		}
		if err := w.WriteFloat32("v", []int{i, 0}, []int{1, 2}, []float32{float32(i), -float32(i)}); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	f := mustOpen(t, path)
	if n, _ := f.DimLen("time"); n != 3 {
		t.Errorf("time length %d", n)
	}
	ax, err := f.Times()
	if err != nil {
		t.Fatal(err)
	}
	if ax.Times[2] != Date(2000, 1, 1, 12) || ax.Calendar() != Day360 {
		t.Errorf("times %v", ax.Times)
	}
	if s, c := ax.YearRange(2000); s != 0 || c != 3 {
		t.Errorf("YearRange %d %d", s, c)
	}
	if s, c := ax.YearRange(2001); c != 0 {
		t.Errorf("YearRange(2001) %d %d", s, c)
	}
}
