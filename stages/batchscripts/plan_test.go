package batchscripts

import (
	"math"
	"testing"
)

// The numbers below are facts of the trade quoted in the project's brief,
// as published at a large-scale training presentation: a sample of
// 1152 x 768 x 16 float32 values is 56.6 MB; a training step costs 14.4
// TFLOP per sample; 1.13e18 FLOP/s reached on 27,360 accelerators of 125
// TFLOP/s half-precision peak is about 33% of peak per accelerator and
// about 78,500 samples/s; 6 accelerators and 800 GB of node-local storage
// per node.
const (
	factSampleBytes   = 56.6e6
	factFLOPPerSample = 14.4e12
	factSustained     = 1.13e18
	factAccelerators  = 27360
	factPeak          = 125e12
	factEfficiency    = 0.33
	factSamplesPerSec = 78500
	factAccPerNode    = 6
	factScratch       = 800e9

	// relTolQuoted: the quoted figures carry three significant digits.
	relTolQuoted = 0.005
)

func near(got, want, rel float64) bool { return math.Abs(got-want) <= rel*math.Abs(want) }

func TestPlanAgainstFactsOfTheTrade(t *testing.T) {
	sample := SampleBytes(1152, 768, 16, 4)
	if !near(sample, factSampleBytes, relTolQuoted) {
		t.Errorf("sample bytes %.0f, want about %.0f", sample, factSampleBytes)
	}
	nodes := factAccelerators / factAccPerNode // 4560 nodes
	p := ComputePlan(PlanInput{
		Nodes: nodes, AcceleratorsPerNode: factAccPerNode, Samples: 1_000_000, SampleBytes: sample,
		FLOPPerSample: factFLOPPerSample, PeakFLOPS: factPeak, Efficiency: factEfficiency,
		ScalingEfficiency: 1, Epochs: 1, SegmentSeconds: 3600,
		StageBytesPerNode: []int64{700e9}, ScratchBytes: factScratch, ScratchFill: 0.9,
	})
	if p.Ranks != factAccelerators {
		t.Errorf("ranks %d, want %d", p.Ranks, factAccelerators)
	}
	if !near(p.SustainedFLOPS, factSustained, relTolQuoted) {
		t.Errorf("sustained %.4g FLOP/s, want about %.4g", p.SustainedFLOPS, factSustained)
	}
	if !near(p.SamplesPerSecond, factSamplesPerSec, relTolQuoted) {
		t.Errorf("samples/s %.0f, want about %d", p.SamplesPerSecond, factSamplesPerSec)
	}
	// The other direction: the efficiency implied by the quoted rate.
	implied := factSustained / (factAccelerators * factPeak)
	if !near(implied, factEfficiency, 0.01) {
		t.Errorf("implied efficiency %.4f, want about %.2f", implied, factEfficiency)
	}
	// Derived: hours per epoch = samples / rate / 3600.
	if !near(p.HoursPerEpoch, 1e6/p.SamplesPerSecond/3600, 1e-12) {
		t.Errorf("hours per epoch %.6g", p.HoursPerEpoch)
	}
	if !near(p.NodeHours, p.HoursPerEpoch*float64(nodes), 1e-12) {
		t.Errorf("node-hours %.6g", p.NodeHours)
	}
	// 700 GB on an 800 GB node at 90% fill (720 GB usable) fits; 750 GB does not.
	if !p.Fits {
		t.Errorf("700 GB should fit in 90%% of 800 GB")
	}
	p2 := ComputePlan(PlanInput{Nodes: 2, AcceleratorsPerNode: 6, StageBytesPerNode: []int64{750e9, 750e9},
		ScratchBytes: factScratch, ScratchFill: 0.9, Epochs: 1})
	if p2.Fits || p2.MinNodes != 3 { // derived: 1500 GB / 720 GB -> 3 nodes
		t.Errorf("750 GB per node: fits=%v min nodes %d, want false and 3", p2.Fits, p2.MinNodes)
	}
}

func TestPlanSegments(t *testing.T) {
	// Derived: 10 h of training in segments of 3.5 usable hours -> 3 segments.
	p := ComputePlan(PlanInput{Nodes: 1, AcceleratorsPerNode: 1, Samples: 36000, SampleBytes: 1,
		FLOPPerSample: 1, PeakFLOPS: 1, Efficiency: 1, ScalingEfficiency: 1, Epochs: 1, SegmentSeconds: 3.5 * 3600})
	if p.TrainingHours != 10 || p.Segments != 3 {
		t.Errorf("training %.3g h in %d segments, want 10 h in 3", p.TrainingHours, p.Segments)
	}
}
