package ncio

import (
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"time"
)

// Calendar is a CF calendar (CF-1.13 section 4.4.1). Use ParseCalendar to
// get one from a calendar attribute; the aliases gregorian, 365_day and
// 366_day map to Standard, NoLeap and AllLeap.
type Calendar string

// The CF calendars squall supports.
const (
	// Standard is the mixed Julian/Gregorian calendar: Julian up to
	// 1582-10-04, Gregorian from the next day, 1582-10-15. It is the CF
	// default when a time variable has no calendar attribute.
	Standard Calendar = "standard"
	// ProlepticGregorian applies the Gregorian rules to every year.
	ProlepticGregorian Calendar = "proleptic_gregorian"
	// Julian has a leap year every fourth year.
	Julian Calendar = "julian"
	// NoLeap has 365 days every year.
	NoLeap Calendar = "noleap"
	// AllLeap has 366 days every year.
	AllLeap Calendar = "all_leap"
	// Day360 has twelve 30-day months.
	Day360 Calendar = "360_day"
)

// ParseCalendar maps a CF calendar attribute to a Calendar. The empty
// string means the CF default, Standard. Unknown names are an error listing
// the supported ones.
func ParseCalendar(s string) (Calendar, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", "standard", "gregorian":
		return Standard, nil
	case "proleptic_gregorian":
		return ProlepticGregorian, nil
	case "julian":
		return Julian, nil
	case "noleap", "365_day":
		return NoLeap, nil
	case "all_leap", "366_day":
		return AllLeap, nil
	case "360_day":
		return Day360, nil
	}
	return "", fmt.Errorf("unknown calendar %q (supported: standard, gregorian, proleptic_gregorian, julian, noleap, 365_day, all_leap, 366_day, 360_day)", s)
}

// gregorianStartJDN is the Julian day number of 1582-10-15 (Gregorian),
// the first day of the Gregorian reform in the standard calendar.
const gregorianStartJDN = 2299161

// IsLeap reports whether year (astronomical numbering: 0 is 1 BC) is a
// leap year in c.
func (c Calendar) IsLeap(year int) bool {
	switch c {
	case NoLeap, Day360:
		return false
	case AllLeap:
		return true
	case Julian:
		return floorMod(year, 4) == 0
	case Standard:
		if year <= 1582 {
			return floorMod(year, 4) == 0
		}
	}
	return floorMod(year, 4) == 0 && (floorMod(year, 100) != 0 || floorMod(year, 400) == 0)
}

var cumDays = [2][13]int{
	{0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334, 365},
	{0, 31, 60, 91, 121, 152, 182, 213, 244, 274, 305, 335, 366},
}

// DaysInMonth returns the number of days of month (1..12) of year. In the
// standard calendar October 1582 has 21 days.
func (c Calendar) DaysInMonth(year, month int) int {
	if c == Day360 {
		return 30
	}
	if c == Standard && year == 1582 && month == 10 {
		return 21
	}
	l := 0
	if c.IsLeap(year) {
		l = 1
	}
	return cumDays[l][month] - cumDays[l][month-1]
}

// DaysInYear returns the length of year in days (355 for 1582 in the
// standard calendar).
func (c Calendar) DaysInYear(year int) int {
	switch {
	case c == Day360:
		return 360
	case c == Standard && year == 1582:
		return 355
	case c.IsLeap(year):
		return 366
	}
	return 365
}

// CFTime is a date and time in some calendar, to the microsecond. It is a
// plain value: which calendar it belongs to is known by whoever holds it
// (a TimeAxis or TimeUnits). Ordering does not depend on the calendar.
type CFTime struct {
	Year, Month, Day     int // astronomical year numbering; Month, Day from 1
	Hour, Minute, Second int
	Microsecond          int
}

// Date is a shorthand for CFTime{Year: y, Month: m, Day: d, Hour: h}.
func Date(y, m, d, h int) CFTime { return CFTime{Year: y, Month: m, Day: d, Hour: h} }

// Compare returns -1, 0 or +1 as t is before, equal to or after u.
func (t CFTime) Compare(u CFTime) int {
	a := [...]int{t.Year, t.Month, t.Day, t.Hour, t.Minute, t.Second, t.Microsecond}
	b := [...]int{u.Year, u.Month, u.Day, u.Hour, u.Minute, u.Second, u.Microsecond}
	for i := range a {
		if a[i] != b[i] {
			if a[i] < b[i] {
				return -1
			}
			return 1
		}
	}
	return 0
}

// Before reports whether t is before u.
func (t CFTime) Before(u CFTime) bool { return t.Compare(u) < 0 }

// After reports whether t is after u.
func (t CFTime) After(u CFTime) bool { return t.Compare(u) > 0 }

// Equal reports whether t and u are the same instant.
func (t CFTime) Equal(u CFTime) bool { return t.Compare(u) == 0 }

// String formats t as "YYYY-MM-DD hh:mm:ss" (with ".ffffff" when there
// are microseconds), the form CF reference dates use.
func (t CFTime) String() string {
	y := fmt.Sprintf("%04d", t.Year)
	if t.Year < 0 {
		y = fmt.Sprintf("-%04d", -t.Year)
	}
	s := fmt.Sprintf("%s-%02d-%02d %02d:%02d:%02d", y, t.Month, t.Day, t.Hour, t.Minute, t.Second)
	if t.Microsecond != 0 {
		s += fmt.Sprintf(".%06d", t.Microsecond)
	}
	return s
}

// DayOfYear returns the day of the year, 1 on 1 January, in calendar c.
// As in cftime, it is the date's position in the month table, so in the
// standard calendar 1582-10-15 is day 288 although ten days were skipped.
func (t CFTime) DayOfYear(c Calendar) int {
	if c == Day360 {
		return (t.Month-1)*30 + t.Day
	}
	l := 0
	if c.IsLeap(t.Year) {
		l = 1
	}
	return cumDays[l][t.Month-1] + t.Day
}

// Valid reports whether t is a date of calendar c (e.g. 30 February exists
// only in 360_day; 1582-10-10 does not exist in the standard calendar).
func (c Calendar) Valid(t CFTime) error {
	if t.Month < 1 || t.Month > 12 {
		return fmt.Errorf("month %d out of range in %s", t.Month, t)
	}
	if c == Standard && t.Year == 1582 && t.Month == 10 && t.Day > 4 && t.Day < 15 {
		return fmt.Errorf("%s falls in the gap of the Gregorian reform (1582-10-05 to 1582-10-14 do not exist in the standard calendar)", t)
	}
	dim := c.DaysInMonth(t.Year, t.Month)
	if c == Standard && t.Year == 1582 && t.Month == 10 {
		dim = 31
	}
	if t.Day < 1 || t.Day > dim {
		return fmt.Errorf("day %d out of range for %04d-%02d in the %s calendar", t.Day, t.Year, t.Month, c)
	}
	if t.Hour < 0 || t.Hour > 23 || t.Minute < 0 || t.Minute > 59 || t.Second < 0 || t.Second > 59 || t.Microsecond < 0 || t.Microsecond > 999999 {
		return fmt.Errorf("time of day out of range in %s", t)
	}
	return nil
}

// dayNumber counts days on a continuous scale for calendar c: the Julian
// day number for the real-world calendars, a plain count for the others.
func (c Calendar) dayNumber(y, m, d int) int64 {
	switch c {
	case NoLeap, AllLeap:
		l := 0
		if c == AllLeap {
			l = 1
		}
		return int64(y)*int64(365+l) + int64(cumDays[l][m-1]+d-1)
	case Day360:
		return int64(y)*360 + int64((m-1)*30+d-1)
	case Julian:
		return julianJDN(y, m, d)
	case ProlepticGregorian:
		return gregorianJDN(y, m, d)
	}
	// Standard: Gregorian from 1582-10-15 on, Julian before.
	if y > 1582 || (y == 1582 && (m > 10 || (m == 10 && d >= 15))) {
		return gregorianJDN(y, m, d)
	}
	return julianJDN(y, m, d)
}

// date inverts dayNumber.
func (c Calendar) date(n int64) (y, m, d int) {
	switch c {
	case NoLeap, AllLeap:
		l, dy := 0, int64(365)
		if c == AllLeap {
			l, dy = 1, 366
		}
		y = int(floorDiv64(n, dy))
		doy := int(n - int64(y)*dy)
		m = 1
		for cumDays[l][m] <= doy {
			m++
		}
		return y, m, doy - cumDays[l][m-1] + 1
	case Day360:
		y = int(floorDiv64(n, 360))
		r := int(n - int64(y)*360)
		return y, r/30 + 1, r%30 + 1
	case Julian:
		return julianDate(n)
	case ProlepticGregorian:
		return gregorianDate(n)
	}
	if n >= gregorianStartJDN {
		return gregorianDate(n)
	}
	return julianDate(n)
}

// Julian day number formulas after Fliegel and Van Flandern (1968),
// Communications of the ACM 11(10), 657, extended with floor division so
// that they hold for years down to -4800.
func gregorianJDN(y, m, d int) int64 {
	a := int64((14 - m) / 12)
	yy := int64(y) + 4800 - a
	mm := int64(m) + 12*a - 3
	return int64(d) + (153*mm+2)/5 + 365*yy + floorDiv64(yy, 4) - floorDiv64(yy, 100) + floorDiv64(yy, 400) - 32045
}

func julianJDN(y, m, d int) int64 {
	a := int64((14 - m) / 12)
	yy := int64(y) + 4800 - a
	mm := int64(m) + 12*a - 3
	return int64(d) + (153*mm+2)/5 + 365*yy + floorDiv64(yy, 4) - 32083
}

func gregorianDate(j int64) (int, int, int) {
	a := j + 32044
	b := floorDiv64(4*a+3, 146097)
	c := a - floorDiv64(146097*b, 4)
	d := floorDiv64(4*c+3, 1461)
	e := c - floorDiv64(1461*d, 4)
	m := (5*e + 2) / 153
	day := e - (153*m+2)/5 + 1
	month := m + 3 - 12*(m/10)
	year := 100*b + d - 4800 + m/10
	return int(year), int(month), int(day)
}

func julianDate(j int64) (int, int, int) {
	c := j + 32082
	d := floorDiv64(4*c+3, 1461)
	e := c - floorDiv64(1461*d, 4)
	m := (5*e + 2) / 153
	day := e - (153*m+2)/5 + 1
	month := m + 3 - 12*(m/10)
	year := d - 4800 + m/10
	return int(year), int(month), int(day)
}

func floorDiv64(a, b int64) int64 {
	q := a / b
	if (a%b != 0) && ((a < 0) != (b < 0)) {
		q--
	}
	return q
}

func floorMod(a, b int) int {
	r := a % b
	if r < 0 {
		r += b
	}
	return r
}

const (
	usPerSecond = int64(1e6)
	usPerDay    = 86400 * usPerSecond
)

// instant is a calendar-specific absolute time: day number plus
// microseconds into the day.
func (c Calendar) instant(t CFTime) int64 {
	return c.dayNumber(t.Year, t.Month, t.Day)*usPerDay +
		int64(t.Hour*3600+t.Minute*60+t.Second)*usPerSecond + int64(t.Microsecond)
}

func (c Calendar) fromInstant(us int64) CFTime {
	day := floorDiv64(us, usPerDay)
	rem := us - day*usPerDay
	y, m, d := c.date(day)
	s := rem / usPerSecond
	return CFTime{Year: y, Month: m, Day: d,
		Hour: int(s / 3600), Minute: int(s % 3600 / 60), Second: int(s % 60), Microsecond: int(rem % usPerSecond)}
}

// Add returns t moved by d in calendar c (d may be negative).
func (c Calendar) Add(t CFTime, d time.Duration) CFTime {
	return c.fromInstant(c.instant(t) + d.Microseconds())
}

// Sub returns t - u in calendar c.
func (c Calendar) Sub(t, u CFTime) time.Duration {
	return time.Duration(c.instant(t)-c.instant(u)) * time.Microsecond
}

// TimeUnits is a parsed CF time unit "<unit> since <reference date>" with
// its calendar: it turns numbers into CFTimes and back.
type TimeUnits struct {
	Unit     string // canonical plural: "days", "hours", "minutes", "seconds", "milliseconds", "microseconds", "months" (360_day only)
	Ref      CFTime // the reference date, in UTC
	Calendar Calendar
	us       int64 // microseconds per unit
}

var refDateRE = regexp.MustCompile(`^([+-]?\d+)-(\d{1,2})-(\d{1,2})(?:(?:T|\s+)(\d{1,2})(?::(\d{1,2})(?::(\d{1,2})(\.\d*)?)?)?)?\s*(Z|UTC|GMT|[+-]\d{1,2}(?::?\d{2})?)?$`)

// ParseTimeUnits parses a CF time unit string such as "days since
// 1850-01-01", "hours since 1990-1-1 00:00:00" or "seconds since
// 2000-01-01T00:00:00Z" for calendar c. A time zone offset on the
// reference date is folded into Ref. Months are accepted only in the
// 360_day calendar, where they are exactly 30 days (as cftime does); in
// other calendars they have no fixed length and are an error, as are
// years.
func ParseTimeUnits(units string, c Calendar) (TimeUnits, error) {
	if _, err := ParseCalendar(string(c)); err != nil {
		return TimeUnits{}, err
	}
	c, _ = ParseCalendar(string(c))
	parts := strings.SplitN(strings.TrimSpace(units), " since ", 2)
	if len(parts) != 2 {
		return TimeUnits{}, fmt.Errorf("time units %q are not of the form \"<unit> since <date>\"", units)
	}
	u := TimeUnits{Calendar: c}
	switch strings.ToLower(strings.TrimSpace(parts[0])) {
	case "days", "day", "d":
		u.Unit, u.us = "days", usPerDay
	case "hours", "hour", "hrs", "hr", "h":
		u.Unit, u.us = "hours", 3600*usPerSecond
	case "minutes", "minute", "mins", "min":
		u.Unit, u.us = "minutes", 60*usPerSecond
	case "seconds", "second", "secs", "sec", "s":
		u.Unit, u.us = "seconds", usPerSecond
	case "milliseconds", "millisecond", "msecs", "msec", "ms":
		u.Unit, u.us = "milliseconds", 1000
	case "microseconds", "microsecond", "usecs", "usec", "us":
		u.Unit, u.us = "microseconds", 1
	case "months", "month":
		if c != Day360 {
			return TimeUnits{}, fmt.Errorf("time units %q: months have no fixed length in the %s calendar (only in 360_day)", units, c)
		}
		u.Unit, u.us = "months", 30*usPerDay
	default:
		return TimeUnits{}, fmt.Errorf("time units %q: unit %q is not one of days, hours, minutes, seconds", units, parts[0])
	}
	m := refDateRE.FindStringSubmatch(strings.TrimSpace(parts[1]))
	if m == nil {
		return TimeUnits{}, fmt.Errorf("time units %q: cannot read the reference date %q (expected YYYY-MM-DD[ hh:mm:ss])", units, parts[1])
	}
	atoi := func(s string) int {
		if s == "" {
			return 0
		}
		n, _ := strconv.Atoi(strings.TrimPrefix(s, "+"))
		return n
	}
	ref := CFTime{Year: atoi(m[1]), Month: atoi(m[2]), Day: atoi(m[3]), Hour: atoi(m[4]), Minute: atoi(m[5]), Second: atoi(m[6])}
	if m[7] != "" && m[7] != "." {
		f, _ := strconv.ParseFloat("0"+m[7], 64)
		ref.Microsecond = int(math.Round(f * 1e6))
	}
	if err := c.Valid(ref); err != nil {
		return TimeUnits{}, fmt.Errorf("time units %q: reference date: %v", units, err)
	}
	if z := m[8]; z != "" && z != "Z" && z != "UTC" && z != "GMT" {
		sign := 1
		if z[0] == '-' {
			sign = -1
		}
		z = strings.ReplaceAll(z[1:], ":", "")
		hh, mm := 0, 0
		if len(z) <= 2 {
			hh = atoi(z)
		} else {
			hh, mm = atoi(z[:len(z)-2]), atoi(z[len(z)-2:])
		}
		// Local time = UTC + offset, so UTC = local - offset.
		ref = c.Add(ref, -time.Duration(sign*(hh*60+mm))*time.Minute)
	}
	u.Ref = ref
	return u, nil
}

// String returns the canonical unit string, e.g. "days since
// 1850-01-01 00:00:00".
func (u TimeUnits) String() string { return u.Unit + " since " + u.Ref.String() }

// Decode converts a time value to a date, rounded to the microsecond.
// Whole units are added exactly, so large offsets from an old reference
// date do not lose precision.
func (u TimeUnits) Decode(v float64) (CFTime, error) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return CFTime{}, fmt.Errorf("time value %v is not a number", v)
	}
	whole := math.Floor(v)
	if math.Abs(whole)*float64(u.us) > 9e18 {
		return CFTime{}, fmt.Errorf("time value %v %s is out of range", v, u.Unit)
	}
	us := int64(whole)*u.us + int64(math.Round((v-whole)*float64(u.us)))
	return u.Calendar.fromInstant(u.Calendar.instant(u.Ref) + us), nil
}

// Encode converts a date to a value in these units. It fails when t is
// not a valid date of the calendar.
func (u TimeUnits) Encode(t CFTime) (float64, error) {
	if err := u.Calendar.Valid(t); err != nil {
		return 0, err
	}
	d := u.Calendar.instant(t) - u.Calendar.instant(u.Ref)
	q, r := d/u.us, d%u.us
	return float64(q) + float64(r)/float64(u.us), nil
}
