package ncio

import (
	"fmt"
	"math"
	"strings"
)

// TimeAxis is a decoded CF time coordinate.
type TimeAxis struct {
	Var, Dim string
	// UnitsAttr and CalendarAttr are the attributes as written in the file
	// ("" when absent), to copy them verbatim into derived files.
	UnitsAttr, CalendarAttr string
	Units                   TimeUnits
	Values                  []float64 // raw values in Units
	Times                   []CFTime
}

// Calendar returns the axis' calendar.
func (a *TimeAxis) Calendar() Calendar { return a.Units.Calendar }

// Len returns the number of time steps.
func (a *TimeAxis) Len() int { return len(a.Times) }

// Years returns the distinct calendar years of the axis, in order of first
// appearance.
func (a *TimeAxis) Years() []int {
	var out []int
	seen := map[int]bool{}
	for _, t := range a.Times {
		if !seen[t.Year] {
			seen[t.Year] = true
			out = append(out, t.Year)
		}
	}
	return out
}

// YearRange returns the index range [start, start+count) of the time steps
// in the given calendar year; the axis must be increasing (checked by
// Times). count is 0 when the year is absent.
func (a *TimeAxis) YearRange(year int) (start, count int) {
	start = -1
	for i, t := range a.Times {
		if t.Year == year {
			if start < 0 {
				start = i
			}
			count++
		}
	}
	if start < 0 {
		return 0, 0
	}
	return start, count
}

// isTimeCoord reports whether a 1-D variable looks like a time coordinate.
func isTimeCoord(v *Var) bool {
	if len(v.dims) != 1 {
		return false
	}
	return v.StandardName() == "time" || strings.EqualFold(v.AttrString("axis"), "T") ||
		strings.Contains(v.Units(), " since ") || strings.EqualFold(v.name, "time")
}

// Times finds and decodes the time coordinate of the file; see TimesOf.
func (f *File) Times() (*TimeAxis, error) { return f.findTimes(nil) }

// TimesOf decodes the time coordinate among the dimensions of v: a 1-D
// variable with standard_name time, axis T, units "<unit> since <date>" or
// the name time, preferring coordinate variables. The calendar attribute
// defaults to standard (CF); an unknown calendar, units that are not a CF
// time unit, fill values or decreasing times are errors.
func (f *File) TimesOf(v *Var) (*TimeAxis, error) { return f.findTimes(v.dims) }

func (f *File) findTimes(onDims []string) (*TimeAxis, error) {
	var cand *Var
	for _, v := range f.vars {
		if !isTimeCoord(v) || (onDims != nil && !contains(onDims, v.dims[0])) {
			continue
		}
		if cand == nil || (v.name == v.dims[0] && cand.name != cand.dims[0]) {
			cand = v
		}
	}
	if cand == nil {
		return nil, &Error{Op: "find time coordinate", Path: f.path, Err: fmt.Errorf("no time coordinate: %w", ErrNotFound),
			Hint: "expected a 1-D variable with standard_name time or units \"days since ...\"; the file has " + f.describeVars()}
	}
	return f.decodeTimes(cand)
}

// DecodeTimes decodes a given variable as a CF time coordinate.
func (f *File) DecodeTimes(name string) (*TimeAxis, error) {
	v, err := f.Var(name)
	if err != nil {
		return nil, err
	}
	return f.decodeTimes(v)
}

func (f *File) decodeTimes(v *Var) (*TimeAxis, error) {
	a := &TimeAxis{Var: v.name, Dim: v.dims[0], UnitsAttr: v.Units(), CalendarAttr: v.AttrString("calendar")}
	cal, err := ParseCalendar(a.CalendarAttr)
	if err != nil {
		return nil, varErr("decode times", f.path, v.name, err, "CF-1.13 section 4.4.1 lists the calendars")
	}
	if a.Units, err = ParseTimeUnits(a.UnitsAttr, cal); err != nil {
		return nil, varErr("decode times", f.path, v.name, err, "CF time units look like \"days since 1850-01-01\"")
	}
	if a.Values, err = v.ReadFloat64(nil, nil); err != nil {
		return nil, err
	}
	a.Times = make([]CFTime, len(a.Values))
	for i, x := range a.Values {
		if math.IsNaN(x) {
			return nil, varErr("decode times", f.path, v.name, fmt.Errorf("time step %d is a fill value", i), "")
		}
		if a.Times[i], err = a.Units.Decode(x); err != nil {
			return nil, varErr("decode times", f.path, v.name, fmt.Errorf("time step %d: %w", i, err), "")
		}
		if i > 0 && !a.Times[i].After(a.Times[i-1]) {
			return nil, varErr("decode times", f.path, v.name, fmt.Errorf("times are not increasing at step %d (%s after %s)", i, a.Times[i], a.Times[i-1]), "")
		}
	}
	return a, nil
}
