package ncio

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"

	"github.com/fhs/go-netcdf/netcdf"
)

// Attr is a named attribute value: a string (written as NC_CHAR text) or a
// number or slice of numbers whose Go type fixes the netCDF type: float64
// (double), float32 (float), int32 or int (int), int16 (short), int8 (byte),
// uint8 (ubyte).
type Attr struct {
	Name  string
	Value any
}

// VarSpec describes a variable to define.
type VarSpec struct {
	Name  string
	Type  Type     // Float, Double, Int, Short, Byte or UByte
	Dims  []string // dimension names, slowest first; each defined before
	Attrs []Attr   // written in this order (after _FillValue)
	// Fill is the _FillValue (any number type, converted to Type); nil
	// leaves the library default, with no _FillValue attribute.
	Fill any
	// Deflate is the zlib level 1..9, 0 for none. Shuffle adds the byte
	// shuffle filter, which helps float fields compress.
	Deflate int
	Shuffle bool
	// Chunks are the chunk sizes, one per dimension (e.g. 1, nlat, nlon to
	// read one time step per chunk). nil: the library's default, which is
	// contiguous storage for fixed-size variables without compression.
	Chunks []int
}

// Writer creates a netCDF-4 file. Use from a single goroutine only (see
// the package documentation). Define dimensions, variables and attributes,
// call EndDef, then write data; Close renames the finished file into place,
// so a crash never leaves a half-written file under the final name.
//
// The definition methods keep the first error and return it again from
// EndDef and Close, so definitions can be written without checking every
// call.
type Writer struct {
	path, tmp string
	ds        netcdf.Dataset
	open      bool
	defining  bool
	dims      map[string]netcdf.Dim
	dimLen    map[string]int // 0 for unlimited
	vars      map[string]*wvar
	pending   []func() error // coordinate writes run after EndDef
	err       error
}

type wvar struct {
	id    cint
	nv    netcdf.Var
	spec  VarSpec
	shape []int // 0 for an unlimited dim
}

// Create creates a netCDF-4 (HDF5) file at path, replacing any file of
// that name when Close succeeds. Data goes to a temporary sibling first.
func Create(path string) (*Writer, error) {
	keepHeap()
	dir := filepath.Dir(path)
	tmp := filepath.Join(dir, "."+filepath.Base(path)+".partial")
	ds, err := createNetCDF4(tmp)
	if err != nil {
		return nil, fileErr("create", path, err, "check that the directory exists and is writable")
	}
	return &Writer{path: path, tmp: tmp, ds: ds, open: true, defining: true,
		dims: map[string]netcdf.Dim{}, dimLen: map[string]int{}, vars: map[string]*wvar{}}, nil
}

// Path returns the final path of the file.
func (w *Writer) Path() string { return w.path }

// Err returns the first error recorded by the definition methods.
func (w *Writer) Err() error { return w.err }

func (w *Writer) fail(v string, err error, hint string) error {
	e := &Error{Op: "define", Path: w.path, Var: v, Err: err, Hint: hint}
	if w.err == nil {
		w.err = e
	}
	return e
}

func (w *Writer) checkDefining(what string) error {
	if !w.open {
		return w.fail(what, errors.New("writer is closed"), "")
	}
	if !w.defining {
		return w.fail(what, errors.New("definitions must come before EndDef"), "")
	}
	return nil
}

// DefDim defines a fixed-size dimension.
func (w *Writer) DefDim(name string, n int) error {
	if err := w.checkDefining(name); err != nil {
		return err
	}
	if n <= 0 {
		return w.fail(name, fmt.Errorf("dimension length %d must be positive", n), "use DefUnlimitedDim for a growing dimension")
	}
	return w.defDim(name, n)
}

// DefUnlimitedDim defines an unlimited (record) dimension.
func (w *Writer) DefUnlimitedDim(name string) error {
	if err := w.checkDefining(name); err != nil {
		return err
	}
	return w.defDim(name, 0)
}

func (w *Writer) defDim(name string, n int) error {
	if _, dup := w.dims[name]; dup {
		return w.fail(name, errors.New("dimension defined twice"), "")
	}
	d, err := dsAddDim(w.ds, name, n)
	if err != nil {
		return w.fail(name, err, "")
	}
	w.dims[name] = d
	w.dimLen[name] = n
	return nil
}

// DefVar defines a variable with its storage options and attributes.
func (w *Writer) DefVar(s VarSpec) error {
	if err := w.checkDefining(s.Name); err != nil {
		return err
	}
	if _, dup := w.vars[s.Name]; dup {
		return w.fail(s.Name, errors.New("variable defined twice"), "")
	}
	switch s.Type {
	case Float, Double, Int, Short, Byte, UByte:
	default:
		return w.fail(s.Name, fmt.Errorf("type %v is not supported for writing", s.Type), "use Float, Double, Int, Short, Byte or UByte")
	}
	dims := make([]netcdf.Dim, len(s.Dims))
	shape := make([]int, len(s.Dims))
	for i, dn := range s.Dims {
		d, ok := w.dims[dn]
		if !ok {
			return w.fail(s.Name, fmt.Errorf("dimension %q is not defined", dn), "call DefDim first")
		}
		dims[i], shape[i] = d, w.dimLen[dn]
	}
	nv, err := dsAddVar(w.ds, s.Name, s.Type, dims)
	if err != nil {
		return w.fail(s.Name, err, "")
	}
	id, err := varID(w.ds, s.Name)
	if err != nil {
		return w.fail(s.Name, err, "")
	}
	if s.Chunks != nil {
		if len(s.Chunks) != len(s.Dims) {
			return w.fail(s.Name, fmt.Errorf("%d chunk sizes for %d dimensions", len(s.Chunks), len(s.Dims)), "")
		}
		for i, c := range s.Chunks {
			if c <= 0 || (shape[i] > 0 && c > shape[i]) {
				return w.fail(s.Name, fmt.Errorf("chunk size %d for dimension %q of length %d", c, s.Dims[i], shape[i]), "chunk sizes must be between 1 and the dimension length")
			}
		}
		if len(s.Dims) > 0 {
			if err := defChunking(w.ds, id, s.Chunks); err != nil {
				return w.fail(s.Name, fmt.Errorf("set chunking %v: %w", s.Chunks, err), "")
			}
		}
	}
	if s.Deflate < 0 || s.Deflate > 9 {
		return w.fail(s.Name, fmt.Errorf("deflate level %d", s.Deflate), "use 0 (none) to 9")
	}
	if (s.Deflate > 0 || s.Shuffle) && len(s.Dims) > 0 {
		if err := defDeflate(w.ds, id, s.Shuffle, s.Deflate); err != nil {
			return w.fail(s.Name, fmt.Errorf("set deflate: %w", err), "")
		}
	}
	if s.Fill != nil {
		f, ok := anyFloat(s.Fill)
		if !ok {
			return w.fail(s.Name, fmt.Errorf("fill value of Go type %T", s.Fill), "use a number")
		}
		if err := defFill(w.ds, id, s.Type, f); err != nil {
			return w.fail(s.Name, fmt.Errorf("set _FillValue: %w", err), "")
		}
	}
	w.vars[s.Name] = &wvar{id: id, nv: nv, spec: s, shape: shape}
	for _, a := range s.Attrs {
		if err := w.PutAttr(s.Name, a.Name, a.Value); err != nil {
			return err
		}
	}
	return nil
}

func anyFloat(x any) (float64, bool) {
	switch v := x.(type) {
	case float64:
		return v, true
	case float32:
		return float64(v), true
	case int:
		return float64(v), true
	case int32:
		return float64(v), true
	case int16:
		return float64(v), true
	case int8:
		return float64(v), true
	case uint8:
		return float64(v), true
	}
	return 0, false
}

// PutAttr writes a variable attribute. Attributes whose meaning depends on
// the variable's type (_FillValue, missing_value, valid_*, flag_values) are
// converted to the variable's type when given as a different number type,
// as CF requires.
func (w *Writer) PutAttr(varName, name string, value any) error {
	if !w.open {
		return w.fail(varName, errors.New("writer is closed"), "")
	}
	v, ok := w.vars[varName]
	if !ok {
		return w.fail(varName, fmt.Errorf("attribute %q for an undefined variable", name), "")
	}
	if name == "_FillValue" {
		return w.fail(varName, errors.New("_FillValue must be set with VarSpec.Fill"), "")
	}
	if typedAttr(name) {
		value = convertAttr(value, v.spec.Type)
	}
	if err := putAtt(w.ds, v.id, name, value); err != nil {
		return w.fail(varName, fmt.Errorf("attribute %q: %w", name, err), "")
	}
	return nil
}

// PutGlobalAttr writes a global attribute.
func (w *Writer) PutGlobalAttr(name string, value any) error {
	if !w.open {
		return w.fail("", errors.New("writer is closed"), "")
	}
	if err := putAtt(w.ds, globalID, name, value); err != nil {
		return w.fail("", fmt.Errorf("global attribute %q: %w", name, err), "")
	}
	return nil
}

func typedAttr(name string) bool {
	switch name {
	case "missing_value", "valid_min", "valid_max", "valid_range", "flag_values", "flag_masks", "actual_range":
		return true
	}
	return false
}

// convertAttr converts a numeric attribute value to the Go type matching t.
func convertAttr(value any, t Type) any {
	if _, isString := value.(string); isString {
		return value
	}
	xs, ok := toFloat64s(value)
	if !ok {
		if f, ok1 := anyFloat(value); ok1 {
			xs = []float64{f}
		} else if is, ok2 := value.([]int); ok2 {
			xs = conv(intsTo32(is))
		} else {
			return value
		}
	}
	switch t {
	case Float:
		out := make([]float32, len(xs))
		for i, x := range xs {
			out[i] = float32(x)
		}
		return out
	case Double:
		return xs
	case Int:
		out := make([]int32, len(xs))
		for i, x := range xs {
			out[i] = int32(x)
		}
		return out
	case Short:
		out := make([]int16, len(xs))
		for i, x := range xs {
			out[i] = int16(x)
		}
		return out
	case Byte:
		out := make([]int8, len(xs))
		for i, x := range xs {
			out[i] = int8(x)
		}
		return out
	case UByte:
		out := make([]uint8, len(xs))
		for i, x := range xs {
			out[i] = uint8(x)
		}
		return out
	}
	return value
}

func intsTo32(xs []int) []int32 {
	out := make([]int32, len(xs))
	for i, x := range xs {
		out[i] = int32(x)
	}
	return out
}

// EndDef ends define mode and writes pending coordinate values. It
// returns the first definition error, if any.
func (w *Writer) EndDef() error {
	if w.err != nil {
		return w.err
	}
	if !w.open {
		return fileErr("end definitions of", w.path, errors.New("writer is closed"), "")
	}
	if !w.defining {
		return nil
	}
	if err := dsEndDef(w.ds); err != nil {
		return w.fail("", err, "")
	}
	w.defining = false
	for _, p := range w.pending {
		if err := p(); err != nil {
			return err
		}
	}
	w.pending = nil
	return nil
}

func (w *Writer) slab(name string, start, count []int, n int) (*wvar, []int, []int, error) {
	if !w.open {
		return nil, nil, nil, varErr("write", w.path, name, errors.New("writer is closed"), "")
	}
	if w.defining {
		if err := w.EndDef(); err != nil {
			return nil, nil, nil, err
		}
	}
	if w.err != nil {
		return nil, nil, nil, w.err
	}
	v, ok := w.vars[name]
	if !ok {
		return nil, nil, nil, varErr("write", w.path, name, fmt.Errorf("variable not defined: %w", ErrNotFound), "")
	}
	if start == nil && count == nil {
		start = make([]int, len(v.shape))
		count = append([]int(nil), v.shape...)
		for _, c := range count {
			if c == 0 {
				return nil, nil, nil, varErr("write", w.path, name, errors.New("whole-variable write needs start and count for an unlimited dimension"), "")
			}
		}
	}
	if len(start) != len(v.shape) || len(count) != len(v.shape) {
		return nil, nil, nil, varErr("write", w.path, name, fmt.Errorf("start %v and count %v need %d entries for dims (%s)", start, count, len(v.shape), strings.Join(v.spec.Dims, ", ")), "")
	}
	total := 1
	for i := range start {
		if start[i] < 0 || count[i] < 0 || (v.shape[i] > 0 && start[i]+count[i] > v.shape[i]) {
			return nil, nil, nil, varErr("write", w.path, name, fmt.Errorf("start %v count %v is outside shape %v", start, count, v.shape), "")
		}
		total *= count[i]
	}
	if n != total {
		return nil, nil, nil, varErr("write", w.path, name, fmt.Errorf("%d values given for a slab of %d (count %v)", n, total, count), "")
	}
	return v, start, count, nil
}

// WriteFloat32 writes a hyperslab (nil start and count: the whole
// variable) in row-major order. The library converts to the variable's
// type and fails on values that do not fit.
func (w *Writer) WriteFloat32(name string, start, count []int, data []float32) error {
	v, start, count, err := w.slab(name, start, count, len(data))
	if err != nil {
		return err
	}
	if err := putVaraFloat(w.ds, v.id, start, count, data); err != nil {
		return varErr("write", w.path, name, err, "")
	}
	return nil
}

// WriteFloat64 writes a hyperslab of float64 values.
func (w *Writer) WriteFloat64(name string, start, count []int, data []float64) error {
	v, start, count, err := w.slab(name, start, count, len(data))
	if err != nil {
		return err
	}
	if err := putVaraDouble(w.ds, v.id, start, count, data); err != nil {
		return varErr("write", w.path, name, err, "")
	}
	return nil
}

// WriteInt32 writes a hyperslab of int32 values.
func (w *Writer) WriteInt32(name string, start, count []int, data []int32) error {
	v, start, count, err := w.slab(name, start, count, len(data))
	if err != nil {
		return err
	}
	if err := putVaraInt(w.ds, v.id, start, count, data); err != nil {
		return varErr("write", w.path, name, err, "")
	}
	return nil
}

// WriteInt8 writes a hyperslab of int8 values (NC_BYTE masks).
func (w *Writer) WriteInt8(name string, start, count []int, data []int8) error {
	v, start, count, err := w.slab(name, start, count, len(data))
	if err != nil {
		return err
	}
	if err := putVaraSchar(w.ds, v.id, start, count, data); err != nil {
		return varErr("write", w.path, name, err, "")
	}
	return nil
}

// WriteUint8 writes a hyperslab of uint8 values; into an NC_BYTE variable
// values above 127 are an error.
func (w *Writer) WriteUint8(name string, start, count []int, data []uint8) error {
	v, start, count, err := w.slab(name, start, count, len(data))
	if err != nil {
		return err
	}
	if v.spec.Type == Byte {
		for _, x := range data {
			if x > math.MaxInt8 {
				return varErr("write", w.path, name, fmt.Errorf("value %d does not fit a signed byte", x), "")
			}
		}
	}
	if err := putVaraUchar(w.ds, v.id, start, count, data); err != nil {
		return varErr("write", w.path, name, err, "")
	}
	return nil
}

// Close finishes the file and moves it to its final path. After an error
// in definitions or writes, call Abort instead (Close also aborts when a
// definition error is pending).
func (w *Writer) Close() error {
	if !w.open {
		return nil
	}
	if w.err != nil {
		err := w.err
		w.Abort()
		return err
	}
	if w.defining {
		if err := w.EndDef(); err != nil {
			w.Abort()
			return err
		}
	}
	w.open = false
	if err := dsClose(w.ds); err != nil {
		os.Remove(w.tmp)
		return fileErr("close", w.path, err, "the disk may be full")
	}
	if err := os.Rename(w.tmp, w.path); err != nil {
		os.Remove(w.tmp)
		return fileErr("close", w.path, err, "")
	}
	return nil
}

// Abort closes and removes the unfinished file. Safe to call after Close.
func (w *Writer) Abort() {
	if !w.open {
		return
	}
	w.open = false
	dsClose(w.ds)
	os.Remove(w.tmp)
}
