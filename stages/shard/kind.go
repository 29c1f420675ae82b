package shard

import (
	"context"
	"fmt"
	"math/rand/v2"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/pipeline"
)

// Kind is the shard stage kind (register shard.Kind{}).
type Kind struct{}

var (
	_ pipeline.Kind        = Kind{}
	_ pipeline.Checker     = Kind{}
	_ pipeline.SectionUser = Kind{}
)

// Name implements pipeline.Kind.
func (Kind) Name() string { return "shard" }

// Version implements pipeline.Kind.
func (Kind) Version() int { return 1 }

// Doc implements pipeline.Kind.
func (Kind) Doc() string {
	return "Splits samples by whole years into train/validate/test (the campaign's split or fractions, with an optional " +
		"gap at set boundaries), writes fixed-size netCDF-4 shards of channels x lat x lon plus the class mask (one sample " +
		"per chunk), and " + ManifestFile + ": shards with bytes and BLAKE3 digests, class pixel frequencies, suggested " +
		"loss weights and an assignment of shards to data-parallel ranks with the bytes each node stages."
}

// Fan implements pipeline.Kind.
func (Kind) Fan() pipeline.Fan { return pipeline.FanCampaign }

// CampaignSections implements pipeline.SectionUser.
func (Kind) CampaignSections() []string { return []string{pipeline.SectionSplit} }

// Settings implements pipeline.Kind.
func (Kind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "samples_per_shard", Type: pipeline.TypeInt, Default: 128, Min: pipeline.Bound(1),
			Doc: "samples per shard file (the last shard of a set may hold fewer)"},
		{Name: "fractions", Type: pipeline.TypeFloats, Default: []float64{}, Min: pipeline.Bound(0), Max: pipeline.Bound(1),
			Doc: "train, validate and test fractions of the years (contiguous, earliest years train); empty: the campaign's split"},
		{Name: "gap_days", Type: pipeline.TypeFloat, Unit: "day", Default: -1.0, Min: pipeline.Bound(-1), Max: pipeline.Bound(360),
			Doc: "samples within this many days after a boundary between two sets are dropped; -1: the campaign's split.gap_days"},
		{Name: "ranks", Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(1), Max: pipeline.Bound(1 << 20),
			Doc: "data-parallel ranks to assign shards to"},
		{Name: "ranks_per_node", Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(1), Max: pipeline.Bound(1024),
			Doc: "ranks on one node, for the bytes each node stages"},
		{Name: "effective_number_beta", Type: pipeline.TypeFloat, Default: 0.9999, Min: pipeline.Bound(0), Max: pipeline.Bound(0.999999999999),
			Doc: "beta of the effective-number loss weights (Cui et al. 2019 use 0.9 to 0.9999); with pixel counts in the millions values near 1 are needed to differ from uniform"},
		{Name: "shuffle_seed", Type: pipeline.TypeInt, Default: 0, Min: pipeline.Bound(0),
			Doc: "0 keeps samples in time order within a set; another value shuffles them (deterministically) before cutting shards"},
		{Name: "deflate", Type: pipeline.TypeInt, Default: 0, Min: pipeline.Bound(0), Max: pipeline.Bound(9),
			Doc: "zlib level of the shards; 0 (none) gives the fastest random reads"},
		{Name: "mask_member", Type: pipeline.TypeString, Default: "",
			Doc: "which sweep member of a swept label stage supplies the masks (empty: there must be one)"},
	}
}

// CheckStage implements pipeline.Checker.
func (Kind) CheckStage(stage string, s pipeline.Values, c *pipeline.CampaignInfo) error {
	fr := s.Floats("fractions")
	if len(fr) > 0 {
		if err := checkFractions(fr); err != nil {
			return fmt.Errorf("stage %q: %w", stage, err)
		}
	} else if len(c.Split.Train) == 0 {
		return fmt.Errorf("stage %q: no training years: the campaign has no split.train and the fractions setting is empty (hint: add one of them)", stage)
	}
	if g := s.Float("gap_days"); g < 0 && c.Split.GapDays > 360 {
		return fmt.Errorf("stage %q: split.gap_days %g is longer than a year; shard gaps are at most 360 days", stage, c.Split.GapDays)
	}
	return nil
}

// Run implements pipeline.Kind.
func (k Kind) Run(ctx context.Context, job *pipeline.Job) error {
	s := job.Settings
	per := s.Int("samples_per_shard")
	fr := s.Floats("fractions")
	gap := s.Float("gap_days")
	if gap < 0 {
		gap = job.Campaign.Split.GapDays
	}
	nranks, rpn := s.Int("ranks"), s.Int("ranks_per_node")
	src, err := openSources(job, s.String("mask_member"))
	if err != nil {
		return err
	}
	defer src.close()
	roles, err := AssignYears(src.years(), job.Campaign.Split, fr)
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	m := &Manifest{Format: ManifestFormat, Kind: k.Name(), KindVersion: k.Version(), Encoding: src.encoding,
		Channels: src.channels, NLat: len(src.lat), NLon: len(src.lon), Classes: append([]string{}, src.classes...),
		BytesPerSample: src.bytesPerSample()}
	// Empty lists, not null, so readers need no special case.
	m.Split = SplitInfo{Method: "campaign", GapDays: gap, Train: []int{}, Validate: []int{}, Test: []int{}, Unused: []int{}}
	m.Shards = []ShardInfo{}
	if len(fr) > 0 {
		m.Split.Method, m.Split.Fractions = "fractions", fr
	}
	for _, y := range src.years() {
		switch roles[y] {
		case Train:
			m.Split.Train = append(m.Split.Train, y)
		case Validate:
			m.Split.Validate = append(m.Split.Validate, y)
		case Test:
			m.Split.Test = append(m.Split.Test, y)
		default:
			m.Split.Unused = append(m.Split.Unused, y)
		}
	}
	if len(m.Split.Train) == 0 {
		return fmt.Errorf("shard: no input year is a training year (input years %v; split %+v) (hint: the inputs must cover split.train)", src.years(), job.Campaign.Split)
	}
	// Samples per set, with the gap applied.
	bySet := map[string][]sample{}
	for _, smp := range src.samples {
		role := roles[smp.year]
		if role == "" {
			continue
		}
		if InGap(roles, smp.year, smp.dayOfYear, gap) {
			m.Split.GapDropped++
			continue
		}
		bySet[role] = append(bySet[role], smp)
	}
	if seed := s.Int("shuffle_seed"); seed != 0 {
		for i, set := range Sets {
			rng := rand.New(rand.NewPCG(uint64(seed), uint64(i)))
			xs := bySet[set]
			rng.Shuffle(len(xs), func(a, b int) { xs[a], xs[b] = xs[b], xs[a] })
		}
	}
	nc := len(src.classes)
	m.ClassPixels = make([]int64, nc)
	deflate := s.Int("deflate")
	for _, set := range Sets {
		xs := bySet[set]
		info := SetInfo{Set: set, Samples: len(xs), ClassPixels: make([]int64, nc)}
		for i := 0; i*per < len(xs); i++ {
			if err := ctx.Err(); err != nil {
				return err
			}
			part := xs[i*per : min((i+1)*per, len(xs))]
			name := fmt.Sprintf("%s-%04d.nc", set, i)
			sh, err := src.writeShard(filepath.Join(job.OutDir, name), set, i, part, deflate, k)
			if err != nil {
				return err
			}
			sh.File = name
			m.Shards = append(m.Shards, sh)
			info.Shards++
			info.Bytes += sh.Bytes
			for c := range sh.ClassPixels {
				info.ClassPixels[c] += sh.ClassPixels[c]
			}
		}
		info.ClassFrequency = Frequencies(info.ClassPixels)
		for c := range info.ClassPixels {
			m.ClassPixels[c] += info.ClassPixels[c]
		}
		m.Sets = append(m.Sets, info)
		job.Logf("shard: %s: %d samples in %d shards, %d bytes", set, info.Samples, info.Shards, info.Bytes)
	}
	m.ClassFrequency = Frequencies(m.ClassPixels)
	if nc > 0 {
		lw := SuggestWeights(m.Sets[0].ClassPixels, s.Float("effective_number_beta"))
		m.LossWeights = &lw
		for c, n := range m.Sets[0].ClassPixels {
			if n == 0 {
				job.Logf("shard: class %q has no pixel in the training set; its loss weights are 0", src.classes[c])
			}
		}
	}
	m.Ranks = assignRanks(m.Shards, nranks, rpn)
	for _, r := range m.Ranks.Train {
		if len(r.Shards) == 0 {
			job.Logf("shard: rank %d has no training shard (%d shards for %d ranks); lower samples_per_shard or ranks", r.Rank, m.Sets[0].Shards, nranks)
			break
		}
	}
	job.Logf("shard: split %s: train %v, validate %v, test %v, unused %v, %d samples dropped in gaps of %g days",
		m.Split.Method, m.Split.Train, m.Split.Validate, m.Split.Test, m.Split.Unused, m.Split.GapDropped, gap)
	return writeManifest(filepath.Join(job.OutDir, ManifestFile), m)
}

// assignRanks balances each set's shards over the ranks (RankShards) and
// adds up what each node stages.
func assignRanks(shards []ShardInfo, n, perNode int) Ranks {
	r := Ranks{Count: n, RanksPerNode: perNode, Nodes: (n + perNode - 1) / perNode}
	nodeBytes := make([]NodeBytes, r.Nodes)
	for i := range nodeBytes {
		nodeBytes[i].Node = i
		for rank := i * perNode; rank < min((i+1)*perNode, n); rank++ {
			nodeBytes[i].Ranks = append(nodeBytes[i].Ranks, rank)
		}
	}
	for _, set := range Sets {
		var idx []int
		var bytes []int64
		for i, sh := range shards {
			if sh.Set == set {
				idx = append(idx, i)
				bytes = append(bytes, sh.Bytes)
			}
		}
		assign := BalanceShards(bytes, n)
		out := make([]RankShards, n)
		for rank, list := range assign {
			rs := RankShards{Rank: rank, Node: rank / perNode, Shards: []string{}}
			for _, j := range list {
				sh := shards[idx[j]]
				rs.Shards = append(rs.Shards, sh.File)
				rs.Samples += sh.Samples
				rs.Bytes += sh.Bytes
			}
			out[rank] = rs
			nb := &nodeBytes[rs.Node]
			switch set {
			case Train:
				nb.TrainBytes += rs.Bytes
			case Validate:
				nb.ValidateBytes += rs.Bytes
			case Test:
				nb.TestBytes += rs.Bytes
			}
			nb.Bytes += rs.Bytes
		}
		switch set {
		case Train:
			r.Train = out
		case Validate:
			r.Validate = out
		case Test:
			r.Test = out
		}
	}
	r.NodeBytes = nodeBytes
	return r
}

// parseYear reads a block label as a year.
func parseYear(block string) (int, error) {
	y, err := strconv.Atoi(strings.TrimSpace(block))
	if err != nil {
		return 0, fmt.Errorf("shard: block %q is not a year (hint: shards split by whole years)", block)
	}
	return y, nil
}
