package world

import (
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Class names of the truth, as in the mask flag_meanings.
const (
	ClassTC = "tropical_cyclone"
	ClassAR = "atmospheric_river"
)

// Event is one planted event as the truth sees it inside the season and
// the domain.
type Event struct {
	ID       string // <scenario>-<year>-tcNN or -arNN
	Class    string // ClassTC or ClassAR
	Scenario string
	Year     int
	Points   []TrackPoint
	// Landfall: for a cyclone, the first hour its centre moves from sea to
	// land while its planted 10 m wind is at least TCWindThreshold (from
	// the hourly track); for a river, the first step one of its truth
	// pixels has a land fraction of at least 0.5.
	Landfall         bool
	LandfallTime     string  // noleap date, "1991-08-20 06:00"
	LandfallLat      float64 // degrees north
	LandfallLon      float64 // degrees east
	LandfallLandmass string
	LandfallRegions  []string
	// Regions whose polygons contain at least one truth pixel of the event.
	Regions []string
	// Intensity over the event's truth steps.
	PeakWind    float64 // cyclone: planted symmetric 10 m maximum, m/s
	MinPressure float64 // cyclone: planted central pressure, Pa
	PeakIVT     float64 // river: maximum IVT over its truth pixels, kg m-1 s-1
	Category    string  // cyclone: Saffir-Simpson category of PeakWind ("TS", "1".."5")
	Pixels      int     // truth pixels summed over steps
}

// TrackPoint is an event at one output time step.
type TrackPoint struct {
	Step int     // index in the year's file
	Time float64 // CF time value (TimeUnits, noleap)
	Date string  // "1991-08-15 06:00"
	// Position: a cyclone's planted centre; a river's truth-pixel centroid
	// (cos-latitude weighted), or its axis core when it has no pixels.
	Lat, Lon float64
	Pressure float64 // cyclone: planted central pressure, Pa (NaN for rivers)
	Wind     float64 // cyclone: planted 10 m maximum; river: jet at the core, m/s
	IVT      float64 // river: maximum IVT over its truth pixels (NaN for cyclones)
	Radius   float64 // cyclone: truth radius, m (0 below the threshold)
	Pixels   int     // truth pixels of this event at this step
	OverLand bool    // cyclone: centre on land; river: a truth pixel on land
}

// TimeUnits of every file the generator writes.
const TimeUnits = "days since 1850-01-01 00:00:00"

// timeValue is the CF time of hour h of the season of year in the noleap
// calendar.
func timeValue(year, seasonStart int, h float64) float64 {
	return float64((year-1850)*365+seasonStart-1) + h/24
}

var monthDays = [12]int{31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31}

// noleapDate formats hour h of the season as a date in the noleap calendar.
func noleapDate(year, seasonStart int, h float64) string {
	total := int(math.Round(h*60)) + (seasonStart-1)*24*60
	day, minute := total/(24*60), total%(24*60)
	y := year + day/365
	day %= 365
	m := 0
	for day >= monthDays[m] {
		day -= monthDays[m]
		m++
	}
	return fmt.Sprintf("%04d-%02d-%02d %02d:%02d", y, m+1, day+1, minute/60, minute%60)
}

// SaffirSimpson returns the category of a 1-minute sustained wind (m/s)
// on the NWS scale of 2012: "TD" below 34 kt, "TS" for 34-63 kt, then
// "1" 64-82, "2" 83-95, "3" 96-112, "4" 113-136, "5" >= 137 kt.
func SaffirSimpson(wind float64) string {
	kt := wind * 3600 / 1852
	switch {
	case kt >= 137:
		return "5"
	case kt >= 113:
		return "4"
	case kt >= 96:
		return "3"
	case kt >= 83:
		return "2"
	case kt >= 64:
		return "1"
	case kt >= 34:
		return "TS"
	}
	return "TD"
}

// truthLog accumulates the events of one season step by step.
type truthLog struct {
	s      *season
	events map[string]*Event
	order  []string
}

func newTruthLog(s *season) *truthLog {
	l := &truthLog{s: s, events: map[string]*Event{}}
	for _, c := range s.cyclones {
		l.add(c.id, ClassTC)
	}
	for _, r := range s.rivers {
		l.add(r.id, ClassAR)
	}
	return l
}

func (l *truthLog) add(id, class string) {
	l.events[id] = &Event{ID: id, Class: class, Scenario: l.s.sc.Name, Year: l.s.year,
		MinPressure: math.NaN(), PeakWind: math.NaN(), PeakIVT: math.NaN()}
	l.order = append(l.order, id)
}

// record adds step st (fields f) to the log.
func (l *truthLog) record(st int, f *fields) {
	s, g := l.s, l.s.g
	nlon := len(g.lons)
	type acc struct {
		pixels, land  int
		regions       uint32
		w, wlat, wlon float64
		maxIVT        float64
		landIVT       float64
		landK         int
	}
	tc := make([]acc, len(f.cyclones))
	ar := make([]acc, len(f.rivers))
	for k, m := range f.mask {
		if m == 0 {
			continue
		}
		a := &tc
		if m == 2 {
			a = &ar
		}
		e := &(*a)[f.owner[k]]
		e.pixels++
		e.regions |= g.regions[k]
		lat, lon := g.lats[k/nlon], g.lons[k%nlon]
		w := math.Cos(lat * deg)
		e.w += w
		e.wlat += w * lat
		e.wlon += w * lon
		e.maxIVT = math.Max(e.maxIVT, f.ivt[k])
		if g.land[k] >= 0.5 {
			e.land++
			if f.ivt[k] > e.landIVT {
				e.landIVT, e.landK = f.ivt[k], k
			}
		}
	}
	t := timeValue(s.year, s.opt.SeasonStart, f.hour)
	date := noleapDate(s.year, s.opt.SeasonStart, f.hour)
	for q, a := range f.cyclones {
		if !g.contains(a.p.lat, a.p.lon) && tc[q].pixels == 0 {
			continue
		}
		e := l.events[a.plan.id]
		pc := backgroundSLP(a.p.lat, a.p.lon) - a.p.dp
		e.Points = append(e.Points, TrackPoint{Step: st, Time: t, Date: date, Lat: a.p.lat, Lon: a.p.lon,
			Pressure: pc, Wind: a.v10max, IVT: math.NaN(), Radius: a.radius, Pixels: tc[q].pixels, OverLand: a.p.land})
		if tc[q].pixels > 0 {
			e.Pixels += tc[q].pixels
			e.PeakWind = nanMax(e.PeakWind, a.v10max)
			e.MinPressure = nanMin(e.MinPressure, pc)
			e.Regions = mergeRegions(e.Regions, tc[q].regions)
		}
	}
	for q, r := range f.rivers {
		e := l.events[r.plan.id]
		a := ar[q]
		lat, lon := r.core()
		if a.pixels > 0 {
			lat, lon = a.wlat/a.w, a.wlon/a.w
		} else if !g.contains(lat, lon) {
			continue
		}
		ivt := math.NaN()
		if a.pixels > 0 {
			ivt = a.maxIVT
		}
		e.Points = append(e.Points, TrackPoint{Step: st, Time: t, Date: date, Lat: lat, Lon: lon,
			Pressure: math.NaN(), Wind: r.amp * r.plan.jet, IVT: ivt, Pixels: a.pixels, OverLand: a.land > 0})
		if a.pixels > 0 {
			e.Pixels += a.pixels
			e.PeakIVT = nanMax(e.PeakIVT, a.maxIVT)
			e.Regions = mergeRegions(e.Regions, a.regions)
			if a.land > 0 && !e.Landfall {
				la, lo := g.lats[a.landK/nlon], g.lons[a.landK%nlon]
				e.Landfall, e.LandfallTime, e.LandfallLat, e.LandfallLon = true, date, la, lo
				e.LandfallLandmass = LandmassAt(la, lo)
				if e.LandfallLandmass == "" { // a coastal cell whose centre is at sea
					_, kk := landness(la, lo)
					e.LandfallLandmass = Landmasses[kk]
				}
				e.LandfallRegions = RegionsAt(la, lo)
			}
		}
	}
}

// finish completes cyclone landfalls from the hourly tracks and returns
// the events that have truth pixels, in plan order.
func (l *truthLog) finish() []*Event {
	s := l.s
	hours := float64(s.opt.Days * 24)
	for _, c := range s.cyclones {
		e := l.events[c.id]
		for k := 1; k < len(c.points); k++ {
			p, prev := c.points[k], c.points[k-1]
			if p.hour < 0 || p.hour >= hours || !s.g.contains(p.lat, p.lon) {
				continue
			}
			if p.land && !prev.land {
				if v, _ := cycloneSurface(p, c.b); v >= TCWindThreshold {
					e.Landfall = true
					e.LandfallTime = noleapDate(s.year, s.opt.SeasonStart, p.hour)
					e.LandfallLat, e.LandfallLon = p.lat, p.lon
					e.LandfallLandmass = LandmassAt(p.lat, p.lon)
					e.LandfallRegions = RegionsAt(p.lat, p.lon)
					break
				}
			}
		}
		if !math.IsNaN(e.PeakWind) {
			e.Category = SaffirSimpson(e.PeakWind)
		}
	}
	var out []*Event
	for _, id := range l.order {
		if e := l.events[id]; e.Pixels > 0 {
			out = append(out, e)
		}
	}
	return out
}

func mergeRegions(names []string, bits uint32) []string {
	for r, reg := range Regions {
		if bits&(1<<r) != 0 && !containsString(names, reg.Name) {
			names = append(names, reg.Name)
		}
	}
	// Keep the order of Regions.
	sort.SliceStable(names, func(i, j int) bool { return regionIndex(names[i]) < regionIndex(names[j]) })
	return names
}

func regionIndex(name string) int {
	for i, r := range Regions {
		if r.Name == name {
			return i
		}
	}
	return len(Regions)
}

func containsString(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

func nanMax(a, b float64) float64 {
	if math.IsNaN(a) || b > a {
		return b
	}
	return a
}

func nanMin(a, b float64) float64 {
	if math.IsNaN(a) || b < a {
		return b
	}
	return a
}

// num formats a number for the CSV files: empty for NaN, otherwise the
// shortest representation at the given precision.
func num(x float64, prec int) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'f', prec, 64)
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

// writeEventsCSV writes one row per event (truth_events.csv).
func writeEventsCSV(w io.Writer, events []*Event) error {
	var b strings.Builder
	b.WriteString("event_id,class,scenario,year,first_date,last_date,steps,pixels,peak_wind_ms,min_pressure_pa,category,peak_ivt,landfall,landfall_date,landfall_lat,landfall_lon,landfall_landmass,landfall_regions,regions\n")
	for _, e := range events {
		first, last := "", ""
		if len(e.Points) > 0 {
			first, last = e.Points[0].Date, e.Points[len(e.Points)-1].Date
		}
		lfLat, lfLon := "", ""
		if e.Landfall {
			lfLat, lfLon = num(e.LandfallLat, 3), num(e.LandfallLon, 3)
		}
		fmt.Fprintf(&b, "%s,%s,%s,%d,%s,%s,%d,%d,%s,%s,%s,%s,%s,%s,%s,%s,%s,%s,%s\n",
			e.ID, e.Class, e.Scenario, e.Year, first, last, len(e.Points), e.Pixels,
			num(e.PeakWind, 2), num(e.MinPressure, 0), e.Category, num(e.PeakIVT, 1),
			yesNo(e.Landfall), e.LandfallTime, lfLat, lfLon, e.LandfallLandmass,
			strings.Join(e.LandfallRegions, ";"), strings.Join(e.Regions, ";"))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// writeTracksCSV writes one row per event and time step (truth_tracks.csv).
func writeTracksCSV(w io.Writer, events []*Event) error {
	var b strings.Builder
	b.WriteString("event_id,class,year,step,time,date,lat,lon,pressure_pa,wind_ms,ivt,radius_km,pixels,over_land\n")
	for _, e := range events {
		for _, p := range e.Points {
			radius := ""
			if e.Class == ClassTC {
				radius = num(p.Radius/1000, 1)
			}
			fmt.Fprintf(&b, "%s,%s,%d,%d,%s,%s,%s,%s,%s,%s,%s,%s,%d,%s\n",
				e.ID, e.Class, e.Year, p.Step, num(p.Time, 4), p.Date, num(p.Lat, 3), num(p.Lon, 3),
				num(p.Pressure, 0), num(p.Wind, 2), num(p.IVT, 1), radius, p.Pixels, yesNo(p.OverLand))
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}
