package pipeline

// CampaignInfo is the campaign-wide context a stage may read: scenarios,
// channels, variable names, the train/validate/test split and regions. Which
// sections reach a stage's cache key is declared by the kind (see
// SectionUser); a kind that declares nothing gets all of them.
type CampaignInfo struct {
	Name      string            `json:"name"`
	Dir       string            `json:"dir"` // absolute directory of the campaign file
	Scenarios []ScenarioInfo    `json:"scenarios,omitempty"`
	Variables map[string]string `json:"variables,omitempty"` // file variable name -> CF standard_name
	Channels  []Channel         `json:"channels,omitempty"`
	Split     Split             `json:"split"`
	Regions   []Region          `json:"regions,omitempty"`
}

// Campaign sections a kind can declare it reads. For per-block kinds the
// scenarios section contributes only names and calendars to the key.
const (
	SectionScenarios = "scenarios"
	SectionVariables = "variables"
	SectionChannels  = "channels"
	SectionSplit     = "split"
	SectionRegions   = "regions"
)

// SectionUser is implemented by kinds that read only some campaign
// sections, so that a change elsewhere does not rerun them.
type SectionUser interface {
	CampaignSections() []string
}

// ScenarioInfo describes one scenario.
type ScenarioInfo struct {
	Name      string   `json:"name"`
	FirstYear int      `json:"first_year"`
	LastYear  int      `json:"last_year"`
	Calendar  string   `json:"calendar,omitempty"` // expected CF calendar, "" = any
	Blocks    []string `json:"blocks"`             // block labels found, sorted
}

// Channel is one field the campaign works with. Exactly one of
// StandardName, Variable or Derived identifies it.
type Channel struct {
	Name         string  `json:"name"`
	StandardName string  `json:"standard_name,omitempty"`
	Variable     string  `json:"variable,omitempty"` // name in the files, when no standard_name fits
	LevelPa      float64 `json:"level_pa,omitempty"` // pressure level in Pa; 0 for single-level fields
	Units        string  `json:"units,omitempty"`    // units the channel is delivered in
	// Derived names a quantity computed from other fields: wind_speed,
	// relative_vorticity, ivt, ivt_u, ivt_v, iwv.
	Derived string `json:"derived,omitempty"`
}

// Split assigns years to training, validation and test. Years in no list
// belong to none. GapDays are dropped at each boundary between two sets so
// that nearly identical neighbouring samples do not leak across.
type Split struct {
	Train    []Period `json:"train,omitempty"`
	Validate []Period `json:"validate,omitempty"`
	Test     []Period `json:"test,omitempty"`
	GapDays  float64  `json:"gap_days,omitempty"`
}

// Period is an inclusive range of years.
type Period struct {
	First int `json:"first"`
	Last  int `json:"last"`
}

// Contains reports whether year lies in the period.
func (p Period) Contains(year int) bool { return year >= p.First && year <= p.Last }

// Role returns "train", "validate", "test" or "" for a year.
func (s Split) Role(year int) string {
	for _, p := range s.Train {
		if p.Contains(year) {
			return "train"
		}
	}
	for _, p := range s.Validate {
		if p.Contains(year) {
			return "validate"
		}
	}
	for _, p := range s.Test {
		if p.Contains(year) {
			return "test"
		}
	}
	return ""
}

// Region is a named area for regional statistics: a latitude-longitude box
// or polygons from a GeoJSON file. Longitudes are degrees east; a box whose
// LonMin is greater than LonMax crosses the antimeridian.
type Region struct {
	Name string `json:"name"`
	Box  *Box   `json:"box,omitempty"`
	// Polygons are GeoJSON polygons: each a list of rings, each ring a list
	// of [lon, lat] positions, the first ring the outer boundary.
	Polygons [][][][2]float64 `json:"polygons,omitempty"`
}

// Box is a latitude-longitude box in degrees.
type Box struct {
	LatMin float64 `json:"lat_min"`
	LatMax float64 `json:"lat_max"`
	LonMin float64 `json:"lon_min"`
	LonMax float64 `json:"lon_max"`
}
