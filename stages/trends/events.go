package trends

import (
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"
)

// Class names as in mask.nc flag_meanings.
const (
	ClassTC = "tropical_cyclone"
	ClassAR = "atmospheric_river"
)

// canonicalClass maps the spellings a catalog may use to the flag meaning.
func canonicalClass(s string) string {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "tropical_cyclone", "tc", "1", "tropical cyclone", "cyclone":
		return ClassTC
	case "atmospheric_river", "ar", "2", "atmospheric river", "river":
		return ClassAR
	}
	return strings.ToLower(strings.TrimSpace(s))
}

// Files read from catalog instances (see doc.go).
const (
	EventsFile = "events.csv"
	TrackFile  = "track_points.csv"
)

// event is what trends needs of one catalog event.
type event struct {
	id        string
	scenario  string // from the row; "" when the catalog has no such column
	member    string
	class     string
	year      int
	days      float64 // duration in days (NaN when unknown)
	landfall  bool
	lfLat     float64 // landfall position, NaN when not given
	lfLon     float64
	intensity float64 // NaN when missing
	regions   []string
	lats      []float64 // track points
	lons      []float64
}

// Column names looked for, in order of preference (lower case).
var (
	colID        = []string{"id", "event_id", "event"}
	colClass     = []string{"class", "class_name"}
	colYear      = []string{"year", "start_year"}
	colStart     = []string{"start", "start_time", "first_date", "first_time", "time_start"}
	colDurDays   = []string{"duration_days", "duration_d", "days"}
	colDurHours  = []string{"duration_hours", "duration_h", "hours"}
	colLandfall  = []string{"landfall", "made_landfall", "landfall_time"}
	colLfLat     = []string{"landfall_lat", "landfall_latitude"}
	colLfLon     = []string{"landfall_lon", "landfall_longitude"}
	colRegions   = []string{"regions", "regions_touched"}
	colScenario  = []string{"scenario"}
	colMember    = []string{"member"}
	colTCInt     = []string{"max_wind_ms", "max_wind", "peak_wind_ms", "max_wind_speed", "vmax"}
	colARInt     = []string{"max_ivt_kg_m_s", "max_ivt", "peak_ivt", "ivt_max"}
	colPtID      = []string{"event_id", "id", "event"}
	colPtLat     = []string{"lat", "latitude", "centroid_lat"}
	colPtLon     = []string{"lon", "longitude", "centroid_lon"}
	intensityCol = map[string][]string{ClassTC: colTCInt, ClassAR: colARInt}
)

// intensityUnit is the unit of each class's intensity measure.
var intensityUnit = map[string]string{ClassTC: "m s-1", ClassAR: "kg m-1 s-1"}

// readCatalog reads events.csv (and track_points.csv when present) of one
// catalog instance.
func readCatalog(files []string) ([]*event, bool, error) {
	var evPath, ptPath string
	for _, f := range files {
		switch filepath.Base(f) {
		case EventsFile:
			evPath = f
		case TrackFile:
			ptPath = f
		}
	}
	if evPath == "" {
		return nil, false, fmt.Errorf("catalog output has no %s (files: %s); is the input a catalog stage?", EventsFile, strings.Join(files, ", "))
	}
	t, err := readTable(evPath)
	if err != nil {
		return nil, false, err
	}
	iID, err := t.mustCol("event id", colID...)
	if err != nil {
		return nil, false, err
	}
	iClass, err := t.mustCol("class", colClass...)
	if err != nil {
		return nil, false, err
	}
	iYear, iStart := t.col(colYear...), t.col(colStart...)
	if iYear < 0 && iStart < 0 {
		_, err := t.mustCol("start date", append(colYear, colStart...)...)
		return nil, false, err
	}
	iDays, iHours := t.col(colDurDays...), t.col(colDurHours...)
	iLand, iLfLat, iLfLon := t.col(colLandfall...), t.col(colLfLat...), t.col(colLfLon...)
	iReg := t.col(colRegions...)
	iScn, iMem := t.col(colScenario...), t.col(colMember...)
	intCols := map[string]int{}
	for c, names := range intensityCol {
		intCols[c] = t.col(names...)
	}
	var evs []*event
	byID := map[string]*event{}
	bareID := map[string][]*event{}
	for k, rec := range t.rows {
		line := k + 2
		e := &event{id: cell(rec, iID), class: canonicalClass(cell(rec, iClass)),
			scenario: cell(rec, iScn), member: cell(rec, iMem),
			days: math.NaN(), lfLat: math.NaN(), lfLon: math.NaN(), intensity: math.NaN()}
		if e.id == "" {
			return nil, false, fmt.Errorf("%s line %d: empty event id", evPath, line)
		}
		key := e.scenario + "\x00" + e.member + "\x00" + e.id
		if _, dup := byID[key]; dup {
			return nil, false, fmt.Errorf("%s line %d: event id %q appears twice for scenario %q member %q", evPath, line, e.id, e.scenario, e.member)
		}
		if iYear >= 0 && cell(rec, iYear) != "" {
			y, err := strconv.Atoi(cell(rec, iYear))
			if err != nil {
				return nil, false, fmt.Errorf("%s line %d: year %q is not a whole number", evPath, line, cell(rec, iYear))
			}
			e.year = y
		} else {
			y, err := yearOf(cell(rec, iStart))
			if err != nil {
				return nil, false, fmt.Errorf("%s line %d, column %s: %v", evPath, line, t.header[iStart], err)
			}
			e.year = y
		}
		num := func(i int, what string) (float64, bool, error) {
			v, ok, err := parseNum(cell(rec, i))
			if err != nil {
				return 0, false, fmt.Errorf("%s line %d, column %s: %q is not a number", evPath, line, t.header[i], cell(rec, i))
			}
			return v, ok, nil
		}
		if iDays >= 0 {
			if v, ok, err := num(iDays, "duration"); err != nil {
				return nil, false, err
			} else if ok {
				e.days = v
			}
		} else if iHours >= 0 {
			if v, ok, err := num(iHours, "duration"); err != nil {
				return nil, false, err
			} else if ok {
				e.days = v / 24
			}
		}
		if iLand >= 0 {
			s := cell(rec, iLand)
			if b, err := parseBool(s); err == nil {
				e.landfall = b
			} else {
				// A landfall time or place instead of a flag: present means yes.
				e.landfall = true
			}
		}
		if iLfLat >= 0 && iLfLon >= 0 {
			la, ok1, err1 := num(iLfLat, "landfall latitude")
			lo, ok2, err2 := num(iLfLon, "landfall longitude")
			if err1 != nil {
				return nil, false, err1
			}
			if err2 != nil {
				return nil, false, err2
			}
			if ok1 && ok2 {
				e.lfLat, e.lfLon = la, lo
				if iLand < 0 {
					e.landfall = true
				}
			}
		}
		if i := intCols[e.class]; i >= 0 {
			if v, ok, err := num(i, "intensity"); err != nil {
				return nil, false, err
			} else if ok {
				e.intensity = v
			}
		}
		if iReg >= 0 {
			e.regions = splitList(cell(rec, iReg))
		}
		evs = append(evs, e)
		byID[key] = e
		bareID[e.id] = append(bareID[e.id], e)
	}
	if ptPath == "" {
		return evs, false, nil
	}
	p, err := readTable(ptPath)
	if err != nil {
		return nil, false, err
	}
	jID, err := p.mustCol("event id", colPtID...)
	if err != nil {
		return nil, false, err
	}
	jLat, err := p.mustCol("latitude", colPtLat...)
	if err != nil {
		return nil, false, err
	}
	jLon, err := p.mustCol("longitude", colPtLon...)
	if err != nil {
		return nil, false, err
	}
	jScn, jMem := p.col(colScenario...), p.col(colMember...)
	for k, rec := range p.rows {
		line := k + 2
		e := byID[cell(rec, jScn)+"\x00"+cell(rec, jMem)+"\x00"+cell(rec, jID)]
		if e == nil && len(bareID[cell(rec, jID)]) == 1 {
			// The points file names no scenario or member: the id alone
			// must then be unique.
			e = bareID[cell(rec, jID)][0]
		}
		if e == nil {
			return nil, false, fmt.Errorf("%s line %d: event %q is not in %s", ptPath, line, cell(rec, jID), EventsFile)
		}
		la, ok1, err1 := parseNum(cell(rec, jLat))
		lo, ok2, err2 := parseNum(cell(rec, jLon))
		if err1 != nil || err2 != nil {
			return nil, false, fmt.Errorf("%s line %d: latitude %q or longitude %q is not a number", ptPath, line, cell(rec, jLat), cell(rec, jLon))
		}
		if !ok1 || !ok2 {
			continue
		}
		if la < -90 || la > 90 {
			return nil, false, fmt.Errorf("%s line %d: latitude %g is outside [-90, 90]", ptPath, line, la)
		}
		e.lats = append(e.lats, la)
		e.lons = append(e.lons, lo)
	}
	return evs, true, nil
}

// splitList splits "a;b", "a|b" or "a b" lists of region names.
func splitList(s string) []string {
	f := strings.FieldsFunc(s, func(r rune) bool { return r == ';' || r == '|' || r == ' ' || r == ',' })
	return f
}
