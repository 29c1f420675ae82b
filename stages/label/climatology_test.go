package label

import (
	"math"
	"testing"
)

func TestHistogramPercentile(t *testing.T) {
	// Values 0, 1, ..., 99 in one cell, 5-wide bins. numpy's linear
	// percentile: position (n-1)p/100 = 84.15 for p = 85, so 84.15 (derived).
	// The histogram spreads each bin's 5 values at lo + 5(i+0.5)/5, i.e.
	// 0.5 above the integers: 84.65, within one bin width.
	h := NewHistogram(2, 400, 5)
	for v := range 100 {
		if err := h.Add([]float64{float64(v), math.NaN()}); err != nil {
			t.Fatal(err)
		}
	}
	got := h.Percentile(85, 1)
	if math.Abs(got[0]-84.65) > 1e-9 {
		t.Errorf("85th percentile %.4f, want 84.65 (exact 84.15)", got[0])
	}
	if !math.IsNaN(got[1]) || h.Count(1) != 0 {
		t.Errorf("cell of NaNs: %g from %d values, want NaN from 0", got[1], h.Count(1))
	}
	if p := h.Percentile(85, 101); !math.IsNaN(p[0]) {
		t.Errorf("min count 101 with 100 values gave %g", p[0])
	}
	// Values beyond the range count in the top bin.
	h2 := NewHistogram(1, 4, 5)
	h2.Add([]float64{1000})
	if p := h2.Percentile(50, 1); p[0] != 17.5 {
		t.Errorf("overflow value placed at %g, want the top bin's middle 17.5", p[0])
	}
}
