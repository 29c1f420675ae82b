// Package ncio is squall's CF-aware netCDF layer: it reads the gridded
// netCDF files of climate models (classic and netCDF-4) and writes the
// netCDF-4 files exchanged between stages, on top of the C library through
// github.com/fhs/go-netcdf plus a few direct cgo calls (chunking, fill
// values, string attributes, converting reads).
//
// Work in progress: see the package documentation once complete.
package ncio
