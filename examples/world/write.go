package world

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/stages/ncio"
)

// Version of the generator; it goes into the history attribute and changes
// whenever the same options would give different files.
const Version = "1"

// fieldVar is one time-varying variable of a fields file.
type fieldVar struct {
	name, std, long, units string
	levels                 bool // on plev or lev
	height                 bool // 10 m wind
}

var fieldVars = []fieldVar{
	{"psl", "air_pressure_at_mean_sea_level", "sea-level pressure", "Pa", false, false},
	{"ps", "surface_air_pressure", "surface pressure", "Pa", false, false},
	{"uas", "eastward_wind", "10 m eastward wind", "m s-1", false, true},
	{"vas", "northward_wind", "10 m northward wind", "m s-1", false, true},
	{"prw", "atmosphere_mass_content_of_water_vapor", "column water vapour", "kg m-2", false, false},
	{"ua", "eastward_wind", "eastward wind", "m s-1", true, false},
	{"va", "northward_wind", "northward wind", "m s-1", true, false},
	{"ta", "air_temperature", "air temperature", "K", true, false},
	{"hus", "specific_humidity", "specific humidity", "kg kg-1", true, false},
}

// slab returns the values of variable v in f.
func (f *fields) slab(v string) []float32 {
	switch v {
	case "psl":
		return f.slp
	case "ps":
		return f.ps
	case "uas":
		return f.u10
	case "vas":
		return f.v10
	case "prw":
		return f.iwv
	case "ua":
		return f.ua
	case "va":
		return f.va
	case "ta":
		return f.ta
	case "hus":
		return f.hus
	}
	panic("world: unknown field " + v)
}

func (s *season) provenance(what string) ncio.Provenance {
	o := s.opt
	sc := s.sc
	return ncio.Provenance{
		Tool: "squall examples/world generator " + Version, Kind: "world " + what, KindVersion: Version,
		Settings: map[string]string{
			"seed":      strconv.FormatUint(o.Seed, 10),
			"scenario":  sc.Name,
			"year":      strconv.Itoa(s.year),
			"domain":    fmt.Sprintf("lat %g..%g lon %g..%g step %g", o.LatMin, o.LatMax, o.LonMin, o.LonMax, o.Resolution),
			"time":      fmt.Sprintf("%d h steps, %d days from day %d", o.StepHours, o.Days, o.SeasonStart),
			"vertical":  o.Vertical + " " + o.BelowSurface,
			"warming_k": strconv.FormatFloat(sc.WarmingK, 'g', -1, 64),
			"cyclones":  fmt.Sprintf("%g%+g/yr x%g%+g/yr", sc.Cyclones.First, sc.Cyclones.PerYear, sc.CycloneIntensity, sc.CycloneIntensityTrend),
			"rivers":    fmt.Sprintf("%g%+g/yr x%g%+g/yr", sc.Rivers.First, sc.Rivers.PerYear, sc.RiverMoisture, sc.RiverMoistureTrend),
		},
	}
}

func (s *season) globalAttrs(w *ncio.Writer, title, what string) {
	// The history names the generator and its settings, never a date, so
	// identical options give identical files.
	h := s.provenance(what).String()
	if i := strings.IndexByte(h, '\n'); i >= 0 {
		h = "squall examples/world generator version " + Version + " (" + what + ")" + h[i:]
	}
	w.PutGlobalAttr("Conventions", ncio.Conventions)
	w.PutGlobalAttr("title", title)
	w.PutGlobalAttr("history", h)
	w.PutGlobalAttr("source", "squall invented-world generator "+Version+": synthetic climate-model-like output around the invented Halcyon Basin")
	w.PutGlobalAttr("comment", "Synthetic data with planted tropical cyclones and atmospheric rivers, for testing and demonstrating squall. Not observations and not a model of Earth; any detection or trend computed from it is research output, not a warning.")
	w.PutGlobalAttr("scenario", s.sc.Name)
	w.PutGlobalAttr("year", int32(s.year))
	w.PutGlobalAttr("frequency", fmt.Sprintf("%dhr", s.opt.StepHours))
}

func (s *season) times() []float64 {
	t := make([]float64, s.steps)
	for i := range t {
		t[i] = timeValue(s.year, s.opt.SeasonStart, float64(i*s.opt.StepHours))
	}
	return t
}

func f64s(xs []float64) []float64 { return append([]float64(nil), xs...) }

// createFields defines a fields file and writes its static variables.
func (s *season) createFields(path string) (*ncio.Writer, error) {
	g := s.g
	ny, nx := len(g.lats), len(g.lons)
	w, err := ncio.Create(path)
	if err != nil {
		return nil, err
	}
	w.DefTime(s.times(), TimeUnits, "noleap")
	levDim := "plev"
	if s.hybA != nil {
		levDim = "lev"
		a, b := s.hybA, s.hybB
		ab := make([]float64, len(a))
		for i := range a {
			ab[i] = a[i] + b[i]
		}
		w.DefCoord("lev", ab,
			ncio.Attr{Name: "standard_name", Value: "atmosphere_hybrid_sigma_pressure_coordinate"},
			ncio.Attr{Name: "long_name", Value: "hybrid sigma-pressure level"},
			ncio.Attr{Name: "units", Value: "1"},
			ncio.Attr{Name: "positive", Value: "down"},
			ncio.Attr{Name: "axis", Value: "Z"},
			ncio.Attr{Name: "formula_terms", Value: "a: a b: b p0: p0 ps: ps"},
			ncio.Attr{Name: "computed_standard_name", Value: "air_pressure"})
		w.DefVar(ncio.VarSpec{Name: "a", Type: ncio.Double, Dims: []string{"lev"},
			Attrs: []ncio.Attr{{Name: "long_name", Value: "hybrid coefficient a (pressure part, times p0)"}, {Name: "units", Value: "1"}}})
		w.DefVar(ncio.VarSpec{Name: "b", Type: ncio.Double, Dims: []string{"lev"},
			Attrs: []ncio.Attr{{Name: "long_name", Value: "hybrid coefficient b (sigma part)"}, {Name: "units", Value: "1"}}})
		w.DefVar(ncio.VarSpec{Name: "p0", Type: ncio.Double,
			Attrs: []ncio.Attr{{Name: "long_name", Value: "reference pressure"}, {Name: "units", Value: "Pa"}}})
	} else {
		w.DefCoord("plev", f64s(s.levels),
			ncio.Attr{Name: "standard_name", Value: "air_pressure"},
			ncio.Attr{Name: "long_name", Value: "pressure"},
			ncio.Attr{Name: "units", Value: "Pa"},
			ncio.Attr{Name: "positive", Value: "down"},
			ncio.Attr{Name: "axis", Value: "Z"})
	}
	w.DefLat(g.lats)
	w.DefLon(g.lons)
	w.DefVar(ncio.VarSpec{Name: "height", Type: ncio.Double, Attrs: []ncio.Attr{
		{Name: "standard_name", Value: "height"}, {Name: "long_name", Value: "height above the surface"},
		{Name: "units", Value: "m"}, {Name: "positive", Value: "up"}, {Name: "axis", Value: "Z"}}})
	nlev := s.nlev()
	for _, v := range fieldVars {
		spec := ncio.VarSpec{Name: v.name, Type: ncio.Float, Fill: FillValue, Deflate: 1, Shuffle: true,
			Dims: []string{"time", "lat", "lon"}, Chunks: []int{1, ny, nx},
			Attrs: []ncio.Attr{{Name: "standard_name", Value: v.std}, {Name: "long_name", Value: v.long}, {Name: "units", Value: v.units}}}
		if v.levels {
			spec.Dims = []string{"time", levDim, "lat", "lon"}
			spec.Chunks = []int{1, nlev, ny, nx}
		}
		if v.height {
			spec.Attrs = append(spec.Attrs, ncio.Attr{Name: "coordinates", Value: "height"})
		}
		w.DefVar(spec)
	}
	w.DefVar(ncio.VarSpec{Name: "land_area_fraction", Type: ncio.Float, Dims: []string{"lat", "lon"}, Deflate: 1, Shuffle: true,
		Attrs: []ncio.Attr{{Name: "standard_name", Value: "land_area_fraction"}, {Name: "long_name", Value: "land area fraction"}, {Name: "units", Value: "1"}}})
	s.globalAttrs(w, "Invented world: "+s.sc.Name+" "+strconv.Itoa(s.year), "fields")
	if err := w.EndDef(); err != nil {
		w.Abort()
		return nil, err
	}
	if s.hybA != nil {
		if err := firstErr(w.WriteFloat64("a", nil, nil, s.hybA), w.WriteFloat64("b", nil, nil, s.hybB), w.WriteFloat64("p0", nil, nil, []float64{p0})); err != nil {
			w.Abort()
			return nil, err
		}
	}
	if err := firstErr(w.WriteFloat64("height", nil, nil, []float64{10}), w.WriteFloat32("land_area_fraction", nil, nil, f32s(g.land))); err != nil {
		w.Abort()
		return nil, err
	}
	return w, nil
}

// writeFields writes time step t; it returns the raw bytes written.
func (s *season) writeFields(w *ncio.Writer, t int, f *fields) (int64, error) {
	ny, nx := len(s.g.lats), len(s.g.lons)
	nlev := s.nlev()
	var n int64
	for _, v := range fieldVars {
		data := f.slab(v.name)
		var err error
		if v.levels {
			err = w.WriteFloat32(v.name, []int{t, 0, 0, 0}, []int{1, nlev, ny, nx}, data)
		} else {
			err = w.WriteFloat32(v.name, []int{t, 0, 0}, []int{1, ny, nx}, data)
		}
		if err != nil {
			return n, err
		}
		n += int64(4 * len(data))
	}
	return n, nil
}

// createTruth defines a truth mask file (the shared mask.nc layout).
func (s *season) createTruth(path string) (*ncio.Writer, error) {
	g := s.g
	ny, nx := len(g.lats), len(g.lons)
	w, err := ncio.Create(path)
	if err != nil {
		return nil, err
	}
	w.DefTime(s.times(), TimeUnits, "noleap")
	w.DefLat(g.lats)
	w.DefLon(g.lons)
	w.DefVar(ncio.VarSpec{Name: "class_mask", Type: ncio.Byte, Dims: []string{"time", "lat", "lon"},
		Deflate: 1, Chunks: []int{1, ny, nx}, Attrs: []ncio.Attr{
			{Name: "long_name", Value: "planted class per pixel (truth)"},
			{Name: "flag_values", Value: []int8{0, 1, 2}},
			{Name: "flag_meanings", Value: "background tropical_cyclone atmospheric_river"},
			{Name: "comment", Value: fmt.Sprintf("tropical_cyclone: within the radius where a planted storm's symmetric 10 m wind reaches %.2f m/s (34 kt), capped at %.0f km; atmospheric_river: planted plume weight >= %g and 1000-300 hPa IVT >= %g kg m-1 s-1 (trapezoid rule, g = 9.80665); a pixel meeting both is tropical_cyclone", TCWindThreshold, TCMaxRadius/1000, riverMinWeight, ARThreshold)},
		}})
	w.DefVar(ncio.VarSpec{Name: "land_area_fraction", Type: ncio.Float, Dims: []string{"lat", "lon"}, Deflate: 1, Shuffle: true,
		Attrs: []ncio.Attr{{Name: "standard_name", Value: "land_area_fraction"}, {Name: "long_name", Value: "land area fraction"}, {Name: "units", Value: "1"}}})
	s.globalAttrs(w, "Invented world truth masks: "+s.sc.Name+" "+strconv.Itoa(s.year), "truth")
	if err := w.EndDef(); err != nil {
		w.Abort()
		return nil, err
	}
	if err := w.WriteFloat32("land_area_fraction", nil, nil, f32s(g.land)); err != nil {
		w.Abort()
		return nil, err
	}
	return w, nil
}

func (s *season) writeTruth(w *ncio.Writer, t int, f *fields) error {
	return w.WriteUint8("class_mask", []int{t, 0, 0}, []int{1, len(s.g.lats), len(s.g.lons)}, f.mask)
}

func f32s(xs []float64) []float32 {
	out := make([]float32, len(xs))
	for i, x := range xs {
		out[i] = float32(x)
	}
	return out
}

func firstErr(errs ...error) error {
	for _, e := range errs {
		if e != nil {
			return e
		}
	}
	return nil
}
