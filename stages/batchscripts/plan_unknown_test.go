package batchscripts

import (
	"strings"
	"testing"
)

// A profile without an accelerator peak must not print "0 hours": the
// plan says the time cannot be estimated.
func TestPlanTextWithoutPeakSaysUnknown(t *testing.T) {
	txt := Plan{Site: "local", Nodes: 1, AcceleratorsPerNode: 1, Ranks: 1, Samples: 10, Epochs: 3}.Text()
	if !strings.Contains(txt, "unknown") || strings.Contains(txt, "hours per epoch") {
		t.Fatalf("plan without a peak:\n%s", txt)
	}
	txt = Plan{Site: "gpu", PeakFLOPS: 125e12, HoursPerEpoch: 2}.Text()
	if !strings.Contains(txt, "hours per epoch         2") {
		t.Fatalf("plan with a peak:\n%s", txt)
	}
}
