package label

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// Quantities (the `quantity` attribute of fields.nc channels) this package
// reads: CF standard names, or the derived names subset writes.
const (
	QSLP      = "air_pressure_at_mean_sea_level"
	QTemp     = "air_temperature"
	QU        = "eastward_wind"
	QV        = "northward_wind"
	QWind     = "wind_speed"
	QQ        = "specific_humidity"
	QVort     = "relative_vorticity"                   // derived name
	QVortCF   = "atmosphere_upward_relative_vorticity" // CF standard name
	QIVT      = "ivt"
	QIVTU     = "ivt_u"
	QIVTV     = "ivt_v"
	QIVTUCF   = "eastward_atmosphere_water_vapor_transport_across_unit_distance"
	QIVTVCF   = "northward_atmosphere_water_vapor_transport_across_unit_distance"
	QIWV      = "iwv"
	QIWVCF    = "atmosphere_mass_content_of_water_vapor"
	levelTolP = 1.0 // Pa; levels are written as exact doubles, this only absorbs float32 round trips
)

// Channel is one data variable of a fields.nc file.
type Channel struct {
	Name     string
	Quantity string
	LevelPa  float64 // 0 for single-level fields
	Units    string
	scale    float64 // multiply stored values by scale, then add offset, to get SI
	offset   float64
	v        *ncio.Var
}

// Fields is an open fields.nc (the subset kind's output): a regular grid,
// a time axis and channels found by (quantity, level_pa). Not safe for
// concurrent use (netCDF).
type Fields struct {
	Path     string
	Grid     *grid.Grid
	Time     *ncio.TimeAxis // decoded time coordinate
	Hours    []float64      // per time step, hours since the first step
	Channels []*Channel
	f        *ncio.File
}

// OpenFields opens a fields.nc and checks its layout: dims time, lat, lon,
// a regular latitude-longitude grid (anything else is refused), CF time
// units with a calendar, and channel units this package can convert to SI.
func OpenFields(path string) (*Fields, error) {
	f, err := ncio.Open(path)
	if err != nil {
		return nil, err
	}
	fl := &Fields{Path: path, f: f}
	if err := fl.load(); err != nil {
		f.Close()
		return nil, err
	}
	return fl, nil
}

// Close closes the file.
func (fl *Fields) Close() error { return fl.f.Close() }

func (fl *Fields) load() error {
	path := fl.Path
	ng, err := fl.f.Grid()
	if err != nil {
		return fmt.Errorf("%s: fields file needs lat and lon coordinates (the shared fields.nc layout): %w", path, err)
	}
	g, err := grid.New(ng.Lat, ng.Lon)
	if err != nil {
		return fmt.Errorf("%s: not a regular latitude-longitude grid, which the label stage needs: %w", path, err)
	}
	fl.Grid = g
	ta, err := fl.f.Times()
	if err != nil {
		return fmt.Errorf("%s: fields file needs a CF time coordinate: %w", path, err)
	}
	fl.Time = ta
	for s, t := range ta.Times {
		fl.Hours = append(fl.Hours, ta.Calendar().Sub(t, ta.Times[0]).Hours())
		if s > 0 && fl.Hours[s] <= fl.Hours[s-1] {
			return fmt.Errorf("%s: time is not increasing at step %d (%s after %s)", path, s, t, ta.Times[s-1])
		}
	}
	for _, v := range fl.f.Vars() {
		q := v.AttrString("quantity")
		if q == "" {
			continue
		}
		d := v.DimNames()
		if len(d) != 3 || d[0] != "time" || d[1] != "lat" || d[2] != "lon" {
			return fmt.Errorf("%s: channel %q has dims %v, want (time, lat, lon)", path, v.Name(), d)
		}
		lev, _ := v.AttrFloat64("level_pa")
		ch := &Channel{Name: v.Name(), Quantity: q, LevelPa: lev, Units: v.Units(), v: v}
		ch.scale, ch.offset, err = siFactor(q, ch.Units)
		if err != nil {
			return fmt.Errorf("%s: channel %q: %w", path, v.Name(), err)
		}
		fl.Channels = append(fl.Channels, ch)
	}
	return nil
}

// Find returns the channel with the quantity (any of the given names) at
// the level (Pa; 0 for single-level), or nil.
func (fl *Fields) Find(level float64, quantities ...string) *Channel {
	for _, q := range quantities {
		for _, c := range fl.Channels {
			if c.Quantity == q && math.Abs(c.LevelPa-level) <= levelTolP {
				return c
			}
		}
	}
	return nil
}

// Levels returns the sorted distinct levels (Pa, descending) at which the
// quantity is present.
func (fl *Fields) Levels(quantity string) []float64 {
	var ls []float64
	for _, c := range fl.Channels {
		if c.Quantity == quantity && c.LevelPa > 0 {
			ls = append(ls, c.LevelPa)
		}
	}
	sort.Sort(sort.Reverse(sort.Float64Slice(ls)))
	return ls
}

// Describe lists the channels as "name (quantity @ level hPa)", for
// error messages.
func (fl *Fields) Describe() string {
	if len(fl.Channels) == 0 {
		return "no channels"
	}
	parts := make([]string, len(fl.Channels))
	for i, c := range fl.Channels {
		parts[i] = c.String()
	}
	return strings.Join(parts, ", ")
}

func (c *Channel) String() string {
	if c.LevelPa > 0 {
		return fmt.Sprintf("%s (%s at %g hPa)", c.Name, c.Quantity, c.LevelPa/100)
	}
	return fmt.Sprintf("%s (%s)", c.Name, c.Quantity)
}

// Read returns the channel at one time step in SI units, missing values
// as NaN, into buf (allocated when too small).
func (fl *Fields) Read(c *Channel, step int, buf []float64) ([]float64, error) {
	n := fl.Grid.Len()
	if cap(buf) < n {
		buf = make([]float64, n)
	}
	buf = buf[:n]
	if err := c.v.ReadFloat64Into(buf, []int{step, 0, 0}, []int{1, fl.Grid.NLat(), fl.Grid.NLon()}); err != nil {
		return nil, err
	}
	if c.scale != 1 || c.offset != 0 {
		for i, x := range buf {
			buf[i] = x*c.scale + c.offset
		}
	}
	return buf, nil
}

// siUnits are the SI units this package computes in, per quantity read.
var siUnits = map[string]string{
	QSLP: "Pa", QTemp: "K", QU: "m s-1", QV: "m s-1", QWind: "m s-1",
	QVort: "s-1", QVortCF: "s-1", QQ: "kg kg-1",
	QIVT: "kg m-1 s-1", QIVTU: "kg m-1 s-1", QIVTV: "kg m-1 s-1", QIVTUCF: "kg m-1 s-1", QIVTVCF: "kg m-1 s-1",
	QIWV: "kg m-2", QIWVCF: "kg m-2",
}

// siFactor returns how to convert a quantity's units to the SI units this
// package computes in (ncio's converter). Quantities not read here are
// left as stored.
func siFactor(quantity, units string) (scale, offset float64, err error) {
	to, ok := siUnits[quantity]
	if !ok {
		return 1, 0, nil
	}
	if units == "" {
		return 0, 0, fmt.Errorf("no units attribute (want %s or a convertible unit)", to)
	}
	c, err := ncio.NewConverter(units, to)
	if err != nil {
		return 0, 0, fmt.Errorf("units of %s: %w", quantity, err)
	}
	return c.Scale, c.Offset, nil
}

// errMissing marks an input that a criterion needs but the fields lack.
var errMissing = errors.New("missing input")
