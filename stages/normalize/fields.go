package normalize

import (
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"github.com/squall-climate/squall/stages/ncio"
)

// FieldsFile is the name of the subset stage's output, which both kinds
// of this package read.
const FieldsFile = "fields.nc"

// fieldVar is one channel variable of a fields.nc-shaped file.
type fieldVar struct {
	v        *ncio.Var
	name     string
	quantity string
	levelPa  float64
	units    string
	// packed variables (integers with scale_factor/add_offset) are read
	// as stored values and mapped by scale*x + offset at the end.
	packed        bool
	scale, offset float64
	missing       []float64
	lo, hi        float64
	float32       bool // read as float32 (float, unpacked)
}

// fieldsFile is an open fields.nc.
type fieldsFile struct {
	f        *ncio.File
	path     string
	nt       int
	lat, lon []float64
	vars     []*fieldVar
}

// openFields opens a fields.nc-shaped file and lists its channels: every
// numeric variable with dimensions (time, lat, lon).
func openFields(path string) (*fieldsFile, error) {
	f, err := ncio.Open(path)
	if err != nil {
		return nil, err
	}
	ff := &fieldsFile{f: f, path: path}
	g, err := f.Grid()
	if err != nil {
		f.Close()
		return nil, err
	}
	ff.lat, ff.lon = g.Lat, g.Lon
	nt, err := f.DimLen("time")
	if err != nil {
		f.Close()
		return nil, fmt.Errorf("%s has no time dimension (hint: it must be written by a subset stage): %w", path, err)
	}
	ff.nt = nt
	for _, v := range f.Vars() {
		d := v.DimNames()
		if len(d) != 3 || d[0] != "time" || d[1] != g.LatDim || d[2] != g.LonDim {
			continue
		}
		fv := &fieldVar{v: v, name: v.Name(), quantity: v.AttrString("quantity"), units: v.Units(), scale: 1}
		if fv.quantity == "" {
			fv.quantity = v.StandardName()
		}
		if fv.quantity == "" {
			fv.quantity = v.Name()
		}
		if l, ok := v.AttrFloat64("level_pa"); ok {
			fv.levelPa = l
		}
		s, hasS := v.AttrFloat64("scale_factor")
		o, hasO := v.AttrFloat64("add_offset")
		switch v.Type() {
		case ncio.Float:
			fv.float32 = !hasS && !hasO
		case ncio.Byte, ncio.Short, ncio.Int, ncio.UByte, ncio.UShort:
			if hasS || hasO {
				fv.packed = true
				if hasS {
					fv.scale = s
				}
				fv.offset = o
				fv.missing, fv.lo, fv.hi = v.Missing()
			}
		}
		ff.vars = append(ff.vars, fv)
	}
	if len(ff.vars) == 0 {
		f.Close()
		return nil, fmt.Errorf("%s has no (time, lat, lon) variable (hint: it must be written by a subset stage)", path)
	}
	return ff, nil
}

func (ff *fieldsFile) close() { ff.f.Close() }

// plane is one time step of one channel: float32 for float variables,
// float64 otherwise (stored values for packed variables).
type plane struct {
	f32 []float32
	f64 []float64
}

// read reads time step t of fv (NaN where missing).
func (ff *fieldsFile) read(fv *fieldVar, t int) (plane, error) {
	n := len(ff.lat) * len(ff.lon)
	start, count := []int{t, 0, 0}, []int{1, len(ff.lat), len(ff.lon)}
	if fv.float32 {
		buf := make([]float32, n)
		err := fv.v.ReadFloat32Into(buf, start, count)
		return plane{f32: buf}, err
	}
	if !fv.packed {
		buf := make([]float64, n)
		err := fv.v.ReadFloat64Into(buf, start, count)
		return plane{f64: buf}, err
	}
	raw, err := fv.v.ReadInt32(start, count)
	if err != nil {
		return plane{}, err
	}
	buf := make([]float64, n)
	for i, r := range raw {
		x := float64(r)
		bad := x < fv.lo || x > fv.hi
		for _, m := range fv.missing {
			bad = bad || x == m
		}
		if bad {
			x = math.NaN()
		}
		buf[i] = x
	}
	return plane{f64: buf}, nil
}

// describe lists the channels for error messages.
func (ff *fieldsFile) describe() string {
	var parts []string
	for _, v := range ff.vars {
		s := fmt.Sprintf("%s (%s", v.name, v.quantity)
		if v.levelPa > 0 {
			s += fmt.Sprintf(" at %g Pa", v.levelPa)
		}
		parts = append(parts, s+")")
	}
	return filepath.Base(ff.path) + ": " + strings.Join(parts, ", ")
}
