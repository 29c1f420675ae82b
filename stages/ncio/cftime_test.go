package ncio

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"
	"time"
)

// calCase is a set of time values in some units and calendar, decoded by
// ncio and by cftime (Debian python3-netcdf4's companion module).
type calCase struct {
	cal    string
	units  string
	values []float64
}

// Values are exact binary fractions so that both sides round alike. The
// cases go where calendars differ: the 1582 reform gap of the standard
// calendar, 29 February in leap and non-leap centuries, 30 February in
// 360_day, old reference dates with large offsets.
var calCases = []calCase{
	{"standard", "days since 1582-10-01 00:00:00", []float64{0, 1, 2, 3, 3.5, 4, 5, 10, 20, -1, -365, 400}},
	{"standard", "hours since 1900-01-01 00:00:00", []float64{0, 6, 1410, 1416, 876576, -13e6, 1e6 + 0.25}},
	{"gregorian", "days since 1850-01-01", []float64{0, 54786.5, -100000, 59, 60}},
	{"standard", "days since 0049-09-01 00:00:00", []float64{107, 108, 0, 1e6}},
	{"proleptic_gregorian", "days since 1582-10-01", []float64{0, 3, 4, 5, 14, 20, -1e5, 2e5}},
	{"proleptic_gregorian", "seconds since 1970-01-01T00:00:00Z", []float64{0, 1.7e9, -86401, 951782400}},
	{"julian", "days since 1900-01-01", []float64{58, 59, 60, 36524, -600000, 0.75}},
	{"noleap", "days since 2000-01-01", []float64{58, 59, 60, 364, 365, 1000.5, -1, -365.25}},
	{"365_day", "hours since 1850-01-01 00:00:00", []float64{0, 6, 1416, 8760, 8754, 1e6}},
	{"noleap", "days since 0001-01-01", []float64{730000.75, 0, 59}},
	{"all_leap", "days since 2001-01-01", []float64{58, 59, 60, 365, 366, -1}},
	{"366_day", "minutes since 1900-02-28 12:00", []float64{0, 720, 1440, 2160, -1440 * 366}},
	{"360_day", "days since 2000-01-01", []float64{29, 30, 58, 59, 60, 359, 360, -1, 1000.25}},
	{"360_day", "hours since 1999-02-30 06:00:00", []float64{0, 18, 24, -24 * 30}},
	{"360_day", "months since 2000-01-01", []float64{0, 1, 13, 1.5}},
	{"standard", "minutes since 2000-01-01 12:00:00", []float64{1.5, 90.25, -0.5}},
}

func TestCalendarsAgainstCftime(t *testing.T) {
	var args []string
	for _, c := range calCases {
		vs := make([]string, len(c.values))
		for i, v := range c.values {
			vs[i] = strconv.FormatFloat(v, 'g', -1, 64)
		}
		args = append(args, c.cal+"|"+c.units+"|"+strings.Join(vs, ","))
	}
	// For each value: the date fields, cftime's day of year, and
	// date2num of the date back into the same units.
	out := runPython(t, `
import sys, cftime
for case in sys.argv[1:]:
    cal, units, vals = case.split("|")
    vals = [float(v) for v in vals.split(",")]
    for v, d in zip(vals, cftime.num2date(vals, units, cal)):
        back = cftime.date2num(d, units, cal)
        print(d.year, d.month, d.day, d.hour, d.minute, d.second, d.microsecond, d.dayofyr, repr(float(back)))
`, args...)
	lines := strings.Split(strings.TrimSpace(out), "\n")
	li := 0
	for _, c := range calCases {
		cal, err := ParseCalendar(c.cal)
		if err != nil {
			t.Fatal(err)
		}
		u, err := ParseTimeUnits(c.units, cal)
		if err != nil {
			t.Fatalf("%s %q: %v", c.cal, c.units, err)
		}
		for _, v := range c.values {
			var want CFTime
			var doy int
			var back float64
			if _, err := fmt.Sscan(lines[li], &want.Year, &want.Month, &want.Day, &want.Hour, &want.Minute, &want.Second, &want.Microsecond, &doy, &back); err != nil {
				t.Fatalf("cftime line %q: %v", lines[li], err)
			}
			li++
			got, err := u.Decode(v)
			if err != nil {
				t.Errorf("%s %q %v: %v", c.cal, c.units, v, err)
				continue
			}
			if got != want {
				t.Errorf("%s %q %v: decoded %v, cftime %v", c.cal, c.units, v, got, want)
				continue
			}
			if d := got.DayOfYear(cal); d != doy {
				t.Errorf("%s %v: day of year %d, cftime %d", c.cal, got, d, doy)
			}
			enc, err := u.Encode(got)
			if err != nil {
				t.Errorf("%s encode %v: %v", c.cal, got, err)
			}
			const encTol = 1e-9 // relative; cftime divides microseconds in float64 too
			if math.Abs(enc-back) > encTol*math.Max(1, math.Abs(back)) || math.Abs(enc-v) > encTol*math.Max(1, math.Abs(v)) {
				t.Errorf("%s %q: encode(%v) = %v, cftime %v, original %v", c.cal, c.units, got, enc, back, v)
			}
		}
	}
	if li != len(lines) {
		t.Errorf("used %d of %d cftime lines", li, len(lines))
	}
}

func TestCalendarRules(t *testing.T) {
	// Calendar definitions from CF-1.13 section 4.4.1.
	cases := []struct {
		cal   Calendar
		date  CFTime
		valid bool
	}{
		{Standard, Date(1582, 10, 4, 0), true},
		{Standard, Date(1582, 10, 5, 0), false}, // the reform gap
		{Standard, Date(1582, 10, 14, 0), false},
		{Standard, Date(1582, 10, 15, 0), true},
		{Standard, Date(1500, 2, 29, 0), true},  // Julian rule before 1582
		{Standard, Date(1900, 2, 29, 0), false}, // Gregorian after
		{ProlepticGregorian, Date(1582, 10, 10, 0), true},
		{ProlepticGregorian, Date(1500, 2, 29, 0), false},
		{ProlepticGregorian, Date(2000, 2, 29, 0), true},
		{Julian, Date(1900, 2, 29, 0), true},
		{NoLeap, Date(2000, 2, 29, 0), false},
		{AllLeap, Date(2001, 2, 29, 0), true},
		{AllLeap, Date(2001, 2, 30, 0), false},
		{Day360, Date(2001, 2, 30, 0), true},
		{Day360, Date(2001, 1, 31, 0), false},
		{NoLeap, CFTime{Year: 2001, Month: 1, Day: 1, Hour: 24}, false},
	}
	for _, c := range cases {
		if err := c.cal.Valid(c.date); (err == nil) != c.valid {
			t.Errorf("%s %v: valid=%v, want %v (err %v)", c.cal, c.date, err == nil, c.valid, err)
		}
	}
	// Year lengths (CF-1.13 4.4.1; 1582 loses ten days in standard).
	for _, c := range []struct {
		cal  Calendar
		year int
		days int
	}{{Standard, 1582, 355}, {Standard, 1900, 365}, {Julian, 1900, 366}, {ProlepticGregorian, 2000, 366},
		{NoLeap, 2000, 365}, {AllLeap, 2001, 366}, {Day360, 2000, 360}} {
		if d := c.cal.DaysInYear(c.year); d != c.days {
			t.Errorf("%s %d: %d days, want %d", c.cal, c.year, d, c.days)
		}
	}
	if _, err := ParseCalendar("lunar"); err == nil || !strings.Contains(err.Error(), "lunar") {
		t.Errorf("unknown calendar error %v", err)
	}
	if _, err := ParseCalendar("none"); err == nil {
		t.Error("calendar none must be refused: there are no dates to block by year")
	}
	for _, s := range []string{"Gregorian", "365_day", "366_day", " noleap "} {
		if _, err := ParseCalendar(s); err != nil {
			t.Errorf("ParseCalendar(%q): %v", s, err)
		}
	}
}

func TestTimeUnitsParsing(t *testing.T) {
	for _, s := range []string{
		"days since 1-1-1",                        // hswm_d000000p000.g2.nc in libncarg-data
		"hours since 1990-1-1 0:0:0",              // short fields
		"seconds since 2000-01-01T00:00:00Z",      // ISO 8601 with zone
		"days since 2000-01-01 00:00:00.5",        // fractional seconds
		"minutes since 2000-01-01 06:00:00 +6:00", // offset: reference is 00:00 UTC
		"d since 2000-01-01",
	} {
		if _, err := ParseTimeUnits(s, Standard); err != nil {
			t.Errorf("%q: %v", s, err)
		}
	}
	u, _ := ParseTimeUnits("minutes since 2000-01-01 06:00:00 +6:00", Standard)
	if u.Ref != Date(2000, 1, 1, 0) {
		t.Errorf("zone offset: reference %v, want 2000-01-01 00:00 UTC (ISO 8601: local = UTC + offset)", u.Ref)
	}
	for _, s := range []string{
		"days",                            // no reference
		"months since 2000-01-01",         // not fixed length in standard
		"years since 2000-01-01",          // idem
		"fortnights since 2000-01-01",     // unknown unit
		"days since 2000-13-01",           // bad month
		"days since 1582-10-10",           // in the reform gap
		"days since the start of the run", // not a date
	} {
		if _, err := ParseTimeUnits(s, Standard); err == nil {
			t.Errorf("%q: accepted, want an error", s)
		}
	}
	if _, err := ParseTimeUnits("days since 2000-01-01", "lunar"); err == nil {
		t.Error("unknown calendar accepted")
	}
	if _, err := u.Encode(Date(2001, 2, 29, 0)); err == nil {
		t.Error("Encode accepted 2001-02-29 in the standard calendar")
	}
}

func TestCFTimeOrderAndAdd(t *testing.T) {
	a, b := Date(1999, 12, 31, 18), Date(2000, 1, 1, 0)
	if !a.Before(b) || !b.After(a) || a.Equal(b) || a.Compare(a) != 0 {
		t.Error("ordering")
	}
	// 6 hours after the last evening of 1999 is the new year in every
	// calendar (the 30th of December in 360_day).
	for _, cal := range []Calendar{Standard, NoLeap, AllLeap, Day360, Julian, ProlepticGregorian} {
		a := a
		if cal == Day360 {
			a.Day = 30
		}
		if got := cal.Add(a, 6*time.Hour); got != b {
			t.Errorf("%s: %v + 6h = %v", cal, a, got)
		}
	}
	// 2000-02-28 + 1 day: 02-29 (standard), 03-01 (noleap), 02-29 (360_day).
	d := Date(2000, 2, 28, 0)
	for cal, want := range map[Calendar]CFTime{Standard: Date(2000, 2, 29, 0), NoLeap: Date(2000, 3, 1, 0), Day360: Date(2000, 2, 29, 0)} {
		if got := cal.Add(d, 24*time.Hour); got != want {
			t.Errorf("%s: %v + 1 day = %v, want %v", cal, d, got, want)
		}
	}
	if got := Standard.Sub(Date(1582, 10, 15, 0), Date(1582, 10, 4, 0)); got != 24*time.Hour {
		t.Errorf("1582-10-15 minus 1582-10-04 = %v, want one day (the reform)", got)
	}
	if s := (CFTime{Year: 49, Month: 12, Day: 17, Microsecond: 5}).String(); s != "0049-12-17 00:00:00.000005" {
		t.Errorf("String %q", s)
	}
}
