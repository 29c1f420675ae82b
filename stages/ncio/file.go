package ncio

import (
	"errors"
	"fmt"
	"io"
	"os"
	"sort"
	"strings"

	"github.com/fhs/go-netcdf/netcdf"
)

// File is a netCDF file open for reading. It is not safe for concurrent use
// and, because libnetcdf is not thread-safe, no two Files (or Writers) may
// be used from different goroutines at the same time.
type File struct {
	path   string
	ds     netcdf.Dataset
	open   bool
	format string
	vars   []*Var // in file order
	byName map[string]*Var
	dims   map[string]int
	dimOrd []string
}

// OnOpen, when set, is called with every path Open is about to open. The
// instance runner sets it so that a crash inside libnetcdf, which kills
// the process, is reported with the file being read.
var OnOpen func(path string)

// Open opens a netCDF file (classic, 64-bit offset, CDF5 or netCDF-4) for
// reading and loads its metadata. Errors name the file and say plainly
// what is wrong: missing, not a netCDF file, truncated or damaged.
func Open(path string) (*File, error) {
	keepHeap()
	if OnOpen != nil {
		OnOpen(path)
	}
	st, err := os.Stat(path)
	switch {
	case errors.Is(err, os.ErrNotExist):
		return nil, fileErr("open", path, fmt.Errorf("no such file: %w", ErrNotFound), "check the path and the scenario's file pattern")
	case err != nil:
		return nil, fileErr("open", path, err, "")
	case st.IsDir():
		return nil, fileErr("open", path, errors.New("is a directory, not a netCDF file"), "")
	case st.Size() == 0:
		return nil, fileErr("open", path, errors.New("empty file (0 bytes)"), "the file was probably not written completely; regenerate or re-copy it")
	}
	magic, err := readMagic(path)
	if err != nil {
		return nil, fileErr("open", path, err, "")
	}
	if kind := sniff(magic); kind == "" {
		return nil, fileErr("open", path, errors.New("not a netCDF file (unknown header bytes)"),
			"expected a netCDF-3 file starting with \"CDF\" or a netCDF-4/HDF5 file; is it text, GRIB or a compressed archive?")
	}
	ds, err := openRead(path)
	if err != nil {
		return nil, fileErr("open", path, describeOpenErr(err), "the header is recognised but the library cannot read it; the file may be truncated or damaged, compare its size with the original")
	}
	f := &File{path: path, ds: ds, open: true, byName: map[string]*Var{}, dims: map[string]int{}}
	if err := f.load(); err != nil {
		dsClose(ds)
		return nil, fileErr("open", path, err, "the file may be truncated or damaged")
	}
	if err := f.checkSize(st.Size()); err != nil {
		dsClose(ds)
		return nil, fileErr("open", path, err, "the file is shorter than its header says: it was probably cut off while copying or writing; re-copy or regenerate it")
	}
	return f, nil
}

func readMagic(path string) ([]byte, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer fh.Close()
	buf := make([]byte, 8)
	n, err := io.ReadFull(fh, buf)
	if err != nil && !errors.Is(err, io.ErrUnexpectedEOF) {
		return nil, err
	}
	return buf[:n], nil
}

// sniff recognises netCDF-3 ("CDF\x01", "\x02", "\x05") and HDF5 signatures.
// HDF5 files may also carry a user block with the signature at 512, 1024...;
// those are rare for netCDF-4 and are left to the library.
func sniff(b []byte) string {
	if len(b) >= 4 && string(b[:3]) == "CDF" && (b[3] == 1 || b[3] == 2 || b[3] == 5) {
		return "netcdf3"
	}
	if len(b) >= 8 && string(b[:8]) == "\x89HDF\r\n\x1a\n" {
		return "hdf5"
	}
	return ""
}

func describeOpenErr(err error) error {
	var ne netcdf.Error
	if errors.As(err, &ne) {
		switch int(ne) {
		case errNotNC:
			return fmt.Errorf("not a readable netCDF file: %w", err)
		case errHDF:
			return fmt.Errorf("HDF5 layer failed to read the file: %w", err)
		}
	}
	return err
}

func (f *File) load() error {
	var err error
	if f.format, err = fileFormat(f.ds); err != nil {
		return err
	}
	n, err := dsNVars(f.ds)
	if err != nil {
		return err
	}
	for i := 0; i < n; i++ {
		v, err := newVar(f, i)
		if err != nil {
			return err
		}
		f.vars = append(f.vars, v)
		f.byName[v.name] = v
		for j, d := range v.dims {
			if _, ok := f.dims[d]; !ok {
				f.dims[d] = v.shape[j]
			}
		}
	}
	// Dimensions without variables: ask by id (ids are 0..ndims-1 in the
	// root group of classic files; netCDF-4 root group dims too).
	for id := 0; ; id++ {
		name, length, err := dimByID(f.ds, id)
		if err != nil {
			break
		}
		if _, ok := f.dims[name]; !ok {
			f.dims[name] = length
		}
		f.dimOrd = append(f.dimOrd, name)
	}
	return nil
}

// checkSize catches netCDF-3 files cut short: the library opens them (the
// header is intact) and returns zeros for the missing data.
func (f *File) checkSize(size int64) error {
	if f.format != "classic" && f.format != "64-bit offset" && f.format != "cdf5" {
		return nil
	}
	end, ok, err := classicDataEnd(f.path)
	if err != nil {
		// The library accepted a header this parser does not: fall back to
		// a lower bound, the data sizes alone.
		ok = true
		end = 0
		for _, v := range f.vars {
			e, _ := v.extent()
			end += e
		}
	}
	if ok && size < end {
		return fmt.Errorf("truncated: %d bytes on disk, the header describes %d", size, end)
	}
	return nil
}

// Close releases the file. It is safe to call twice.
func (f *File) Close() error {
	if !f.open {
		return nil
	}
	f.open = false
	if err := dsClose(f.ds); err != nil {
		return fileErr("close", f.path, err, "")
	}
	return nil
}

// Path returns the path the file was opened with.
func (f *File) Path() string { return f.path }

// Format names the on-disk format: "classic", "64-bit offset", "cdf5",
// "netCDF-4" or "netCDF-4 classic model".
func (f *File) Format() string { return f.format }

// VarNames returns the variable names in file order.
func (f *File) VarNames() []string {
	out := make([]string, len(f.vars))
	for i, v := range f.vars {
		out[i] = v.name
	}
	return out
}

// Vars returns the variables in file order.
func (f *File) Vars() []*Var { return append([]*Var(nil), f.vars...) }

// HasVar reports whether the file has a variable of that name.
func (f *File) HasVar(name string) bool { _, ok := f.byName[name]; return ok }

// Var returns the variable called name; the error lists what the file has.
func (f *File) Var(name string) (*Var, error) {
	if v, ok := f.byName[name]; ok {
		return v, nil
	}
	return nil, varErr("find", f.path, name, fmt.Errorf("no such variable: %w", ErrNotFound), "the file has "+f.describeVars())
}

// FindVar looks a variable up by its CF standard_name first, then by each
// of names in turn (e.g. names mapped to that standard name in the
// campaign). When several variables carry the standard name, the one with
// the most dimensions wins and ties go to file order, so that a scalar or
// bounds variable never shadows a data field. The error lists every
// variable with its standard_name so a user can write the mapping.
func (f *File) FindVar(standardName string, names ...string) (*Var, error) {
	var best *Var
	if standardName != "" {
		for _, v := range f.vars {
			if v.StandardName() == standardName && (best == nil || len(v.dims) > len(best.dims)) {
				best = v
			}
		}
	}
	if best != nil {
		return best, nil
	}
	for _, n := range names {
		if v, ok := f.byName[n]; ok {
			return v, nil
		}
	}
	what := fmt.Sprintf("standard_name %q", standardName)
	if len(names) > 0 {
		what += fmt.Sprintf(" or name %s", quoteList(names))
	}
	return nil, &Error{Op: "find variable", Path: f.path, Var: standardName,
		Err:  fmt.Errorf("no variable with %s: %w", what, ErrNotFound),
		Hint: "the file has " + f.describeVars() + "; map a file variable to " + strconvQuote(standardName) + " in the campaign's variables section"}
}

// FindVarMapped is FindVar with the fallback names taken from a campaign's
// variables mapping (file variable name -> standard_name): every name
// mapped to standardName is tried, in sorted order.
func (f *File) FindVarMapped(standardName string, mapping map[string]string) (*Var, error) {
	var names []string
	for name, sn := range mapping {
		if sn == standardName {
			names = append(names, name)
		}
	}
	sort.Strings(names)
	return f.FindVar(standardName, names...)
}

func (f *File) describeVars() string {
	if len(f.vars) == 0 {
		return "no variables"
	}
	parts := make([]string, len(f.vars))
	for i, v := range f.vars {
		sn := v.StandardName()
		if sn == "" {
			sn = "no standard_name"
		}
		parts[i] = fmt.Sprintf("%s(%s; %s)", v.name, strings.Join(v.dims, ","), sn)
	}
	return strings.Join(parts, ", ")
}

func quoteList(xs []string) string {
	q := make([]string, len(xs))
	for i, x := range xs {
		q[i] = strconvQuote(x)
	}
	return strings.Join(q, ", ")
}

func strconvQuote(s string) string { return fmt.Sprintf("%q", s) }

// DimLen returns the length of a dimension (the current length for an
// unlimited one).
func (f *File) DimLen(name string) (int, error) {
	if n, ok := f.dims[name]; ok {
		return n, nil
	}
	names := make([]string, 0, len(f.dims))
	for d := range f.dims {
		names = append(names, d)
	}
	sort.Strings(names)
	return 0, &Error{Op: "find dimension", Path: f.path, Var: name,
		Err: fmt.Errorf("no such dimension: %w", ErrNotFound), Hint: "the file has dimensions " + strings.Join(names, ", ")}
}

// DimNames returns the dimension names in definition order.
func (f *File) DimNames() []string { return append([]string(nil), f.dimOrd...) }

// AttrNames lists the global attributes in file order.
func (f *File) AttrNames() []string {
	names, _ := attNames(f.ds, globalID)
	return names
}

// Attr returns a global attribute as a Go value (string, or a numeric
// slice of the stored type); ok is false when it is absent.
func (f *File) Attr(name string) (any, bool) {
	return attrValue(f.ds, globalID, name)
}

// AttrString returns a text global attribute, "" when absent or not text.
func (f *File) AttrString(name string) string {
	v, _ := f.Attr(name)
	s, _ := v.(string)
	return s
}

// AttrFloat64 returns the first value of a numeric global attribute.
func (f *File) AttrFloat64(name string) (float64, bool) {
	v, ok := f.Attr(name)
	if !ok {
		return 0, false
	}
	xs, ok := toFloat64s(v)
	if !ok || len(xs) == 0 {
		return 0, false
	}
	return xs[0], true
}
