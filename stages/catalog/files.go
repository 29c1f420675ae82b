package catalog

import (
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// MaskVar is the variable name of the shared mask.nc format.
const MaskVar = "class_mask"

// MaskFile is an open mask file in the shared mask.nc format: class_mask
// (time, lat, lon), byte, with flag_values and flag_meanings. Classes are
// mapped by their flag_meanings, so a file that numbers them differently
// still reads right; a stored value not listed in flag_values is an error.
type MaskFile struct {
	Path  string
	File  *ncio.File
	Var   *ncio.Var
	Grid  *grid.Grid
	Times *ncio.TimeAxis
	class [256]int8 // stored byte (as uint8) -> class, -1 when not a flag value
	buf   []int8
}

// OpenMask opens and checks a mask file.
func OpenMask(path string) (*MaskFile, error) {
	f, err := ncio.Open(path)
	if err != nil {
		return nil, err
	}
	m, err := openMask(f)
	if err != nil {
		f.Close()
		return nil, err
	}
	return m, nil
}

func openMask(f *ncio.File) (*MaskFile, error) {
	path := f.Path()
	v, err := f.Var(MaskVar)
	if err != nil {
		return nil, fmt.Errorf("%s: no variable %q (the shared mask format: byte class_mask(time, lat, lon) with flag_values and flag_meanings): %w", path, MaskVar, err)
	}
	if v.Type() != ncio.Byte && v.Type() != ncio.UByte {
		return nil, fmt.Errorf("%s: variable %s is %s, want byte (flag values 0b, 1b, 2b)", path, MaskVar, v.Type())
	}
	if d := v.DimNames(); len(d) != 3 {
		return nil, fmt.Errorf("%s: variable %s has dimensions (%s), want (time, lat, lon)", path, MaskVar, strings.Join(d, ", "))
	}
	m := &MaskFile{Path: path, File: f, Var: v}
	if err := m.readFlags(); err != nil {
		return nil, err
	}
	ng, err := f.GridOf(v)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	g, err := grid.New(ng.Lat, ng.Lon)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	m.Grid = g
	ta, err := f.TimesOf(v)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	m.Times = ta
	sh := v.Shape()
	if d := v.DimNames(); d[0] != ta.Dim || sh[1] != g.NLat() || sh[2] != g.NLon() {
		return nil, fmt.Errorf("%s: variable %s has dimensions (%s), want (time, lat, lon) in that order", path, MaskVar, strings.Join(d, ", "))
	}
	return m, nil
}

func (m *MaskFile) readFlags() error {
	vals, ok := m.Var.AttrFloat64s("flag_values")
	meanings := strings.Fields(m.Var.AttrString("flag_meanings"))
	if !ok || len(meanings) == 0 {
		return fmt.Errorf("%s: variable %s lacks flag_values or flag_meanings (want flag_values = 0b, 1b, 2b and flag_meanings = %q)",
			m.Path, MaskVar, strings.Join(ClassNames[:], " "))
	}
	if len(vals) != len(meanings) {
		return fmt.Errorf("%s: variable %s has %d flag_values but %d flag_meanings", m.Path, MaskVar, len(vals), len(meanings))
	}
	for i := range m.class {
		m.class[i] = -1
	}
	for i, mean := range meanings {
		c := -1
		for k, n := range ClassNames {
			if n == mean {
				c = k
			}
		}
		if c < 0 {
			return fmt.Errorf("%s: variable %s flag meaning %q is not one of %q", m.Path, MaskVar, mean, strings.Join(ClassNames[:], " "))
		}
		v := vals[i]
		if v != math.Trunc(v) || v < -128 || v > 127 {
			return fmt.Errorf("%s: variable %s flag value %g is not a signed byte", m.Path, MaskVar, v)
		}
		m.class[uint8(int8(v))] = int8(c)
	}
	return nil
}

// NSteps is the number of time steps.
func (m *MaskFile) NSteps() int { return m.Times.Len() }

// Read reads step t into out (len = grid cells) as class values 0, 1, 2.
// A stored value that is not one of the flag_values is an error naming the
// file, the step's time and the place.
func (m *MaskFile) Read(t int, out []byte) error {
	n := m.Grid.Len()
	if len(out) != n {
		return fmt.Errorf("catalog: mask buffer has %d cells, want %d", len(out), n)
	}
	if cap(m.buf) < n {
		m.buf = make([]int8, n)
	}
	raw, err := m.Var.ReadInt8([]int{t, 0, 0}, []int{1, m.Grid.NLat(), m.Grid.NLon()})
	if err != nil {
		return err
	}
	for k, v := range raw {
		c := m.class[uint8(v)]
		if c < 0 {
			i, j := m.Grid.RowCol(k)
			return fmt.Errorf("%s: %s = %d at time %s, lat %g, lon %g is not one of the flag_values (%s); the mask is damaged or not in the shared format",
				m.Path, MaskVar, v, m.Times.Times[t], m.Grid.Lat[i], m.Grid.Lon[j], m.Var.AttrString("flag_meanings"))
		}
		out[k] = byte(c)
	}
	return nil
}

// Close closes the file.
func (m *MaskFile) Close() error { return m.File.Close() }

// Clock turns the times of one series of files into Times on a common
// reference: hours since the first time it saw, in one calendar.
type Clock struct {
	cal    ncio.Calendar
	ref    ncio.CFTime
	set    bool
	source string
}

// Time converts step i of axis a (read from file path).
func (c *Clock) Time(a *ncio.TimeAxis, i int, path string) (Time, error) {
	t := a.Times[i]
	if !c.set {
		c.cal, c.ref, c.set, c.source = a.Calendar(), t, true, path
	} else if a.Calendar() != c.cal {
		return Time{}, fmt.Errorf("%s: calendar %s differs from %s in %s; the files of one scenario must share a calendar", path, a.Calendar(), c.cal, c.source)
	}
	d := c.cal.Sub(t, c.ref)
	return Time{Hours: float64(d) / float64(time.Hour), ISO: isoTime(t), Year: t.Year, Month: t.Month}, nil
}

// Calendar and Ref describe the common reference (valid after Time).
func (c *Clock) Calendar() ncio.Calendar { return c.cal }

// Ref is the reference date: the first time seen.
func (c *Clock) Ref() ncio.CFTime { return c.ref }

// isoTime formats a model-calendar date as ISO 8601 "YYYY-MM-DDThh:mm:ss"
// (a 360_day date such as 30 February is written as it is).
func isoTime(t ncio.CFTime) string {
	return strings.Replace(t.String(), " ", "T", 1)
}

// SameTimes checks that two axes hold the same instants step by step.
func SameTimes(a, b *ncio.TimeAxis, pathA, pathB string) error {
	if a.Len() != b.Len() {
		return fmt.Errorf("%s has %d time steps but %s has %d; both must cover the same times", pathA, a.Len(), pathB, b.Len())
	}
	if a.Calendar() != b.Calendar() {
		return fmt.Errorf("%s uses calendar %s but %s uses %s", pathA, a.Calendar(), pathB, b.Calendar())
	}
	for i := range a.Times {
		if !a.Times[i].Equal(b.Times[i]) {
			return fmt.Errorf("time step %d is %s in %s but %s in %s; both must cover the same times", i, a.Times[i], pathA, b.Times[i], pathB)
		}
	}
	return nil
}

// SameGrid checks that two grids have the same points, naming both files.
func SameGrid(a, b *grid.Grid, pathA, pathB string) error {
	if err := a.SameAs(b); err != nil {
		return fmt.Errorf("%s and %s are on different grids (%v): regrid one of them first", pathA, pathB, err)
	}
	return nil
}
