package ncio

import (
	"errors"
	"fmt"
	"strings"
)

// Error is what every exported function of ncio returns on failure: the
// operation, the file, the variable (when there is one), the cause and a
// hint a person can act on.
type Error struct {
	Op   string // "open", "read", "create", "write", "find variable", ...
	Path string // the netCDF file
	Var  string // the variable, "" for file-level problems
	Err  error  // the cause (a netcdf.Error, an os error, or plain text)
	Hint string // what to do about it, "" when there is nothing to add
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.Op)
	if e.Var != "" {
		fmt.Fprintf(&b, " variable %q", e.Var)
	}
	if e.Path != "" {
		if e.Var != "" {
			b.WriteString(" in")
		}
		fmt.Fprintf(&b, " %s", e.Path)
	}
	if e.Err != nil {
		fmt.Fprintf(&b, ": %v", e.Err)
	}
	if e.Hint != "" {
		fmt.Fprintf(&b, " (%s)", e.Hint)
	}
	return b.String()
}

func (e *Error) Unwrap() error { return e.Err }

// ErrNotFound is wrapped by errors about a variable, dimension, attribute or
// coordinate that a file does not have; test with errors.Is.
var ErrNotFound = errors.New("not found")

func fileErr(op, path string, err error, hint string) error {
	return &Error{Op: op, Path: path, Err: err, Hint: hint}
}

func varErr(op, path, v string, err error, hint string) error {
	return &Error{Op: op, Path: path, Var: v, Err: err, Hint: hint}
}
