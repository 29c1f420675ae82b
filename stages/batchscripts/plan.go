package batchscripts

import (
	"fmt"
	"math"
	"strings"
)

// PlanInput is what the cost and staging plan is computed from.
type PlanInput struct {
	Site                string
	Nodes               int
	AcceleratorsPerNode int
	Samples             int64   // training samples per epoch
	SampleBytes         float64 // bytes of one sample as stored
	FLOPPerSample       float64 // floating-point operations of one training step per sample
	PeakFLOPS           float64 // one accelerator's peak rate, FLOP/s
	Efficiency          float64 // fraction of peak one accelerator sustains
	ScalingEfficiency   float64 // fraction kept when going from one to all accelerators
	Epochs              float64
	SegmentSeconds      float64 // usable training time per job segment
	StageBytesPerNode   []int64 // bytes each node stages
	ScratchBytes        int64   // node-local capacity
	ScratchFill         float64 // fraction of it we allow ourselves
}

// Plan is the cost and staging plan written to plan.json and plan.txt.
type Plan struct {
	Site                string  `json:"site"`
	Nodes               int     `json:"nodes"`
	AcceleratorsPerNode int     `json:"accelerators_per_node"`
	Ranks               int     `json:"ranks"`
	Samples             int64   `json:"samples_per_epoch"`
	SampleBytes         float64 `json:"sample_bytes"`
	FLOPPerSample       float64 `json:"flop_per_sample"`
	PeakFLOPS           float64 `json:"accelerator_peak_flops"`
	Efficiency          float64 `json:"efficiency"`
	ScalingEfficiency   float64 `json:"scaling_efficiency"`
	SustainedFLOPS      float64 `json:"sustained_flops"`
	SamplesPerSecond    float64 `json:"samples_per_second"`
	Epochs              float64 `json:"epochs"`
	HoursPerEpoch       float64 `json:"hours_per_epoch"`
	TrainingHours       float64 `json:"training_hours"`
	NodeHours           float64 `json:"node_hours"`
	SegmentHours        float64 `json:"segment_hours"`
	Segments            int     `json:"segments"`
	StageBytesPerNode   []int64 `json:"stage_bytes_per_node"`
	MaxStageBytes       int64   `json:"max_stage_bytes"`
	ScratchBytes        int64   `json:"scratch_bytes"`
	ScratchUsable       int64   `json:"scratch_usable_bytes"`
	Fits                bool    `json:"fits"`
	// MinNodes is the fewest nodes whose node-local storage holds the
	// training data at the allowed fill (0 when nothing is staged).
	MinNodes int `json:"min_nodes_for_staging"`
}

// ComputePlan derives throughput and cost:
//
//	sustained FLOP/s = ranks x peak x efficiency x scaling efficiency
//	samples/s        = sustained FLOP/s / FLOP per sample
//	hours per epoch  = samples / (samples/s) / 3600
//	node-hours       = nodes x epochs x hours per epoch
//	segments         = ceil(training hours / usable hours per segment)
//
// and staging: the largest per-node share against the node-local capacity
// times the allowed fill.
func ComputePlan(in PlanInput) Plan {
	p := Plan{Site: in.Site, Nodes: in.Nodes, AcceleratorsPerNode: in.AcceleratorsPerNode,
		Ranks: in.Nodes * in.AcceleratorsPerNode, Samples: in.Samples, SampleBytes: in.SampleBytes,
		FLOPPerSample: in.FLOPPerSample, PeakFLOPS: in.PeakFLOPS, Efficiency: in.Efficiency,
		ScalingEfficiency: in.ScalingEfficiency, Epochs: in.Epochs,
		StageBytesPerNode: in.StageBytesPerNode, ScratchBytes: in.ScratchBytes}
	p.SustainedFLOPS = float64(p.Ranks) * in.PeakFLOPS * in.Efficiency * in.ScalingEfficiency
	if in.FLOPPerSample > 0 {
		p.SamplesPerSecond = p.SustainedFLOPS / in.FLOPPerSample
	}
	if p.SamplesPerSecond > 0 {
		p.HoursPerEpoch = float64(in.Samples) / p.SamplesPerSecond / 3600
	}
	p.TrainingHours = p.HoursPerEpoch * in.Epochs
	p.NodeHours = p.TrainingHours * float64(in.Nodes)
	p.SegmentHours = in.SegmentSeconds / 3600
	if p.SegmentHours > 0 {
		p.Segments = int(math.Ceil(p.TrainingHours / p.SegmentHours))
	}
	if p.Segments < 1 {
		p.Segments = 1
	}
	var total int64
	for _, b := range in.StageBytesPerNode {
		total += b
		if b > p.MaxStageBytes {
			p.MaxStageBytes = b
		}
	}
	p.ScratchUsable = int64(float64(in.ScratchBytes) * in.ScratchFill)
	p.Fits = p.MaxStageBytes <= p.ScratchUsable
	if total > 0 && p.ScratchUsable > 0 {
		p.MinNodes = int((total + p.ScratchUsable - 1) / p.ScratchUsable)
	}
	return p
}

// Text is the readable form of the plan.
func (p Plan) Text() string {
	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	w("Cost and staging plan (an estimate from the settings below, not a measurement)")
	w("")
	w("site                    %s", p.Site)
	w("nodes x accelerators    %d x %d = %d ranks", p.Nodes, p.AcceleratorsPerNode, p.Ranks)
	w("samples per epoch       %d (%.4g MB each)", p.Samples, p.SampleBytes/1e6)
	w("FLOP per sample step    %.4g TFLOP", p.FLOPPerSample/1e12)
	if p.PeakFLOPS <= 0 {
		// Without a peak rate every time figure would print as 0 hours,
		// which reads as "free" rather than "unknown".
		w("accelerator peak        unknown: the site profile gives no node.accelerator_peak_tflops")
		w("throughput and hours    cannot be estimated without it")
		w("epochs                  %g", p.Epochs)
	} else {
		w("accelerator peak        %.4g TFLOP/s", p.PeakFLOPS/1e12)
		w("efficiency              %.3g of peak per accelerator, %.3g scaling", p.Efficiency, p.ScalingEfficiency)
		w("sustained               %.4g FLOP/s", p.SustainedFLOPS)
		w("throughput              %.6g samples/s", p.SamplesPerSecond)
		w("hours per epoch         %.4g", p.HoursPerEpoch)
		w("epochs                  %g", p.Epochs)
		w("training hours          %.4g", p.TrainingHours)
		w("node-hours              %.4g", p.NodeHours)
		w("segments                %d of up to %.4g h of training each", p.Segments, p.SegmentHours)
	}
	w("")
	w("staging: largest node share %s of %s usable node-local storage (%s total)",
		bytesText(p.MaxStageBytes), bytesText(p.ScratchUsable), bytesText(p.ScratchBytes))
	if p.Fits {
		w("staging fits")
	} else {
		w("staging does NOT fit: at least %d nodes are needed", p.MinNodes)
	}
	return b.String()
}

func bytesText(n int64) string {
	f := float64(n)
	for _, u := range []struct {
		s string
		m float64
	}{{"TB", 1e12}, {"GB", 1e9}, {"MB", 1e6}, {"kB", 1e3}} {
		if f >= u.m {
			return fmt.Sprintf("%.4g %s", f/u.m, u.s)
		}
	}
	return fmt.Sprintf("%d B", n)
}
