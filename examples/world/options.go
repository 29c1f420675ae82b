package world

import (
	"fmt"
	"math"
	"regexp"
	"strings"
)

// Options say what to generate. Start from Preset and change fields.
type Options struct {
	Dir  string // output directory; created if missing
	Seed uint64 // every random choice derives from it

	Scenarios []Scenario

	// Domain in degrees, inside the world (lat -10..65, lon 40..140 east).
	// The grid is point-centred: LatMin, LatMin+Resolution, ..., LatMax.
	LatMin, LatMax float64
	LonMin, LonMax float64
	Resolution     float64 // grid spacing, degrees
	LatDescending  bool    // write latitudes north to south (as some models do)

	StepHours   int // 3 or 6
	Days        int // simulated days per year (the storm season)
	SeasonStart int // first simulated day of each year, 1..365 in the noleap calendar

	// Vertical is "pressure" (levels 1000..200 hPa) or "hybrid" (hybrid
	// sigma-pressure model levels, CF appendix D).
	Vertical string
	// BelowSurface says what pressure-level files hold where a level lies
	// below the ground (mountains, deep cyclone cores): "extrapolate"
	// (the smooth profile continued downward, as reanalyses do) or "fill"
	// (_FillValue). Hybrid levels never lie below the ground.
	BelowSurface string

	Workers int // compute goroutines; 0 means GOMAXPROCS
}

// Scenario is one simulated climate: its years and how it differs. Event
// counts and intensities grow linearly with the year index i = year -
// FirstYear, which is the planted trend the trend stage should find.
type Scenario struct {
	Name      string
	FirstYear int
	LastYear  int

	// WarmingK warms the whole atmosphere (more aloft, as in the tropics of
	// warmer climates); moisture follows through saturation, about 7 %/K.
	WarmingK float64

	// Cyclones per season: round(Cyclones.First + Cyclones.PerYear * i).
	Cyclones Rate
	// CycloneIntensity multiplies every planted pressure deficit, and
	// grows by CycloneIntensityTrend (a fraction) per year.
	CycloneIntensity      float64
	CycloneIntensityTrend float64

	// Rivers per season, like Cyclones.
	Rivers Rate
	// RiverMoisture multiplies the moisture a plume carries, and grows by
	// RiverMoistureTrend (a fraction) per year.
	RiverMoisture      float64
	RiverMoistureTrend float64
}

// Rate is a count that grows linearly with the year index.
type Rate struct {
	First   float64 // expected count in the first year
	PerYear float64 // added per year
}

// Count returns the number planted in year index i, rounded half up.
func (r Rate) Count(i int) int {
	n := math.Floor(r.First + r.PerYear*float64(i) + 0.5)
	if n < 0 {
		return 0
	}
	return int(n)
}

// Years lists the scenario's years.
func (s Scenario) Years() []int {
	var ys []int
	for y := s.FirstYear; y <= s.LastYear; y++ {
		ys = append(ys, y)
	}
	return ys
}

// World extent: the invented geography and the event planning live here;
// a domain is a window on it.
const (
	worldLatMin, worldLatMax = -10.0, 65.0
	worldLonMin, worldLonMax = 40.0, 140.0
)

// Preset returns the options of a named configuration (Dir is left empty):
//
//	demo   1.5 deg over 0-54N 50-131E (37 x 55 points), 6-hourly, 30 days
//	       from 15 August, control 1991-1996 and warm 2071-2076: 12 files,
//	       about 387 MB of raw field data; a whole campaign over it stays
//	       well under two minutes on two cores.
//	bench  0.5 deg over the same domain (109 x 163), 3-hourly, 45 days,
//	       2 scenarios x 2 years: about 3.4 GB of raw field data.
//	tiny   3 deg, 6-hourly, 4 days, 2 scenarios x 2 years: about 1 MB per
//	       file, for tests of any stage.
func Preset(name string) (Options, error) {
	o := Options{
		Seed:         1,
		LatMin:       0,
		LatMax:       54,
		LonMin:       50,
		LonMax:       131,
		Resolution:   1.5,
		StepHours:    6,
		Days:         30,
		SeasonStart:  227, // 15 August in a 365-day year
		Vertical:     "pressure",
		BelowSurface: "extrapolate",
	}
	control := Scenario{
		Name: "control", FirstYear: 1991, LastYear: 1996,
		Cyclones: Rate{4, 0.4}, CycloneIntensity: 1, CycloneIntensityTrend: 0.02,
		Rivers: Rate{5, 0.4}, RiverMoisture: 1, RiverMoistureTrend: 0.02,
	}
	warm := Scenario{
		Name: "warm", FirstYear: 2071, LastYear: 2076, WarmingK: 2.5,
		Cyclones: Rate{6, 0.5}, CycloneIntensity: 1.15, CycloneIntensityTrend: 0.02,
		Rivers: Rate{6, 0.4}, RiverMoisture: 1.15, RiverMoistureTrend: 0.02,
	}
	switch name {
	case "demo":
		o.Scenarios = []Scenario{control, warm}
	case "bench":
		o.Resolution = 0.5
		o.StepHours = 3
		o.Days = 45
		control.LastYear = control.FirstYear + 1
		warm.LastYear = warm.FirstYear + 1
		control.Cyclones, warm.Cyclones = Rate{6, 0.6}, Rate{9, 0.75}
		control.Rivers, warm.Rivers = Rate{7, 0.6}, Rate{9, 0.6}
		o.Scenarios = []Scenario{control, warm}
	case "tiny":
		o.Resolution = 3
		o.Days = 4
		control.LastYear = control.FirstYear + 1
		warm.LastYear = warm.FirstYear + 1
		control.Cyclones, warm.Cyclones = Rate{2, 0}, Rate{3, 0}
		control.Rivers, warm.Rivers = Rate{2, 0}, Rate{3, 0}
		o.Scenarios = []Scenario{control, warm}
	default:
		return Options{}, fmt.Errorf("world: unknown preset %q (known: demo, bench, tiny)", name)
	}
	return o, nil
}

var scenarioName = regexp.MustCompile(`^[a-z][a-z0-9_-]*$`)

// Validate checks the options and names the field at fault.
func (o *Options) Validate() error {
	bad := func(field string, v any, hint string) error {
		return fmt.Errorf("world: option %s = %v: %s", field, v, hint)
	}
	if o.Dir == "" {
		return bad("Dir", `""`, "give an output directory")
	}
	if o.Resolution <= 0 || o.Resolution > 5 {
		return bad("Resolution", o.Resolution, "grid spacing must be in (0, 5] degrees")
	}
	if o.LatMin < worldLatMin || o.LatMax > worldLatMax || o.LatMin >= o.LatMax {
		return bad("LatMin/LatMax", fmt.Sprintf("%g..%g", o.LatMin, o.LatMax), fmt.Sprintf("the world spans latitudes %g..%g", worldLatMin, worldLatMax))
	}
	if o.LonMin < worldLonMin || o.LonMax > worldLonMax || o.LonMin >= o.LonMax {
		return bad("LonMin/LonMax", fmt.Sprintf("%g..%g", o.LonMin, o.LonMax), fmt.Sprintf("the world spans longitudes %g..%g east", worldLonMin, worldLonMax))
	}
	for _, span := range []float64{o.LatMax - o.LatMin, o.LonMax - o.LonMin} {
		if n := span / o.Resolution; math.Abs(n-math.Round(n)) > 1e-6 {
			return bad("Resolution", o.Resolution, fmt.Sprintf("must divide the domain spans (%g and %g degrees)", o.LatMax-o.LatMin, o.LonMax-o.LonMin))
		}
	}
	if o.StepHours != 3 && o.StepHours != 6 {
		return bad("StepHours", o.StepHours, "use 3 or 6")
	}
	if o.Days < 1 || o.Days > 365 {
		return bad("Days", o.Days, "use 1..365")
	}
	if o.SeasonStart < 1 || o.SeasonStart+o.Days-1 > 365 {
		return bad("SeasonStart", o.SeasonStart, fmt.Sprintf("the season (%d days) must fit in the 365-day year", o.Days))
	}
	switch o.Vertical {
	case "pressure", "hybrid":
	default:
		return bad("Vertical", fmt.Sprintf("%q", o.Vertical), `use "pressure" or "hybrid"`)
	}
	switch o.BelowSurface {
	case "", "extrapolate", "fill":
	default:
		return bad("BelowSurface", fmt.Sprintf("%q", o.BelowSurface), `use "extrapolate" or "fill"`)
	}
	if o.Workers < 0 {
		return bad("Workers", o.Workers, "use 0 (all cores) or more")
	}
	if len(o.Scenarios) == 0 {
		return bad("Scenarios", "[]", "give at least one scenario")
	}
	seen := map[string]bool{}
	for k, s := range o.Scenarios {
		f := fmt.Sprintf("Scenarios[%d]", k)
		if !scenarioName.MatchString(s.Name) {
			return bad(f+".Name", fmt.Sprintf("%q", s.Name), "use lower-case letters, digits, '-' and '_' (it names a directory)")
		}
		if seen[s.Name] {
			return bad(f+".Name", s.Name, "scenario names must be unique")
		}
		seen[s.Name] = true
		if s.FirstYear < 1 || s.LastYear < s.FirstYear || s.LastYear > 9999 {
			return bad(f+".FirstYear/LastYear", fmt.Sprintf("%d..%d", s.FirstYear, s.LastYear), "use 1 <= first <= last <= 9999")
		}
		if s.WarmingK < -5 || s.WarmingK > 8 {
			return bad(f+".WarmingK", s.WarmingK, "use -5..8 K")
		}
		if s.CycloneIntensity <= 0 || s.RiverMoisture <= 0 {
			return bad(f+".CycloneIntensity/RiverMoisture", fmt.Sprintf("%g/%g", s.CycloneIntensity, s.RiverMoisture), "factors must be positive (1 = control)")
		}
		for i := range s.Years() {
			if s.Cyclones.Count(i) > 40 || s.Rivers.Count(i) > 40 {
				return bad(f+".Cyclones/Rivers", fmt.Sprintf("%v/%v", s.Cyclones, s.Rivers), "at most 40 events of a class per season")
			}
			if g := 1 + s.CycloneIntensityTrend*float64(i); g <= 0.1 || 1+s.RiverMoistureTrend*float64(i) <= 0.1 {
				return bad(f+".CycloneIntensityTrend/RiverMoistureTrend", fmt.Sprintf("%g/%g", s.CycloneIntensityTrend, s.RiverMoistureTrend), "the trend drives a factor to zero within the years")
			}
		}
	}
	if strings.TrimSpace(o.Dir) != o.Dir {
		return bad("Dir", fmt.Sprintf("%q", o.Dir), "leading or trailing blanks")
	}
	return nil
}
