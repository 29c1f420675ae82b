// Package ncio is squall's CF-aware netCDF layer. It reads the gridded
// files of climate models (netCDF classic, 64-bit offset, CDF5 and
// netCDF-4) and writes the netCDF-4 files that stages exchange. It sits on
// the C library through github.com/fhs/go-netcdf, plus a few direct cgo
// calls (cgo.go) for what the binding lacks: chunking, explicit fill
// values, NC_STRING attributes and the library's converting reads.
//
// # One goroutine
//
// libnetcdf and HDF5 as packaged are not thread-safe. Use a File or Writer
// from one goroutine, and do all netCDF I/O of a process on one goroutine;
// hand slabs to other goroutines for compute. squall gets parallel I/O
// from child processes. As a safety net every call into the library takes
// one package-wide lock, so accidental concurrent use waits instead of
// corrupting memory; it gives no parallel speed-up.
//
// # Reading
//
//	f, err := ncio.Open(path)          // errors name the file: missing, empty, not netCDF, truncated
//	defer f.Close()
//	v, err := f.FindVar("air_temperature", "T", "ta") // standard_name first, then names
//	x, err := v.ReadFloat32([]int{t, 0, 0}, []int{1, ny, nx})
//	g, err := f.Grid()                 // lat/lon, order, longitude convention
//	lv, err := f.Levels()              // pressure or hybrid sigma-pressure
//	ta, err := f.Times()               // CF times decoded in the model calendar
//
// ReadFloat64/ReadFloat32 return physical values: stored values equal to
// _FillValue or missing_value, or outside valid_min/valid_max/valid_range,
// become NaN; then scale_factor and add_offset apply. Without _FillValue
// the library's default fill for the type marks never-written values. This
// is what the netCDF4 Python module (1.6) does, and the tests check against
// it; like it, ncio does not apply the netCDF user guide's older rule that
// a fill value also bounds the valid range. ReadInt8, ReadUint8 and
// ReadInt32 return stored values untouched (masks, flags, counts).
//
// Variables are found by CF standard_name first and by name second
// (FindVarMapped takes the names from the campaign's variables mapping);
// errors list each variable with its dimensions and standard_name so a
// user can write that mapping. Every error is an *Error carrying the
// operation, file, variable and a hint; missing things wrap ErrNotFound.
//
// Open checks netCDF-3 files against the data offsets in their header: the
// C library would read a truncated file and return zeros for the missing
// part. Truncated netCDF-4 files are refused by HDF5 itself.
//
// # Coordinates, time and units
//
// Grid finds 1-D latitude and longitude coordinates (standard_name, units
// degrees_north/degrees_east, axis, then names lat/lon/latitude/longitude),
// tells whether latitudes descend and which longitude convention the file
// uses, and whether the grid is global (periodic in longitude).
//
// Levels returns pressure levels in Pa, or hybrid sigma-pressure
// coefficients with p(k) = a(k) p0 + b(k) ps (CF-1.13 appendix D) from
// formula_terms, or from the hyam/hybm/P0/PS layout of CAM files without
// formula_terms (where a missing P0 is taken as 100000 Pa, flagged in
// Levels.P0Assumed).
//
// Times decodes "<unit> since <date>" in the calendars standard/gregorian
// (Julian before 1582-10-15), proleptic_gregorian, julian, noleap/365_day,
// all_leap/366_day and 360_day, checked against cftime. CFTime is a plain
// date value; TimeUnits.Encode turns dates back into numbers for writing.
// Years use astronomical numbering (year 0 exists); cftime's default for
// real-world calendars has no year 0, so the two differ before year 1.
//
// NewConverter and ConvertUnits handle the units the stages meet: Pa, hPa,
// mbar; K, degC; kg m-2 and mm of water; m s-1 and m/s; kg kg-1 and 1;
// s-1; and products of those.
//
// # Writing
//
//	w, err := ncio.Create(path)        // netCDF-4; written to a temporary name, renamed by Close
//	w.DefTimeFrom(ta, start, n)        // or DefTime(values, units, calendar)
//	w.DefLat(g.Lat); w.DefLon(g.Lon)
//	w.DefVar(ncio.VarSpec{Name: "slp", Type: ncio.Float, Dims: []string{"time", "lat", "lon"},
//	    Fill: float32(1e20), Deflate: 1, Shuffle: true, Chunks: []int{1, ny, nx},
//	    Attrs: []ncio.Attr{{"units", "Pa"}}})
//	w.PutConventions(title, provenance) // Conventions = "CF-1.13", history
//	err = w.EndDef()                   // first definition error, if any
//	err = w.WriteFloat32("slp", []int{t, 0, 0}, []int{1, ny, nx}, slab)
//	err = w.Close()
//
// Definition methods keep the first error (returned again by EndDef and
// Close), so a block of definitions needs one check. String attributes are
// written as NC_CHAR text; attributes whose type must match the variable
// (missing_value, valid_*, flag_values) are converted to its type, so
// flag_values on a byte mask are bytes as CF requires.
//
// # Determinism
//
// Files written twice with the same content are byte-identical: the
// library stores no creation or modification times in the HDF5 objects
// (checked by a test that writes the same file twice, over a second
// apart, and compares digests). The _NCProperties attribute records the
// netCDF and HDF5 library versions, so files from different library
// builds differ by design. The history attribute (Provenance) carries
// tool, kind, settings and input digests, never a wall-clock time.
//
// # Costs
//
// Open reads all metadata (a few C calls per variable) and, for netCDF-3,
// the header once more for the size check. Reads go straight from the
// library into the result slice (ReadFloat32Into/ReadFloat64Into reuse a
// caller's buffer); float variables read as float32 without packing make
// one masking pass and no conversion copy; packed or double variables
// read as float32 go through a float64 buffer. Throughput limits:
// RawWriteFloat32 and RawReadFloat32 time the library alone on a float32
// field (RawSpec, default a year of daily 96 x 144 fields, one step per
// chunk), the reference other stages' benchmarks compare against:
//
//	go test -run '^$' -bench . -benchtime 5x -count 3 ./stages/ncio/
//
// On the shared 2-core development machine these gave, with a spread of
// 2-3x from run to run: write 120-330 MB/s uncompressed and 20-40 MB/s
// with deflate 1 + shuffle (ratio 2.6 on the noisy reference field); read
// 140-620 MB/s uncompressed and 65-225 MB/s compressed, the CF read path
// (masking) within that noise of the raw one. Compare within one run.
//
// ncio writes no files of its own; the output files of stages are named in
// their own packages.
package ncio
