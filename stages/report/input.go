package report

// Input is everything the report shows, filled by the command line from
// the run record after every run. The report reads stage outputs itself
// from the directories in Outputs, so Input stays plain data.
type Input struct {
	Campaign     string // campaign name
	CampaignFile string // path of the campaign file, as the user gave it
	Tool         string // e.g. "squall 0.1.0"
	RunID        string
	Status       string // ok, failed, interrupted
	// When is shown as given (e.g. the run's finish time); leave it empty
	// for a page that is byte-identical across reruns.
	When      string
	Scenarios []Scenario
	Channels  []Channel
	Stages    []Stage
	Instances []Instance
	// Record is the reproducibility record as pretty-printed JSON.
	Record string
	// Outputs are the output directories of finished instances. The
	// report looks at kinds label (mask.nc), evaluate (pixel_scores.csv,
	// event_scores.csv or scores.json), catalog (events.csv) and trends
	// (trends.json, maps.nc); others are ignored.
	Outputs []Output
}

// Scenario is one scenario of the campaign.
type Scenario struct {
	Name      string
	FirstYear int
	LastYear  int
	Calendar  string   // "" when any calendar is accepted
	Blocks    []string // blocks (years) found
}

// Channel is one input channel.
type Channel struct {
	Name     string
	Quantity string  // CF standard name or derived quantity (ivt, wind_speed, ...)
	LevelPa  float64 // 0 for single-level fields
	Units    string
}

// Stage is one stage of the campaign graph.
type Stage struct {
	Name   string
	Kind   string
	Fan    string   // how it fans out, in words (e.g. "per block")
	Inputs []string // stage or scenario names it reads
}

// Instance states, as in the run record.
const (
	StateRan     = "ran"
	StateReused  = "reused"
	StateFailed  = "failed"
	StateBlocked = "blocked"
	StateNotRun  = "not run"
)

// Instance is what happened to one stage instance in the run.
type Instance struct {
	Stage    string
	Scenario string
	Block    string
	Member   string
	State    string // ran, reused, failed, blocked, not run
	Seconds  float64
	Reason   string // why it ran, or why it failed or was blocked
}

// Output is the output directory of one finished instance.
type Output struct {
	Stage    string
	Kind     string // stage kind: label, evaluate, catalog, trends, ...
	Scenario string
	Block    string
	Member   string
	Dir      string
}
