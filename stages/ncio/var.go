package ncio

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/fhs/go-netcdf/netcdf"
)

// Var is a variable of an open File. Its metadata is loaded at Open; data
// is read on demand with the Read methods.
type Var struct {
	f     *File
	nv    netcdf.Var
	id    cint
	name  string
	typ   Type
	dims  []string
	shape []int
	pack  *packing // computed on first read
}

func newVar(f *File, varid int) (*Var, error) {
	nv := f.ds.VarN(varid)
	id := cint(varid)
	name, typ, dims, shape, err := varMeta(f.ds, id)
	if err != nil {
		return nil, err
	}
	return &Var{f: f, nv: nv, id: id, name: name, typ: typ, dims: dims, shape: shape}, nil
}

// Name returns the variable's name.
func (v *Var) Name() string { return v.name }

// DimNames returns the names of the variable's dimensions, slowest first.
func (v *Var) DimNames() []string { return append([]string(nil), v.dims...) }

// Shape returns the dimension lengths, slowest first.
func (v *Var) Shape() []int { return append([]int(nil), v.shape...) }

// Type returns the external type of the stored values.
func (v *Var) Type() Type { return v.typ }

// Len returns the number of values (the product of the shape).
func (v *Var) Len() int {
	n := 1
	for _, s := range v.shape {
		n *= s
	}
	return n
}

// File returns the file the variable belongs to.
func (v *Var) File() *File { return v.f }

// AttrNames lists the variable's attributes in file order.
func (v *Var) AttrNames() []string {
	names, _ := attNames(v.f.ds, v.id)
	return names
}

// Attr returns an attribute as a Go value: string for text (NC_CHAR or
// NC_STRING), else a slice of the stored type ([]float32, []int8, ...).
func (v *Var) Attr(name string) (any, bool) { return attrValue(v.f.ds, v.id, name) }

// AttrType returns the stored type of an attribute.
func (v *Var) AttrType(name string) (Type, bool) {
	t, _, ok, err := attInfo(v.f.ds, v.id, name)
	return t, ok && err == nil
}

// AttrString returns a text attribute, "" when absent or not text.
func (v *Var) AttrString(name string) string {
	a, _ := v.Attr(name)
	s, _ := a.(string)
	return s
}

// AttrFloat64 returns the first value of a numeric attribute.
func (v *Var) AttrFloat64(name string) (float64, bool) {
	xs, ok := v.AttrFloat64s(name)
	if !ok || len(xs) == 0 {
		return 0, false
	}
	return xs[0], true
}

// AttrFloat64s returns a numeric attribute converted to float64.
func (v *Var) AttrFloat64s(name string) ([]float64, bool) {
	a, ok := v.Attr(name)
	if !ok {
		return nil, false
	}
	return toFloat64s(a)
}

// StandardName returns the CF standard_name without any modifier
// ("air_temperature standard_error" gives "air_temperature").
func (v *Var) StandardName() string {
	f := strings.Fields(v.AttrString("standard_name"))
	if len(f) == 0 {
		return ""
	}
	return f[0]
}

// Units returns the units attribute with surrounding blanks removed.
func (v *Var) Units() string { return strings.TrimSpace(v.AttrString("units")) }

// LongName returns the long_name attribute.
func (v *Var) LongName() string { return v.AttrString("long_name") }

// Chunking returns the chunk sizes, or nil for contiguous (and all
// netCDF-3) storage.
func (v *Var) Chunking() ([]int, error) {
	c, err := inqChunking(v.f.ds, v.id, len(v.dims))
	if err != nil {
		return nil, varErr("inquire chunking of", v.f.path, v.name, err, "")
	}
	return c, nil
}

// Deflate returns the shuffle flag and the zlib level (0: uncompressed).
func (v *Var) Deflate() (shuffle bool, level int, err error) {
	s, d, l, err := varCompression(v.nv)
	if err != nil {
		// netCDF-3 files have no filters.
		return false, 0, nil
	}
	if !d {
		l = 0
	}
	return s, l, nil
}

func attrValue(ds netcdf.Dataset, id cint, name string) (any, bool) {
	_, _, ok, err := attInfo(ds, id, name)
	if !ok || err != nil {
		return nil, false
	}
	a, err := getAtt(ds, id, name)
	if err != nil {
		return nil, false
	}
	return a, true
}

func toFloat64s(a any) ([]float64, bool) {
	switch s := a.(type) {
	case []float64:
		return s, true
	case []float32:
		return conv(s), true
	case []int8:
		return conv(s), true
	case []uint8:
		return conv(s), true
	case []int16:
		return conv(s), true
	case []uint16:
		return conv(s), true
	case []int32:
		return conv(s), true
	case []uint32:
		return conv(s), true
	case []int64:
		return conv(s), true
	case []uint64:
		return conv(s), true
	}
	return nil, false
}

type number interface {
	~int8 | ~uint8 | ~int16 | ~uint16 | ~int32 | ~uint32 | ~int64 | ~uint64 | ~float32 | ~float64
}

func conv[T number](xs []T) []float64 {
	out := make([]float64, len(xs))
	for i, x := range xs {
		out[i] = float64(x)
	}
	return out
}

// packing holds what turns stored values into physical ones, following the
// CF conventions (section 2.5.1 and 8.1) and the netCDF user guide's
// attribute conventions.
type packing struct {
	missing         []float64 // stored values that mean "no data"
	lo, hi          float64   // valid range of stored values (inclusive)
	scale, offset   float64
	scaled          bool
	anyMask         bool
	missing32       []float32
	lo32, hi32      float32
	float32Unscaled bool // a float variable read as float32 needs no conversion
}

func (v *Var) packing() *packing {
	if v.pack != nil {
		return v.pack
	}
	p := &packing{lo: math.Inf(-1), hi: math.Inf(1), scale: 1}
	fill, hasFill := v.AttrFloat64("_FillValue")
	if hasFill {
		p.missing = append(p.missing, fill)
	}
	if mv, ok := v.AttrFloat64s("missing_value"); ok {
		p.missing = append(p.missing, mv...)
	}
	if !hasFill {
		// Values never written hold the library's default fill; the netCDF4
		// Python module masks them too (checked in the tests).
		if df, ok := defaultFill(v.typ); ok {
			p.missing = append(p.missing, df)
		}
	}
	if vr, ok := v.AttrFloat64s("valid_range"); ok && len(vr) == 2 {
		p.lo, p.hi = vr[0], vr[1]
	} else {
		if x, ok := v.AttrFloat64("valid_min"); ok {
			p.lo = x
		}
		if x, ok := v.AttrFloat64("valid_max"); ok {
			p.hi = x
		}
	}
	if s, ok := v.AttrFloat64("scale_factor"); ok {
		p.scale, p.scaled = s, true
	}
	if o, ok := v.AttrFloat64("add_offset"); ok {
		p.offset, p.scaled = o, true
	}
	p.anyMask = len(p.missing) > 0 || !math.IsInf(p.lo, -1) || !math.IsInf(p.hi, 1)
	p.float32Unscaled = v.typ == Float && !p.scaled
	for _, m := range p.missing {
		p.missing32 = append(p.missing32, float32(m))
	}
	p.lo32, p.hi32 = float32(p.lo), float32(p.hi)
	if math.IsInf(p.lo, -1) {
		p.lo32 = float32(math.Inf(-1))
	}
	if math.IsInf(p.hi, 1) {
		p.hi32 = float32(math.Inf(1))
	}
	v.pack = p
	return p
}

// Missing returns the stored values that mean "no data" (_FillValue,
// missing_value, or the library default fill) and the valid range applied
// to stored values, as used by ReadFloat64 and ReadFloat32.
func (v *Var) Missing() (missing []float64, validMin, validMax float64) {
	p := v.packing()
	return append([]float64(nil), p.missing...), p.lo, p.hi
}

// slab checks start and count against the shape. nil start and count
// select the whole variable.
func (v *Var) slab(start, count []int) ([]int, []int, int, error) {
	if start == nil && count == nil {
		start = make([]int, len(v.shape))
		count = v.Shape()
	}
	if len(start) != len(v.shape) || len(count) != len(v.shape) {
		return nil, nil, 0, varErr("read", v.f.path, v.name,
			fmt.Errorf("start %v and count %v need %d entries for dims (%s)", start, count, len(v.shape), strings.Join(v.dims, ", ")), "")
	}
	n := 1
	for i := range start {
		if start[i] < 0 || count[i] < 0 || start[i]+count[i] > v.shape[i] {
			return nil, nil, 0, varErr("read", v.f.path, v.name,
				fmt.Errorf("start %v count %v is outside shape %v (dim %q)", start, count, v.shape, v.dims[i]), "")
		}
		n *= count[i]
	}
	return start, count, n, nil
}

func (v *Var) readErr(err error) error {
	hint := ""
	var ne netcdf.Error
	if errors.As(err, &ne) && (int(ne) == errHDF || int(ne) == errReadData) {
		hint = "the file may be truncated or damaged"
	}
	return varErr("read", v.f.path, v.name, err, hint)
}

// ReadFloat64 reads a hyperslab (nil start and count: everything) as
// physical values: stored values equal to _FillValue or missing_value, or
// outside valid_min/valid_max/valid_range, become NaN, and then
// scale_factor and add_offset are applied. Values come in row-major order
// (last dimension fastest).
func (v *Var) ReadFloat64(start, count []int) ([]float64, error) {
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return nil, err
	}
	buf := make([]float64, n)
	return buf, v.readFloat64Into(buf, start, count)
}

// ReadFloat64Into is ReadFloat64 into a caller-owned buffer of at least the
// slab's size, for streaming without allocation.
func (v *Var) ReadFloat64Into(buf []float64, start, count []int) error {
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return err
	}
	if len(buf) < n {
		return varErr("read", v.f.path, v.name, fmt.Errorf("buffer holds %d values, slab has %d", len(buf), n), "")
	}
	return v.readFloat64Into(buf[:n], start, count)
}

func (v *Var) readFloat64Into(buf []float64, start, count []int) error {
	if !v.typ.numeric() {
		return varErr("read", v.f.path, v.name, fmt.Errorf("type %v is not numeric", v.typ), "")
	}
	if err := getVaraDouble(v.f.ds, v.id, start, count, buf); err != nil {
		return v.readErr(err)
	}
	p := v.packing()
	nan := math.NaN()
	for i, x := range buf {
		if p.anyMask {
			if x < p.lo || x > p.hi {
				buf[i] = nan
				continue
			}
			bad := false
			for _, m := range p.missing {
				if x == m {
					bad = true
					break
				}
			}
			if bad {
				buf[i] = nan
				continue
			}
		}
		if p.scaled {
			buf[i] = x*p.scale + p.offset
		}
	}
	return nil
}

// ReadFloat32 is ReadFloat64 with float32 results. For a float variable
// without packing it reads the stored values directly (no float64 pass).
func (v *Var) ReadFloat32(start, count []int) ([]float32, error) {
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return nil, err
	}
	buf := make([]float32, n)
	return buf, v.readFloat32Into(buf, start, count)
}

// ReadFloat32Into is ReadFloat32 into a caller-owned buffer.
func (v *Var) ReadFloat32Into(buf []float32, start, count []int) error {
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return err
	}
	if len(buf) < n {
		return varErr("read", v.f.path, v.name, fmt.Errorf("buffer holds %d values, slab has %d", len(buf), n), "")
	}
	return v.readFloat32Into(buf[:n], start, count)
}

func (v *Var) readFloat32Into(buf []float32, start, count []int) error {
	p := v.packing()
	if !p.float32Unscaled {
		tmp := make([]float64, len(buf))
		if err := v.readFloat64Into(tmp, start, count); err != nil {
			return err
		}
		for i, x := range tmp {
			buf[i] = float32(x)
		}
		return nil
	}
	if err := getVaraFloat(v.f.ds, v.id, start, count, buf); err != nil {
		return v.readErr(err)
	}
	if !p.anyMask {
		return nil
	}
	nan := float32(math.NaN())
	for i, x := range buf {
		if x < p.lo32 || x > p.hi32 {
			buf[i] = nan
			continue
		}
		for _, m := range p.missing32 {
			if x == m {
				buf[i] = nan
				break
			}
		}
	}
	return nil
}

// ReadInt32 reads stored values as int32 without masking or unpacking
// (for integer coordinates and counts).
func (v *Var) ReadInt32(start, count []int) ([]int32, error) {
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return nil, err
	}
	buf := make([]int32, n)
	if err := getVaraInt(v.f.ds, v.id, start, count, buf); err != nil {
		return nil, v.readErr(err)
	}
	return buf, nil
}

// ReadInt8 reads stored values as int8 without masking (class masks,
// flags).
func (v *Var) ReadInt8(start, count []int) ([]int8, error) {
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return nil, err
	}
	buf := make([]int8, n)
	if err := getVaraSchar(v.f.ds, v.id, start, count, buf); err != nil {
		return nil, v.readErr(err)
	}
	return buf, nil
}

// ReadUint8 reads stored values as uint8 without masking (class masks,
// flags). A negative NC_BYTE value is an error in a netCDF-4 file
// (NC_ERANGE; use ReadInt8), while netCDF-3 files wrap it (-1 reads as
// 255) under the library's byte rules.
func (v *Var) ReadUint8(start, count []int) ([]uint8, error) {
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return nil, err
	}
	buf := make([]uint8, n)
	if err := getVaraUchar(v.f.ds, v.id, start, count, buf); err != nil {
		return nil, v.readErr(err)
	}
	return buf, nil
}

// ReadText reads a char variable as bytes (e.g. a date string).
func (v *Var) ReadText(start, count []int) ([]byte, error) {
	if v.typ != Char {
		return nil, varErr("read", v.f.path, v.name, fmt.Errorf("type %v is not char", v.typ), "")
	}
	start, count, n, err := v.slab(start, count)
	if err != nil {
		return nil, err
	}
	buf := make([]byte, n)
	if err := getVaraText(v.f.ds, v.id, start, count, buf); err != nil {
		return nil, v.readErr(err)
	}
	return buf, nil
}

// extent returns a lower bound of the file size needed by this variable's
// data in a netCDF-3 file (its data size; the header comes on top).
func (v *Var) extent() (int64, error) {
	n := int64(v.typ.size())
	for _, s := range v.shape {
		n *= int64(s)
	}
	return n, nil
}
