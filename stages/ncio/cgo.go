package ncio

// The go-netcdf binding covers opening, dimensions and variables, but not
// chunking, explicit fill values, NC_STRING attributes or the converting
// slab reads of the C library (nc_get_vara_double reads any numeric type as
// double). Those few calls live here. A netcdf.Dataset is the C ncid.

/*
#cgo LDFLAGS: -lnetcdf -ldl
#include <stdlib.h>
#include <stdint.h>
#include <dlfcn.h>
#include <netcdf.h>

// HDF5 built thread-safe keeps its "print errors" switch per OS thread.
// libnetcdf turns printing off only on the thread it initialised on, so
// calls from Go's other threads dump HDF5-DIAG traces on stderr for
// attributes that the library merely probes for (e.g. quantize settings
// on files from older versions). sq_quiet turns printing off once per
// thread; H5Eset_auto2 is looked up at run time so that no HDF5 headers
// or link flags are needed. Return codes are unaffected.
typedef int (*sq_set_auto_t)(int64_t, void *, void *);
static __thread int sq_quiet_done;
static void sq_quiet(void) {
	static sq_set_auto_t fn;
	static int looked;
	if (sq_quiet_done) return;
	sq_quiet_done = 1;
	if (!looked) {
		fn = (sq_set_auto_t)dlsym(RTLD_DEFAULT, "H5Eset_auto2");
		looked = 1;
	}
	if (fn) fn(0, NULL, NULL); // H5E_DEFAULT is (hid_t)0
}

static int sq_open(const char *path, int *ncid) { sq_quiet(); return nc_open(path, NC_NOWRITE, ncid); }
static int sq_create(const char *path, int *ncid) { sq_quiet(); return nc_create(path, NC_CLOBBER|NC_NETCDF4, ncid); }
static int sq_inq_var(int ncid, int varid, char *name, nc_type *t, int *nd, int *dimids) {
	sq_quiet(); return nc_inq_var(ncid, varid, name, t, nd, dimids, NULL);
}
static int sq_inq_att(int ncid, int varid, const char *name, nc_type *t, size_t *n) {
	sq_quiet(); return nc_inq_att(ncid, varid, name, t, n);
}
static int sq_get_double(int ncid, int varid, const size_t *s, const size_t *c, double *p) { sq_quiet(); return nc_get_vara_double(ncid, varid, s, c, p); }
static int sq_get_float(int ncid, int varid, const size_t *s, const size_t *c, float *p) { sq_quiet(); return nc_get_vara_float(ncid, varid, s, c, p); }
static int sq_get_int(int ncid, int varid, const size_t *s, const size_t *c, int *p) { sq_quiet(); return nc_get_vara_int(ncid, varid, s, c, p); }
static int sq_get_schar(int ncid, int varid, const size_t *s, const size_t *c, signed char *p) { sq_quiet(); return nc_get_vara_schar(ncid, varid, s, c, p); }
static int sq_get_uchar(int ncid, int varid, const size_t *s, const size_t *c, unsigned char *p) { sq_quiet(); return nc_get_vara_uchar(ncid, varid, s, c, p); }
static int sq_get_text(int ncid, int varid, const size_t *s, const size_t *c, char *p) { sq_quiet(); return nc_get_vara_text(ncid, varid, s, c, p); }
*/
import "C"

import (
	"fmt"
	"sync"
	"unsafe"

	"github.com/fhs/go-netcdf/netcdf"
)

// ncMu serialises every call into libnetcdf: the library is not
// thread-safe, and this turns accidental concurrent use from memory
// corruption into waiting. Callers should still do I/O on one goroutine;
// the lock is a safety net, not a way to get parallel I/O.
var ncMu sync.Mutex

// Wrappers for the calls made through the go-netcdf binding, under ncMu.

func dsNVars(ds netcdf.Dataset) (int, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	return ds.NVars()
}

func dsClose(ds netcdf.Dataset) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	return ds.Close()
}

func dsEndDef(ds netcdf.Dataset) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	return ds.EndDef()
}

func dsAddDim(ds netcdf.Dataset, name string, n int) (netcdf.Dim, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	return ds.AddDim(name, uint64(n))
}

func dsAddVar(ds netcdf.Dataset, name string, t Type, dims []netcdf.Dim) (netcdf.Var, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	return ds.AddVar(name, netcdf.Type(t), dims)
}

func varCompression(v netcdf.Var) (shuffle, deflate bool, level int, err error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	return v.Compression()
}

func ncErr(code C.int) error {
	if code == C.NC_NOERR {
		return nil
	}
	return netcdf.Error(code)
}

// sizes converts Go ints to C size_t arrays for start/count arguments.
func sizes(xs []int) []C.size_t {
	out := make([]C.size_t, len(xs))
	for i, x := range xs {
		out[i] = C.size_t(x)
	}
	return out
}

func sizePtr(xs []C.size_t) *C.size_t {
	if len(xs) == 0 {
		// Scalar variables: the library ignores start/count, but it must
		// not get a nil pointer on some code paths.
		var dummy [1]C.size_t
		return &dummy[0]
	}
	return &xs[0]
}

// openRead opens a file read-only.
func openRead(path string) (netcdf.Dataset, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	cpath := C.CString(path)
	defer C.free(unsafe.Pointer(cpath))
	var id C.int
	if err := ncErr(C.sq_open(cpath, &id)); err != nil {
		return 0, err
	}
	return netcdf.Dataset(id), nil
}

// createNetCDF4 creates (clobbers) a netCDF-4 file.
func createNetCDF4(path string) (netcdf.Dataset, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	cpath := C.CString(path)
	defer C.free(unsafe.Pointer(cpath))
	var id C.int
	if err := ncErr(C.sq_create(cpath, &id)); err != nil {
		return 0, err
	}
	return netcdf.Dataset(id), nil
}

func varID(ncid netcdf.Dataset, name string) (C.int, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	var id C.int
	if err := ncErr(C.nc_inq_varid(C.int(ncid), cname, &id)); err != nil {
		return 0, err
	}
	return id, nil
}

// fileFormat reports the on-disk format of an open dataset.
func fileFormat(ncid netcdf.Dataset) (string, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	var f C.int
	if err := ncErr(C.nc_inq_format(C.int(ncid), &f)); err != nil {
		return "", err
	}
	switch f {
	case C.NC_FORMAT_CLASSIC:
		return "classic", nil
	case C.NC_FORMAT_64BIT_OFFSET:
		return "64-bit offset", nil
	case C.NC_FORMAT_CDF5:
		return "cdf5", nil
	case C.NC_FORMAT_NETCDF4:
		return "netCDF-4", nil
	case C.NC_FORMAT_NETCDF4_CLASSIC:
		return "netCDF-4 classic model", nil
	}
	return fmt.Sprintf("format %d", int(f)), nil
}

// attInfo returns the type and length of an attribute; ok is false when the
// attribute does not exist.
func attInfo(ncid netcdf.Dataset, varid C.int, name string) (Type, int, bool, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	var t C.nc_type
	var n C.size_t
	code := C.sq_inq_att(C.int(ncid), varid, cname, &t, &n)
	if code == C.NC_ENOTATT {
		return 0, 0, false, nil
	}
	if err := ncErr(code); err != nil {
		return 0, 0, false, err
	}
	return Type(t), int(n), true, nil
}

func attNames(ncid netcdf.Dataset, varid C.int) ([]string, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	var n C.int
	if varid == C.NC_GLOBAL {
		if err := ncErr(C.nc_inq_natts(C.int(ncid), &n)); err != nil {
			return nil, err
		}
	} else if err := ncErr(C.nc_inq_varnatts(C.int(ncid), varid, &n)); err != nil {
		return nil, err
	}
	names := make([]string, 0, int(n))
	buf := (*C.char)(C.malloc(C.NC_MAX_NAME + 1))
	defer C.free(unsafe.Pointer(buf))
	for i := 0; i < int(n); i++ {
		if err := ncErr(C.nc_inq_attname(C.int(ncid), varid, C.int(i), buf)); err != nil {
			return nil, err
		}
		names = append(names, C.GoString(buf))
	}
	return names, nil
}

// getAtt reads an attribute into a Go value of the matching type: string
// for NC_CHAR and NC_STRING (several strings are joined by newlines), and a
// slice ([]int8, []uint8, []int16, []uint16, []int32, []uint32, []int64,
// []uint64, []float32, []float64) for numbers.
func getAtt(ncid netcdf.Dataset, varid C.int, name string) (any, error) {
	t, n, ok, err := attInfo(ncid, varid, name)
	if err != nil {
		return nil, err
	}
	if !ok {
		return nil, netcdf.Error(C.NC_ENOTATT)
	}
	ncMu.Lock()
	defer ncMu.Unlock()
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	id := C.int(ncid)
	if n == 0 {
		if t == Char || t == String {
			return "", nil
		}
		return []float64{}, nil
	}
	switch t {
	case Char:
		buf := make([]byte, n)
		if err := ncErr(C.nc_get_att_text(id, varid, cname, (*C.char)(unsafe.Pointer(&buf[0])))); err != nil {
			return nil, err
		}
		// Strip C terminators some writers include in the length.
		for len(buf) > 0 && buf[len(buf)-1] == 0 {
			buf = buf[:len(buf)-1]
		}
		return string(buf), nil
	case String:
		ptrs := make([]*C.char, n)
		if err := ncErr(C.nc_get_att_string(id, varid, cname, &ptrs[0])); err != nil {
			return nil, err
		}
		s := ""
		for i, p := range ptrs {
			if i > 0 {
				s += "\n"
			}
			s += C.GoString(p)
		}
		C.nc_free_string(C.size_t(n), &ptrs[0])
		return s, nil
	case Byte:
		v := make([]int8, n)
		return v, ncErr(C.nc_get_att_schar(id, varid, cname, (*C.schar)(unsafe.Pointer(&v[0]))))
	case UByte:
		v := make([]uint8, n)
		return v, ncErr(C.nc_get_att_uchar(id, varid, cname, (*C.uchar)(unsafe.Pointer(&v[0]))))
	case Short:
		v := make([]int16, n)
		return v, ncErr(C.nc_get_att_short(id, varid, cname, (*C.short)(unsafe.Pointer(&v[0]))))
	case UShort:
		v := make([]uint16, n)
		return v, ncErr(C.nc_get_att_ushort(id, varid, cname, (*C.ushort)(unsafe.Pointer(&v[0]))))
	case Int:
		v := make([]int32, n)
		return v, ncErr(C.nc_get_att_int(id, varid, cname, (*C.int)(unsafe.Pointer(&v[0]))))
	case UInt:
		v := make([]uint32, n)
		return v, ncErr(C.nc_get_att_uint(id, varid, cname, (*C.uint)(unsafe.Pointer(&v[0]))))
	case Int64:
		v := make([]int64, n)
		return v, ncErr(C.nc_get_att_longlong(id, varid, cname, (*C.longlong)(unsafe.Pointer(&v[0]))))
	case UInt64:
		v := make([]uint64, n)
		return v, ncErr(C.nc_get_att_ulonglong(id, varid, cname, (*C.ulonglong)(unsafe.Pointer(&v[0]))))
	case Float:
		v := make([]float32, n)
		return v, ncErr(C.nc_get_att_float(id, varid, cname, (*C.float)(unsafe.Pointer(&v[0]))))
	case Double:
		v := make([]float64, n)
		return v, ncErr(C.nc_get_att_double(id, varid, cname, (*C.double)(unsafe.Pointer(&v[0]))))
	}
	return nil, fmt.Errorf("attribute %q has unsupported type %v", name, t)
}

// putAtt writes an attribute. Strings become NC_CHAR (what CF tools expect);
// numbers keep the Go element type.
func putAtt(ncid netcdf.Dataset, varid C.int, name string, value any) error {
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	id := C.int(ncid)
	switch v := value.(type) {
	case string:
		ncMu.Lock()
		defer ncMu.Unlock()
		if len(v) == 0 {
			var z C.char
			return ncErr(C.nc_put_att_text(id, varid, cname, 0, &z))
		}
		cs := C.CString(v)
		defer C.free(unsafe.Pointer(cs))
		return ncErr(C.nc_put_att_text(id, varid, cname, C.size_t(len(v)), cs))
	case float64:
		return putAtt(ncid, varid, name, []float64{v})
	case float32:
		return putAtt(ncid, varid, name, []float32{v})
	case int:
		return putAtt(ncid, varid, name, []int32{int32(v)})
	case int32:
		return putAtt(ncid, varid, name, []int32{v})
	case int16:
		return putAtt(ncid, varid, name, []int16{v})
	case int8:
		return putAtt(ncid, varid, name, []int8{v})
	case uint8:
		return putAtt(ncid, varid, name, []uint8{v})
	case []int:
		w := make([]int32, len(v))
		for i, x := range v {
			w[i] = int32(x)
		}
		return putAtt(ncid, varid, name, w)
	}
	ncMu.Lock()
	defer ncMu.Unlock()
	if reflectLen(value) == 0 {
		return fmt.Errorf("attribute %q: empty numeric attribute", name)
	}
	switch v := value.(type) {
	case []float64:
		return ncErr(C.nc_put_att_double(id, varid, cname, C.NC_DOUBLE, C.size_t(len(v)), (*C.double)(unsafe.Pointer(&v[0]))))
	case []float32:
		return ncErr(C.nc_put_att_float(id, varid, cname, C.NC_FLOAT, C.size_t(len(v)), (*C.float)(unsafe.Pointer(&v[0]))))
	case []int32:
		return ncErr(C.nc_put_att_int(id, varid, cname, C.NC_INT, C.size_t(len(v)), (*C.int)(unsafe.Pointer(&v[0]))))
	case []int16:
		return ncErr(C.nc_put_att_short(id, varid, cname, C.NC_SHORT, C.size_t(len(v)), (*C.short)(unsafe.Pointer(&v[0]))))
	case []int8:
		return ncErr(C.nc_put_att_schar(id, varid, cname, C.NC_BYTE, C.size_t(len(v)), (*C.schar)(unsafe.Pointer(&v[0]))))
	case []uint8:
		return ncErr(C.nc_put_att_uchar(id, varid, cname, C.NC_UBYTE, C.size_t(len(v)), (*C.uchar)(unsafe.Pointer(&v[0]))))
	}
	return fmt.Errorf("attribute %q: unsupported Go type %T (use string, float64, float32, int32, int16, int8, uint8 or a slice of them)", name, value)
}

func reflectLen(v any) int {
	switch s := v.(type) {
	case []float64:
		return len(s)
	case []float32:
		return len(s)
	case []int32:
		return len(s)
	case []int16:
		return len(s)
	case []int8:
		return len(s)
	case []uint8:
		return len(s)
	}
	return -1
}

// defChunking sets chunked storage with the given chunk sizes.
func defChunking(ncid netcdf.Dataset, varid C.int, chunks []int) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	cs := sizes(chunks)
	return ncErr(C.nc_def_var_chunking(C.int(ncid), varid, C.NC_CHUNKED, sizePtr(cs)))
}

// inqChunking returns the chunk sizes, or nil for contiguous storage.
func inqChunking(ncid netcdf.Dataset, varid C.int, ndims int) ([]int, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	var storage C.int
	cs := make([]C.size_t, ndims+1)
	if err := ncErr(C.nc_inq_var_chunking(C.int(ncid), varid, &storage, &cs[0])); err != nil {
		return nil, err
	}
	if storage != C.NC_CHUNKED {
		return nil, nil
	}
	out := make([]int, ndims)
	for i := range out {
		out[i] = int(cs[i])
	}
	return out, nil
}

func defDeflate(ncid netcdf.Dataset, varid C.int, shuffle bool, level int) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, d := C.int(0), C.int(0)
	if shuffle {
		s = 1
	}
	if level > 0 {
		d = 1
	}
	return ncErr(C.nc_def_var_deflate(C.int(ncid), varid, s, d, C.int(level)))
}

// defFill sets the variable's fill value with nc_def_var_fill, which writes
// _FillValue with exactly the variable's type.
func defFill(ncid netcdf.Dataset, varid C.int, t Type, fill float64) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	id := C.int(ncid)
	switch t {
	case Float:
		v := C.float(fill)
		return ncErr(C.nc_def_var_fill(id, varid, 0, unsafe.Pointer(&v)))
	case Double:
		v := C.double(fill)
		return ncErr(C.nc_def_var_fill(id, varid, 0, unsafe.Pointer(&v)))
	case Int:
		v := C.int(fill)
		return ncErr(C.nc_def_var_fill(id, varid, 0, unsafe.Pointer(&v)))
	case Short:
		v := C.short(fill)
		return ncErr(C.nc_def_var_fill(id, varid, 0, unsafe.Pointer(&v)))
	case Byte:
		v := C.schar(fill)
		return ncErr(C.nc_def_var_fill(id, varid, 0, unsafe.Pointer(&v)))
	case UByte:
		v := C.uchar(fill)
		return ncErr(C.nc_def_var_fill(id, varid, 0, unsafe.Pointer(&v)))
	}
	return fmt.Errorf("fill values for type %v are not supported", t)
}

// The get/put helpers below use the converting C entry points: the library
// converts from the variable's external type and reports NC_ERANGE when a
// value does not fit.

func getVaraDouble(ncid netcdf.Dataset, varid C.int, start, count []int, buf []float64) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.double
	if len(buf) > 0 {
		p = (*C.double)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.sq_get_double(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func getVaraFloat(ncid netcdf.Dataset, varid C.int, start, count []int, buf []float32) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.float
	if len(buf) > 0 {
		p = (*C.float)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.sq_get_float(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func getVaraInt(ncid netcdf.Dataset, varid C.int, start, count []int, buf []int32) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.int
	if len(buf) > 0 {
		p = (*C.int)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.sq_get_int(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func getVaraSchar(ncid netcdf.Dataset, varid C.int, start, count []int, buf []int8) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.schar
	if len(buf) > 0 {
		p = (*C.schar)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.sq_get_schar(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func getVaraUchar(ncid netcdf.Dataset, varid C.int, start, count []int, buf []uint8) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.uchar
	if len(buf) > 0 {
		p = (*C.uchar)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.sq_get_uchar(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func getVaraText(ncid netcdf.Dataset, varid C.int, start, count []int, buf []byte) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.char
	if len(buf) > 0 {
		p = (*C.char)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.sq_get_text(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func putVaraFloat(ncid netcdf.Dataset, varid C.int, start, count []int, buf []float32) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.float
	if len(buf) > 0 {
		p = (*C.float)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.nc_put_vara_float(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func putVaraDouble(ncid netcdf.Dataset, varid C.int, start, count []int, buf []float64) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.double
	if len(buf) > 0 {
		p = (*C.double)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.nc_put_vara_double(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func putVaraInt(ncid netcdf.Dataset, varid C.int, start, count []int, buf []int32) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.int
	if len(buf) > 0 {
		p = (*C.int)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.nc_put_vara_int(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func putVaraSchar(ncid netcdf.Dataset, varid C.int, start, count []int, buf []int8) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.schar
	if len(buf) > 0 {
		p = (*C.schar)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.nc_put_vara_schar(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

func putVaraUchar(ncid netcdf.Dataset, varid C.int, start, count []int, buf []uint8) error {
	ncMu.Lock()
	defer ncMu.Unlock()
	s, c := sizes(start), sizes(count)
	var p *C.uchar
	if len(buf) > 0 {
		p = (*C.uchar)(unsafe.Pointer(&buf[0]))
	}
	return ncErr(C.nc_put_vara_uchar(C.int(ncid), varid, sizePtr(s), sizePtr(c), p))
}

// defaultFill is the library's default fill value for a type (netcdf.h
// NC_FILL_*), which marks never-written values when no _FillValue is set.
func defaultFill(t Type) (float64, bool) {
	switch t {
	case Byte:
		return float64(C.NC_FILL_BYTE), true
	case UByte:
		return float64(C.NC_FILL_UBYTE), true
	case Short:
		return float64(C.NC_FILL_SHORT), true
	case UShort:
		return float64(C.NC_FILL_USHORT), true
	case Int:
		return float64(C.NC_FILL_INT), true
	case UInt:
		return float64(C.NC_FILL_UINT), true
	case Float:
		return float64(float32(C.NC_FILL_FLOAT)), true
	case Double:
		return float64(C.NC_FILL_DOUBLE), true
	}
	return 0, false
}

const globalID = C.NC_GLOBAL

// dimByID returns the name and length of the id-th dimension of the root
// group, in definition order.
func dimByID(ncid netcdf.Dataset, i int) (string, int, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	var n C.int
	if err := ncErr(C.nc_inq_dimids(C.int(ncid), &n, nil, 0)); err != nil {
		return "", 0, err
	}
	if i >= int(n) {
		return "", 0, fmt.Errorf("no dimension %d", i)
	}
	ids := make([]C.int, n)
	if err := ncErr(C.nc_inq_dimids(C.int(ncid), &n, &ids[0], 0)); err != nil {
		return "", 0, err
	}
	buf := (*C.char)(C.malloc(C.NC_MAX_NAME + 1))
	defer C.free(unsafe.Pointer(buf))
	var length C.size_t
	if err := ncErr(C.nc_inq_dim(C.int(ncid), ids[i], buf, &length)); err != nil {
		return "", 0, err
	}
	return C.GoString(buf), int(length), nil
}

// varMeta returns name, type and dimension names/lengths of a variable.
func varMeta(ncid netcdf.Dataset, varid C.int) (string, Type, []string, []int, error) {
	ncMu.Lock()
	defer ncMu.Unlock()
	buf := (*C.char)(C.malloc(C.NC_MAX_NAME + 1))
	defer C.free(unsafe.Pointer(buf))
	var t C.nc_type
	var nd C.int
	dimids := make([]C.int, C.NC_MAX_VAR_DIMS)
	if err := ncErr(C.sq_inq_var(C.int(ncid), varid, buf, &t, &nd, &dimids[0])); err != nil {
		return "", 0, nil, nil, err
	}
	name := C.GoString(buf)
	dims := make([]string, nd)
	shape := make([]int, nd)
	for i := 0; i < int(nd); i++ {
		var l C.size_t
		if err := ncErr(C.nc_inq_dim(C.int(ncid), dimids[i], buf, &l)); err != nil {
			return "", 0, nil, nil, err
		}
		dims[i] = C.GoString(buf)
		shape[i] = int(l)
	}
	return name, Type(t), dims, shape, nil
}

// cint is the C int used for variable ids, usable from non-cgo files.
type cint = C.int

const (
	errNotNC    = C.NC_ENOTNC
	errHDF      = C.NC_EHDFERR
	errReadData = C.NC_EIO
)
