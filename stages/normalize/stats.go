package normalize

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
)

// StatsFile is the file a fit-stats instance writes.
const StatsFile = "stats.json"

// StatsFormat is the version of the stats.json layout.
const StatsFormat = 1

// Stats is the content of stats.json: per-channel statistics fitted on
// the training years only, so that training, validation, test and later
// inference normalise with the very same numbers.
type Stats struct {
	Format      int    `json:"format"`       // StatsFormat
	Kind        string `json:"kind"`         // "fit-stats"
	KindVersion int    `json:"kind_version"` // the fit kind's Version()
	// Weighting is "none" (every grid point counts once) or "cell_area"
	// (points weighted by their cell's area on the sphere).
	Weighting string `json:"weighting"`
	// Years are the training years the statistics were fitted on.
	Years []int `json:"training_years"`
	// Blocks are the instances read, sorted.
	Blocks []BlockRef `json:"blocks"`
	// QuantileLevels are the probabilities at which ChannelStats.Quantiles
	// are given; Compression is the t-digest compression used for them.
	QuantileLevels []float64      `json:"quantile_levels"`
	Compression    float64        `json:"compression"`
	Channels       []ChannelStats `json:"channels"`
}

// BlockRef names an input instance.
type BlockRef struct {
	Scenario string `json:"scenario"`
	Block    string `json:"block"`
	Member   string `json:"member,omitempty"`
}

// ChannelStats are the statistics of one channel of fields.nc.
type ChannelStats struct {
	Name     string  `json:"name"`
	Quantity string  `json:"quantity"`
	LevelPa  float64 `json:"level_pa,omitempty"`
	Units    string  `json:"units"`
	// Count is the number of values used; Missing the fill values skipped.
	Count   int64 `json:"count"`
	Missing int64 `json:"missing"`
	// Weight is the sum of weights (m2 summed over time steps with
	// cell_area weighting, Count without).
	Weight float64 `json:"weight"`
	Mean   float64 `json:"mean"`
	// Std is the square root of the unbiased variance with reliability
	// weights, M2 / (W - W2/W), which is the n-1 definition for unit
	// weights (NIST StRD).
	Std       float64   `json:"std"`
	Min       float64   `json:"min"`
	Max       float64   `json:"max"`
	Quantiles []float64 `json:"quantiles"`
}

// Quantile returns the fitted quantile at level q, if it was requested.
func (c ChannelStats) Quantile(levels []float64, q float64) (float64, bool) {
	for i, l := range levels {
		if math.Abs(l-q) < 1e-12 {
			return c.Quantiles[i], true
		}
	}
	return 0, false
}

// Channel returns the statistics of the named channel.
func (s *Stats) Channel(name string) (ChannelStats, bool) {
	for _, c := range s.Channels {
		if c.Name == name {
			return c, true
		}
	}
	return ChannelStats{}, false
}

// ReadStats reads and checks a stats.json file.
func ReadStats(path string) (*Stats, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("read statistics: %w", err)
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var s Stats
	if err := dec.Decode(&s); err != nil {
		return nil, fmt.Errorf("read statistics %s: %v (hint: the file must be written by a fit-stats stage)", path, err)
	}
	if s.Format != StatsFormat {
		return nil, fmt.Errorf("read statistics %s: format %d, this squall reads format %d (hint: rerun the fit-stats stage)", path, s.Format, StatsFormat)
	}
	for _, c := range s.Channels {
		if len(c.Quantiles) != len(s.QuantileLevels) {
			return nil, fmt.Errorf("read statistics %s: channel %q has %d quantiles for %d levels", path, c.Name, len(c.Quantiles), len(s.QuantileLevels))
		}
	}
	return &s, nil
}

// WriteStats writes s as indented JSON; encoding/json prints every float64
// in its shortest exact form, so reading it back gives the same numbers.
func WriteStats(path string, s *Stats) error {
	data, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return fmt.Errorf("write statistics: %w", err)
	}
	return os.WriteFile(path, append(data, '\n'), 0o644)
}
