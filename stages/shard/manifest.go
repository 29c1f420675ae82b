package shard

import (
	"encoding/json"
	"fmt"
	"os"
)

// ManifestFile is the name of the manifest a shard instance writes.
const ManifestFile = "manifest.json"

// ManifestFormat is the version of the manifest layout.
const ManifestFormat = 1

// Manifest is the content of manifest.json. The layout is documented in
// doc.go; the batch-script stage reads Ranks from it.
type Manifest struct {
	Format      int    `json:"format"`
	Kind        string `json:"kind"`
	KindVersion int    `json:"kind_version"`
	// Encoding of the input variable: "float32", or "binary16" (IEEE half
	// precision bit patterns stored as int16; see the normalize package).
	Encoding string `json:"encoding"`
	// Channels in the order of the shards' channel dimension.
	Channels []ChannelInfo `json:"channels"`
	NLat     int           `json:"nlat"`
	NLon     int           `json:"nlon"`
	// Classes are the class names of the masks, in class-value order
	// (value 0 first); empty when the shards hold no mask.
	Classes []string `json:"classes"`
	// BytesPerSample is the uncompressed size of one sample (input plus
	// mask).
	BytesPerSample int64     `json:"bytes_per_sample"`
	Split          SplitInfo `json:"split"`
	// Sets summarises train, validate and test.
	Sets []SetInfo `json:"sets"`
	// Shards lists every shard file, train first, then validate, then test.
	Shards []ShardInfo `json:"shards"`
	// ClassPixels and ClassFrequency are over all shards.
	ClassPixels    []int64   `json:"class_pixels"`
	ClassFrequency []float64 `json:"class_frequency"`
	// LossWeights are suggested from the training set's pixel counts only.
	LossWeights *LossWeights `json:"loss_weights,omitempty"`
	Ranks       Ranks        `json:"ranks"`
}

// ChannelInfo describes one channel of the shards.
type ChannelInfo struct {
	Name     string  `json:"name"`
	Quantity string  `json:"quantity"`
	LevelPa  float64 `json:"level_pa,omitempty"`
	Units    string  `json:"units"`
	// Normalization: stored = (original - offset) / scale; absent when the
	// inputs were not normalised.
	NormalizationMethod string   `json:"normalization_method,omitempty"`
	NormalizationOffset *float64 `json:"normalization_offset,omitempty"`
	NormalizationScale  *float64 `json:"normalization_scale,omitempty"`
}

// SplitInfo records how years were assigned.
type SplitInfo struct {
	// Method is "campaign" (the campaign's split) or "fractions".
	Method    string    `json:"method"`
	Fractions []float64 `json:"fractions,omitempty"`
	GapDays   float64   `json:"gap_days"`
	Train     []int     `json:"train_years"`
	Validate  []int     `json:"validate_years"`
	Test      []int     `json:"test_years"`
	// Unused are input years in no set; GapDropped the samples dropped
	// at set boundaries.
	Unused     []int `json:"unused_years"`
	GapDropped int   `json:"gap_dropped_samples"`
}

// SetInfo summarises one set.
type SetInfo struct {
	Set            string    `json:"set"`
	Samples        int       `json:"samples"`
	Shards         int       `json:"shards"`
	Bytes          int64     `json:"bytes"`
	ClassPixels    []int64   `json:"class_pixels"`
	ClassFrequency []float64 `json:"class_frequency"`
}

// ShardInfo describes one shard file.
type ShardInfo struct {
	File    string `json:"file"` // name inside the stage's output directory
	Set     string `json:"set"`
	Samples int    `json:"samples"`
	Bytes   int64  `json:"bytes"`  // file size
	BLAKE3  string `json:"blake3"` // hex digest of the file
	// ClassPixels counts mask pixels per class; pixels whose value is no
	// class (fill) are in Unlabelled.
	ClassPixels    []int64   `json:"class_pixels"`
	ClassFrequency []float64 `json:"class_frequency"`
	Unlabelled     int64     `json:"unlabelled_pixels"`
}

// Ranks assigns shards to data-parallel ranks.
type Ranks struct {
	Count        int `json:"count"`
	RanksPerNode int `json:"ranks_per_node"`
	Nodes        int `json:"nodes"`
	// Train, Validate and Test have one entry per rank (rank order).
	Train    []RankShards `json:"train"`
	Validate []RankShards `json:"validate"`
	Test     []RankShards `json:"test"`
	// NodeBytes is what each node stages to node-local storage: the
	// shards of all its ranks.
	NodeBytes []NodeBytes `json:"node_bytes"`
}

// RankShards is the work of one rank in one set.
type RankShards struct {
	Rank    int      `json:"rank"`
	Node    int      `json:"node"`
	Shards  []string `json:"shards"`
	Samples int      `json:"samples"`
	Bytes   int64    `json:"bytes"`
}

// NodeBytes are the bytes one node stages.
type NodeBytes struct {
	Node          int   `json:"node"`
	Ranks         []int `json:"ranks"`
	TrainBytes    int64 `json:"train_bytes"`
	ValidateBytes int64 `json:"validate_bytes"`
	TestBytes     int64 `json:"test_bytes"`
	Bytes         int64 `json:"bytes"`
}

// ReadManifest reads a manifest.json.
func ReadManifest(path string) (*Manifest, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var m Manifest
	if err := json.Unmarshal(data, &m); err != nil {
		return nil, fmt.Errorf("read %s: %v", path, err)
	}
	if m.Format != ManifestFormat {
		return nil, fmt.Errorf("read %s: manifest format %d, this squall reads %d", path, m.Format, ManifestFormat)
	}
	return &m, nil
}

func writeManifest(path string, m *Manifest) error {
	data, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return err
	}
	return os.WriteFile(path, append(data, '\n'), 0o644)
}
