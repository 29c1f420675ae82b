package ncio

import (
	"fmt"

	"github.com/fhs/go-netcdf/netcdf"
)

// Type is a netCDF external data type. The values are those of netcdf.h.
type Type int

// The netCDF external types.
const (
	Byte   = Type(netcdf.BYTE)   // NC_BYTE, signed 8-bit; class masks use it
	Char   = Type(netcdf.CHAR)   // NC_CHAR, text
	Short  = Type(netcdf.SHORT)  // NC_SHORT, often packed data
	Int    = Type(netcdf.INT)    // NC_INT, 32-bit
	Float  = Type(netcdf.FLOAT)  // NC_FLOAT, 32-bit
	Double = Type(netcdf.DOUBLE) // NC_DOUBLE, 64-bit
	UByte  = Type(netcdf.UBYTE)  // NC_UBYTE (netCDF-4 only)
	UShort = Type(netcdf.USHORT) // NC_USHORT (netCDF-4 only)
	UInt   = Type(netcdf.UINT)   // NC_UINT (netCDF-4 only)
	Int64  = Type(netcdf.INT64)  // NC_INT64 (netCDF-4 only)
	UInt64 = Type(netcdf.UINT64) // NC_UINT64 (netCDF-4 only)
	String = Type(netcdf.STRING) // NC_STRING (netCDF-4 only)
)

// String returns the CDL name of the type (as ncdump prints it).
func (t Type) String() string {
	switch t {
	case Byte:
		return "byte"
	case Char:
		return "char"
	case Short:
		return "short"
	case Int:
		return "int"
	case Float:
		return "float"
	case Double:
		return "double"
	case UByte:
		return "ubyte"
	case UShort:
		return "ushort"
	case UInt:
		return "uint"
	case Int64:
		return "int64"
	case UInt64:
		return "uint64"
	case String:
		return "string"
	}
	return fmt.Sprintf("type(%d)", int(t))
}

// numeric reports whether values of t can be read as numbers.
func (t Type) numeric() bool {
	return t != Char && t != String
}

// isFloat reports whether t is a floating-point type.
func (t Type) isFloat() bool { return t == Float || t == Double }

// size is the external size in bytes of one value (0 for strings).
func (t Type) size() int {
	switch t {
	case Byte, Char, UByte:
		return 1
	case Short, UShort:
		return 2
	case Int, UInt, Float:
		return 4
	case Double, Int64, UInt64:
		return 8
	}
	return 0
}
