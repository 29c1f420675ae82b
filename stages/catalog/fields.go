package catalog

import (
	"fmt"
	"math"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// FieldsFile reads the intensity fields of fields.nc (the subset stage's
// output). Channels are found by their quantity attribute (and the absence
// of level_pa for single-level fields), never by channel name:
//
//	SLP   quantity air_pressure_at_mean_sea_level
//	wind  quantity wind_speed without level_pa, else eastward_wind and
//	      northward_wind without level_pa (10 m winds)
//	IVT   quantity ivt, else ivt_u and ivt_v
//	IWV   quantity iwv or atmosphere_mass_content_of_water_vapor
//
// Files without quantity attributes (raw model output) are read by
// standard_name instead. Each is converted to SI units (Pa, m s-1, kg m-1 s-1, kg m-2); a field
// that is absent leaves its intensity columns empty.
type FieldsFile struct {
	Path  string
	File  *ncio.File
	Grid  *grid.Grid
	Times *ncio.TimeAxis
	// Land is land_area_fraction (0..1) when the file has it, else nil.
	Land []float64

	slp, wind, u, v, ivt, ivtU, ivtV, iwv *channel
	scratch                               []float32
}

type channel struct {
	v    *ncio.Var
	conv ncio.Converter
}

// OpenFields opens fields.nc and finds its channels.
func OpenFields(path string) (*FieldsFile, error) {
	f, err := ncio.Open(path)
	if err != nil {
		return nil, err
	}
	ff := &FieldsFile{Path: path, File: f}
	if err := ff.init(); err != nil {
		f.Close()
		return nil, err
	}
	return ff, nil
}

func (ff *FieldsFile) init() error {
	f := ff.File
	ng, err := f.Grid()
	if err != nil {
		return fmt.Errorf("%s: %w", ff.Path, err)
	}
	if ff.Grid, err = grid.New(ng.Lat, ng.Lon); err != nil {
		return fmt.Errorf("%s: %w", ff.Path, err)
	}
	if ff.Times, err = f.Times(); err != nil {
		return fmt.Errorf("%s: %w", ff.Path, err)
	}
	find := func(quantity, to string) (*channel, error) {
		for _, v := range f.Vars() {
			// fields.nc names the quantity; raw model files only have
			// standard names, which equal the quantity for non-derived
			// fields (3-D (time, lat, lon) only: level fields have 4 dims).
			q := v.AttrString("quantity")
			if q == "" {
				q = v.StandardName()
			}
			if len(v.DimNames()) != 3 || q != quantity {
				continue
			}
			if _, hasLevel := v.AttrFloat64("level_pa"); hasLevel {
				continue
			}
			conv, err := ncio.NewConverter(v.Units(), to)
			if err != nil {
				return nil, fmt.Errorf("%s: variable %s (quantity %s): %w; want units convertible to %s", ff.Path, v.Name(), quantity, err, to)
			}
			return &channel{v: v, conv: conv}, nil
		}
		return nil, nil
	}
	type want struct {
		dst           **channel
		quantity, uni string
	}
	for _, w := range []want{
		{&ff.slp, "air_pressure_at_mean_sea_level", "Pa"},
		{&ff.wind, "wind_speed", "m s-1"},
		{&ff.u, "eastward_wind", "m s-1"},
		{&ff.v, "northward_wind", "m s-1"},
		{&ff.ivt, "ivt", "kg m-1 s-1"},
		{&ff.ivtU, "ivt_u", "kg m-1 s-1"},
		{&ff.ivtV, "ivt_v", "kg m-1 s-1"},
		{&ff.iwv, "iwv", "kg m-2"},
	} {
		c, err := find(w.quantity, w.uni)
		if err != nil {
			return err
		}
		*w.dst = c
	}
	if ff.iwv == nil {
		c, err := find("atmosphere_mass_content_of_water_vapor", "kg m-2")
		if err != nil {
			return err
		}
		ff.iwv = c
	}
	land, err := ReadLandFraction(f, ff.Grid)
	if err != nil {
		return err
	}
	ff.Land = land
	return nil
}

// ReadLandFraction reads the 2-D variable land_area_fraction (found by
// standard_name or name) as a fraction 0..1, or returns nil when the file
// has none. Units "%" are converted.
func ReadLandFraction(f *ncio.File, g *grid.Grid) ([]float64, error) {
	v, err := f.FindVar("land_area_fraction", "land_area_fraction")
	if err != nil {
		return nil, nil
	}
	if sh := v.Shape(); len(sh) != 2 || sh[0] != g.NLat() || sh[1] != g.NLon() {
		return nil, fmt.Errorf("%s: land_area_fraction has shape %v, want (lat, lon) = (%d, %d)", f.Path(), v.Shape(), g.NLat(), g.NLon())
	}
	x, err := v.ReadFloat64(nil, nil)
	if err != nil {
		return nil, err
	}
	if u := v.Units(); u != "" && u != "1" {
		if err := ncio.ConvertUnits(x, u, "1", "land_area_fraction"); err != nil {
			return nil, fmt.Errorf("%s: %w", f.Path(), err)
		}
	}
	return x, nil
}

// Has reports which intensities the file can give.
func (ff *FieldsFile) Has() (slp, wind, ivt, iwv bool) {
	return ff.slp != nil, ff.wind != nil || (ff.u != nil && ff.v != nil),
		ff.ivt != nil || (ff.ivtU != nil && ff.ivtV != nil), ff.iwv != nil
}

func (ff *FieldsFile) read(c *channel, t int, out []float32) error {
	n := ff.Grid.Len()
	if err := c.v.ReadFloat32Into(out[:n], []int{t, 0, 0}, []int{1, ff.Grid.NLat(), ff.Grid.NLon()}); err != nil {
		return err
	}
	if !c.conv.Identity() {
		c.conv.Apply32(out[:n])
	}
	return nil
}

// magnitude reads two components and stores sqrt(a^2 + b^2) in out.
func (ff *FieldsFile) magnitude(a, b *channel, t int, out []float32) error {
	n := ff.Grid.Len()
	if cap(ff.scratch) < n {
		ff.scratch = make([]float32, n)
	}
	if err := ff.read(a, t, out); err != nil {
		return err
	}
	if err := ff.read(b, t, ff.scratch[:n]); err != nil {
		return err
	}
	for k := range out[:n] {
		x, y := float64(out[k]), float64(ff.scratch[k])
		out[k] = float32(math.Hypot(x, y))
	}
	return nil
}

// Read fills the fields of step t; buffers in dst are reused (allocated on
// first use); a field the file lacks is set to nil.
func (ff *FieldsFile) Read(t int, dst *Fields) error {
	n := ff.Grid.Len()
	buf := func(b []float32) []float32 {
		if cap(b) < n {
			return make([]float32, n)
		}
		return b[:n]
	}
	var err error
	if ff.slp != nil {
		dst.SLP = buf(dst.SLP)
		err = ff.read(ff.slp, t, dst.SLP)
	} else {
		dst.SLP = nil
	}
	if err != nil {
		return err
	}
	switch {
	case ff.wind != nil:
		dst.Wind = buf(dst.Wind)
		err = ff.read(ff.wind, t, dst.Wind)
	case ff.u != nil && ff.v != nil:
		dst.Wind = buf(dst.Wind)
		err = ff.magnitude(ff.u, ff.v, t, dst.Wind)
	default:
		dst.Wind = nil
	}
	if err != nil {
		return err
	}
	switch {
	case ff.ivt != nil:
		dst.IVT = buf(dst.IVT)
		err = ff.read(ff.ivt, t, dst.IVT)
	case ff.ivtU != nil && ff.ivtV != nil:
		dst.IVT = buf(dst.IVT)
		err = ff.magnitude(ff.ivtU, ff.ivtV, t, dst.IVT)
	default:
		dst.IVT = nil
	}
	if err != nil {
		return err
	}
	if ff.iwv != nil {
		dst.IWV = buf(dst.IWV)
		err = ff.read(ff.iwv, t, dst.IWV)
	} else {
		dst.IWV = nil
	}
	return err
}

// Close closes the file.
func (ff *FieldsFile) Close() error { return ff.File.Close() }
