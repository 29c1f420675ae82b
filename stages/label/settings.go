package label

import (
	"fmt"
	"slices"
	"strings"

	"github.com/squall-climate/squall/pipeline"
)

// Class values of class_mask (the shared mask.nc format).
const (
	Background       byte = 0
	TropicalCyclone  byte = 1
	AtmosphericRiver byte = 2
)

// Class names as they appear in flag_meanings and in the classes setting.
const (
	ClassTC = "tropical_cyclone"
	ClassAR = "atmospheric_river"
)

// FlagMeanings is the CF flag_meanings attribute of class_mask.
const FlagMeanings = "background tropical_cyclone atmospheric_river"

// Names of the per-step tropical-cyclone criteria that can be switched on
// and off with tc_criteria. The SLP local minimum is not optional: it is
// what a candidate is.
const (
	CritVorticity   = "vorticity"
	CritMaxWind     = "max_wind"
	CritWarmCore    = "warm_core"
	CritWindProfile = "wind_profile"
	CritGenesisLat  = "genesis_latitude"
)

var allCriteria = []string{CritVorticity, CritMaxWind, CritWarmCore, CritWindProfile, CritGenesisLat}

// Threshold modes of the AR quantity.
const (
	ThresholdAbsolute = "absolute"
	ThresholdRelative = "relative"
)

// TCConfig holds the tropical-cyclone settings of one label instance, in
// SI units (distances in metres, speeds in m s-1, times in hours).
type TCConfig struct {
	Criteria      []string
	BoxPoints     int     // least side of the square search box, grid points (odd)
	BoxWidth      float64 // least side of the box, m (along a meridian)
	VorticityMin  float64 // s-1, magnitude; sign follows the hemisphere
	WindMin       float64 // m s-1; 0 = scale with grid spacing (WindThreshold)
	WarmCoreMin   float64 // K, sum of the 700, 500, 300 hPa anomalies
	GenesisMaxLat float64 // degrees from the equator
	MaxSpeed      float64 // m per hour between matched centres
	MaxGapSteps   int     // missing steps allowed inside a track
	MinLifetime   float64 // hours from first to last point
	MaskWind      float64 // m s-1; 0 = the detection threshold
	MaskMaxRadius float64 // m
	MinSLPDepth   float64 // Pa below the box mean; 0 = off
}

// Has reports whether a criterion is switched on.
func (c *TCConfig) Has(name string) bool { return slices.Contains(c.Criteria, name) }

// ARConfig holds the atmospheric-river settings of one label instance.
type ARConfig struct {
	Threshold      string  // ThresholdAbsolute or ThresholdRelative
	IVTMin         float64 // kg m-1 s-1, absolute threshold
	IVTFloor       float64 // kg m-1 s-1, floor under the relative threshold
	IWVMin         float64 // kg m-2, threshold when only IWV is available
	IVTTop         float64 // Pa, top of the column when IVT is integrated here
	MinLength      float64 // m
	MaxWidth       float64 // m
	MinAspect      float64 // length / width
	MinCentroidLat float64 // degrees from the equator
}

// Config is the resolved configuration of one label instance.
type Config struct {
	TC      bool // label tropical cyclones
	AR      bool // label atmospheric rivers
	TCConf  TCConfig
	ARConf  ARConfig
	Overlap string // class that wins where both apply
	// TracksOnly runs the tropical-cyclone candidate and track passes
	// without the mask, so the 10 m wind is not required (pressure-only
	// tracking for diagnostics and tests). Not a setting; Write refuses it.
	TracksOnly bool
}

// Settings declares the label kind's settings. Every default names its
// source; "from memory" marks values not yet checked against the paper.
func settings() []pipeline.Setting {
	b := pipeline.Bound
	return []pipeline.Setting{
		{Name: "classes", Type: pipeline.TypeStrings, Default: []string{ClassTC, ClassAR},
			Doc: "Classes to label: tropical_cyclone, atmospheric_river or both. A class left out is never written, so its inputs are not needed."},

		// Tropical cyclones.
		{Name: "tc_criteria", Type: pipeline.TypeStrings, Default: slices.Clone(allCriteria),
			Doc: "Per-candidate tropical-cyclone criteria applied on top of the SLP local minimum: vorticity, max_wind, warm_core, wind_profile, genesis_latitude. " +
				"The default set is that of Bengtsson et al. (1995, Tellus 47A) and Vitart et al. (1997, J. Climate 10); leave one out only to study its effect, or when the data lack its fields."},
		{Name: "tc_box_points", Type: pipeline.TypeInt, Unit: "1", Default: 7, Min: b(3), Max: b(41),
			Doc: "Least side in grid points of the square box around an SLP minimum in which vorticity, wind and the warm core are searched; odd (see also tc_box_width). " +
				"Default 7 (7x7 points, Bengtsson et al. 1995, confirmed). The SLP minimum must be the lowest value in its box."},
		{Name: "tc_box_width", Type: pipeline.TypeFloat, Unit: "km", Default: 875.0, Min: b(0), Max: b(3000),
			Doc: "Least side of the search box along a meridian: on grids finer than about 1.1 degrees the box grows beyond tc_box_points to keep this width, so that the warm-core anomaly is still measured against surroundings outside the core. " +
				"Default 875 km = 7 points of the T106 grid (about 1.125 degrees, 125 km) on which Bengtsson et al. (1995) set the 7x7 box; the T106 spacing is from memory. 0 keeps the box at tc_box_points."},
		{Name: "tc_vorticity_min", Type: pipeline.TypeFloat, Unit: "s-1", Default: 3.5e-5, Min: b(0), Sweep: true,
			Doc: "Least 850 hPa relative vorticity in the box, positive in the northern hemisphere and negative (below -value) in the southern. " +
				"Default 3.5e-5 s-1 (Bengtsson et al. 1995; Vitart et al. 1997; confirmed)."},
		{Name: "tc_wind_min", Type: pipeline.TypeFloat, Unit: "m s-1", Default: 0.0, Min: b(0), Sweep: true,
			Doc: "Least 10 m wind speed in the box. 0 (default) scales it with the grid spacing d: " +
				"17.5 - 7.5 * min(d, 300 km)/300 km m s-1, the straight line through the two values of Walsh et al. (2007, J. Climate 20; confirmed): 17.5 m s-1 for observations (d = 0) and about 10 m s-1 at 300 km. " +
				"d is the side of a square with the area of an equatorial cell, R*sqrt(dlat*dlon) in radians. The interpolation is ours; Walsh et al. tabulate the dependence."},
		{Name: "tc_warm_core_min", Type: pipeline.TypeFloat, Unit: "K", Default: 3.0, Min: b(0), Sweep: true,
			Doc: "Least sum of the temperature anomalies at 700, 500 and 300 hPa at the warm-core centre, each anomaly against the box mean at its level; the 300 hPa anomaly must also exceed the 850 hPa one. " +
				"Default 3 K (Bengtsson et al. 1995; Vitart et al. 1997; confirmed). The warm-core centre is the point of highest mean 500/300 hPa temperature within one grid point of the SLP minimum (our reading of a centre anomaly; Vitart et al. 1997 search near the vorticity maximum, from memory)."},
		{Name: "tc_genesis_max_lat", Type: pipeline.TypeFloat, Unit: "degree", Default: 40.0, Min: b(0), Max: b(90),
			Doc: "Largest absolute latitude of a track's first point (genesis). Default 40 degrees, from memory (common in the literature; verify before relying on it)."},
		{Name: "tc_max_speed", Type: pipeline.TypeFloat, Unit: "km h-1", Default: 400.0 / 6, Min: b(1),
			Doc: "Largest great-circle displacement per hour between consecutive centres of a track (times the hours elapsed, so gaps allow more). " +
				"Default 66.7 km h-1 = 400 km per 6 h, from memory. Extratropical storms on coarse grids need more (the Pstorm test uses 150)."},
		{Name: "tc_max_gap_steps", Type: pipeline.TypeInt, Unit: "1", Default: 1, Min: b(0), Max: b(10),
			Doc: "Time steps a track may miss (no candidate near it) and still continue. Default 1, our choice (common practice: one missed analysis is tolerated)."},
		{Name: "tc_min_lifetime", Type: pipeline.TypeFloat, Unit: "h", Default: 48.0, Min: b(0), Sweep: true,
			Doc: "Least time from a track's first to its last point. Default 48 h (duration >= 2 days, Bengtsson et al. 1995; Vitart et al. 1997; confirmed). " +
				"Tracks are cut at the block (year) boundary, so a storm crossing the new year may be shortened."},
		{Name: "tc_mask_wind", Type: pipeline.TypeFloat, Unit: "m s-1", Default: 34 * 1852.0 / 3600, Min: b(0),
			Doc: "10 m wind that outlines a storm's mask: the gale radius R34, the usual measure of a tropical cyclone's size. Default 34 kt = 17.49 m s-1, the tropical-storm threshold (NWS, confirmed). 0 uses the detection wind threshold (tc_wind_min or its grid-scaled value)."},
		{Name: "tc_mask_max_radius", Type: pipeline.TypeFloat, Unit: "km", Default: 500.0, Min: b(10), Max: b(3000),
			Doc: "Cap on the distance from a track point within which pixels are labelled tropical_cyclone. Default 500 km, from memory (gale-force wind radii rarely exceed it)."},
		{Name: "tc_min_slp_depth", Type: pipeline.TypeFloat, Unit: "Pa", Default: 0.0, Min: b(0),
			Doc: "Least depth of the SLP minimum below the mean SLP of its box; 0 (default) switches it off. Not part of the published criteria: a filter for shallow noise minima in pressure-only tracking."},

		// Atmospheric rivers.
		{Name: "ar_threshold", Type: pipeline.TypeString, Default: ThresholdAbsolute, Choices: []string{ThresholdAbsolute, ThresholdRelative},
			Doc: "absolute: IVT >= ar_ivt_min everywhere. relative: IVT >= max(per-cell, per-month percentile, ar_ivt_floor), the percentile from an ivt-climatology input (the training years of the reference scenario)."},
		{Name: "ar_ivt_min", Type: pipeline.TypeFloat, Unit: "kg m-1 s-1", Default: 250.0, Min: b(0), Sweep: true,
			Doc: "Absolute IVT threshold. Default 250 kg m-1 s-1 (AMS Glossary of Meteorology, \"atmospheric river\", Ralph et al. 2018, BAMS 99; confirmed)."},
		{Name: "ar_ivt_floor", Type: pipeline.TypeFloat, Unit: "kg m-1 s-1", Default: 100.0, Min: b(0), Sweep: true,
			Doc: "Least IVT threshold in relative mode, so that dry regions do not produce rivers of small IVT. Default 100 kg m-1 s-1 (Guan & Waliser 2015, JGR 120; from memory)."},
		{Name: "ar_iwv_min", Type: pipeline.TypeFloat, Unit: "kg m-2", Default: 20.0, Min: b(0), Sweep: true,
			Doc: "IWV threshold, used only when the fields give column water vapour but neither IVT nor q, u, v on levels. Default 20 kg m-2 = 2 cm (Ralph, Neiman & Wick 2004, Mon. Wea. Rev. 132; from memory)."},
		{Name: "ar_ivt_top", Type: pipeline.TypeFloat, Unit: "Pa", Default: 30000.0, Min: b(1000), Max: b(90000),
			Doc: "Top of the column when IVT is integrated here from q, u, v on pressure levels (only when the fields carry no ivt channel). Default 300 hPa (AMS Glossary; confirmed)."},
		{Name: "ar_min_length", Type: pipeline.TypeFloat, Unit: "km", Default: 2000.0, Min: b(0), Sweep: true,
			Doc: "Least length of an object (largest great-circle distance between two of its cells). Default 2000 km (Ralph et al. 2004; Rutz et al. 2014, Mon. Wea. Rev. 142; from memory)."},
		{Name: "ar_max_width", Type: pipeline.TypeFloat, Unit: "km", Default: 1000.0, Min: b(0),
			Doc: "Largest width of an object (its area divided by its length). Default 1000 km (Ralph et al. 2004; from memory)."},
		{Name: "ar_min_aspect", Type: pipeline.TypeFloat, Unit: "1", Default: 2.0, Min: b(0),
			Doc: "Least length/width ratio. Default 2 (Guan & Waliser 2015; from memory)."},
		{Name: "ar_min_centroid_lat", Type: pipeline.TypeFloat, Unit: "degree", Default: 20.0, Min: b(0), Max: b(90),
			Doc: "Objects whose area-weighted centroid lies within this many degrees of the equator are dropped (deep-tropical moisture, ITCZ). Default 20 degrees, from memory (a common choice; verify before relying on it)."},
		{Name: "overlap", Type: pipeline.TypeString, Default: ClassTC, Choices: []string{ClassTC, ClassAR},
			Doc: "Class written where a pixel is both TC and AR. Default tropical_cyclone: the TC mask is small and specific while a river often wraps into a cyclone's moist core. AR objects are judged on their full extent before the TC pixels are painted over them."},
	}
}

// ParseConfig turns an instance's settings into a Config, checking what the
// type system cannot (odd box size, known criteria and classes).
func ParseConfig(v pipeline.Values) (Config, error) {
	var c Config
	for _, cl := range v.Strings("classes") {
		switch cl {
		case ClassTC:
			c.TC = true
		case ClassAR:
			c.AR = true
		default:
			return c, fmt.Errorf("setting classes: unknown class %q (use %s or %s)", cl, ClassTC, ClassAR)
		}
	}
	if !c.TC && !c.AR {
		return c, fmt.Errorf("setting classes: empty; give %s, %s or both", ClassTC, ClassAR)
	}
	crit := v.Strings("tc_criteria")
	for _, k := range crit {
		if !slices.Contains(allCriteria, k) {
			return c, fmt.Errorf("setting tc_criteria: unknown criterion %q (known: %s)", k, strings.Join(allCriteria, ", "))
		}
	}
	box := v.Int("tc_box_points")
	if box%2 == 0 || box < 3 {
		return c, fmt.Errorf("setting tc_box_points: %d must be odd and at least 3 (the box is centred on the SLP minimum)", box)
	}
	c.TCConf = TCConfig{
		Criteria:      crit,
		BoxPoints:     box,
		BoxWidth:      v.Float("tc_box_width") * 1000,
		VorticityMin:  v.Float("tc_vorticity_min"),
		WindMin:       v.Float("tc_wind_min"),
		WarmCoreMin:   v.Float("tc_warm_core_min"),
		GenesisMaxLat: v.Float("tc_genesis_max_lat"),
		MaxSpeed:      v.Float("tc_max_speed") * 1000,
		MaxGapSteps:   v.Int("tc_max_gap_steps"),
		MinLifetime:   v.Float("tc_min_lifetime"),
		MaskWind:      v.Float("tc_mask_wind"),
		MaskMaxRadius: v.Float("tc_mask_max_radius") * 1000,
		MinSLPDepth:   v.Float("tc_min_slp_depth"),
	}
	c.ARConf = ARConfig{
		Threshold:      v.String("ar_threshold"),
		IVTMin:         v.Float("ar_ivt_min"),
		IVTFloor:       v.Float("ar_ivt_floor"),
		IWVMin:         v.Float("ar_iwv_min"),
		IVTTop:         v.Float("ar_ivt_top"),
		MinLength:      v.Float("ar_min_length") * 1000,
		MaxWidth:       v.Float("ar_max_width") * 1000,
		MinAspect:      v.Float("ar_min_aspect"),
		MinCentroidLat: v.Float("ar_min_centroid_lat"),
	}
	if c.ARConf.Threshold != ThresholdAbsolute && c.ARConf.Threshold != ThresholdRelative {
		return c, fmt.Errorf("setting ar_threshold: %q is neither %s nor %s", c.ARConf.Threshold, ThresholdAbsolute, ThresholdRelative)
	}
	c.Overlap = v.String("overlap")
	if c.Overlap != ClassTC && c.Overlap != ClassAR {
		return c, fmt.Errorf("setting overlap: %q is neither %s nor %s", c.Overlap, ClassTC, ClassAR)
	}
	return c, nil
}

// DefaultValues returns the settings' defaults as Values, for tests and for
// callers that run the detectors outside the engine.
func DefaultValues() pipeline.Values {
	v := pipeline.Values{}
	for _, s := range settings() {
		v[s.Name] = s.Default
	}
	return v
}
