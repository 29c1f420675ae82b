package ncio

import (
	"fmt"
)

// DefCoord defines a dimension called name of len(values) and a double
// coordinate variable of the same name with the given attributes. The
// values are written by EndDef.
func (w *Writer) DefCoord(name string, values []float64, attrs ...Attr) error {
	if len(values) == 0 {
		return w.fail(name, fmt.Errorf("coordinate has no values"), "")
	}
	if err := w.DefDim(name, len(values)); err != nil {
		return err
	}
	if err := w.DefVar(VarSpec{Name: name, Type: Double, Dims: []string{name}, Attrs: attrs}); err != nil {
		return err
	}
	vals := append([]float64(nil), values...)
	w.pending = append(w.pending, func() error { return w.WriteFloat64(name, nil, nil, vals) })
	return nil
}

// DefLat defines the CF latitude coordinate "lat" (degrees_north, axis Y).
func (w *Writer) DefLat(lat []float64) error {
	return w.DefCoord("lat", lat, Attr{"standard_name", "latitude"}, Attr{"long_name", "latitude"},
		Attr{"units", "degrees_north"}, Attr{"axis", "Y"})
}

// DefLon defines the CF longitude coordinate "lon" (degrees_east, axis X).
func (w *Writer) DefLon(lon []float64) error {
	return w.DefCoord("lon", lon, Attr{"standard_name", "longitude"}, Attr{"long_name", "longitude"},
		Attr{"units", "degrees_east"}, Attr{"axis", "X"})
}

// DefGrid defines "lat" and "lon" from a grid read with File.Grid, in the
// grid's order.
func (w *Writer) DefGrid(g Grid) error {
	if err := w.DefLat(g.Lat); err != nil {
		return err
	}
	return w.DefLon(g.Lon)
}

// DefTime defines the CF time coordinate "time" with units such as "days
// since 1850-01-01" and a calendar attribute ("" writes "standard", the CF
// default, explicitly). The units and calendar are checked by parsing.
func (w *Writer) DefTime(values []float64, units, calendar string) error {
	cal, err := ParseCalendar(calendar)
	if err != nil {
		return w.fail("time", err, "")
	}
	if _, err := ParseTimeUnits(units, cal); err != nil {
		return w.fail("time", err, "")
	}
	if calendar == "" {
		calendar = string(Standard)
	}
	return w.DefCoord("time", values, Attr{"standard_name", "time"}, Attr{"long_name", "time"},
		Attr{"units", units}, Attr{"calendar", calendar}, Attr{"axis", "T"})
}

// DefTimeFrom defines "time" with steps [start, start+count) of a source
// axis, copying its units and calendar attributes verbatim.
func (w *Writer) DefTimeFrom(a *TimeAxis, start, count int) error {
	if start < 0 || count <= 0 || start+count > len(a.Values) {
		return w.fail("time", fmt.Errorf("steps %d..%d outside the source axis of %d", start, start+count, len(a.Values)), "")
	}
	return w.DefTime(a.Values[start:start+count], a.UnitsAttr, a.CalendarAttr)
}

// DefBounds adds cell bounds to a coordinate defined with DefCoord: a
// variable "<coord>_bnds" (coord, bnds) holding lower and upper bounds in
// pairs, and the bounds attribute on the coordinate (CF section 7.1).
func (w *Writer) DefBounds(coord string, bounds []float64) error {
	n, ok := w.dimLen[coord]
	if !ok {
		return w.fail(coord, fmt.Errorf("bounds for an undefined coordinate"), "")
	}
	if len(bounds) != 2*n {
		return w.fail(coord, fmt.Errorf("%d bound values for %d cells, want %d", len(bounds), n, 2*n), "")
	}
	if _, ok := w.dims["bnds"]; !ok {
		if err := w.DefDim("bnds", 2); err != nil {
			return err
		}
	}
	name := coord + "_bnds"
	if err := w.DefVar(VarSpec{Name: name, Type: Double, Dims: []string{coord, "bnds"}}); err != nil {
		return err
	}
	if err := w.PutAttr(coord, "bounds", name); err != nil {
		return err
	}
	vals := append([]float64(nil), bounds...)
	w.pending = append(w.pending, func() error { return w.WriteFloat64(name, nil, nil, vals) })
	return nil
}
