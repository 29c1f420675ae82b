package catalog

import (
	"math"
	"testing"
)

// TestSaffirSimpsonBoundaries checks the category boundaries of the NWS/NHC
// public information statement of 1 March 2012 (reference-values.md,
// confirmed): half-open intervals in knots, 1 kt = 1852/3600 m/s exactly.
func TestSaffirSimpsonBoundaries(t *testing.T) {
	// Lowest wind of each category in knots (NHC 2012), and the m/s lower
	// bounds derived from it in reference-values.md (rounded to 0.01).
	cases := []struct {
		kt     float64
		cat    int
		msLow  float64
		stage  string
		prevSt string
	}{
		{64, 1, 32.92, "hurricane", "tropical_storm"}, // NHC 2012
		{83, 2, 42.70, "hurricane", "hurricane"},      // NHC 2012
		{96, 3, 49.39, "hurricane", "hurricane"},      // NHC 2012
		{113, 4, 58.13, "hurricane", "hurricane"},     // NHC 2012
		{137, 5, 70.48, "hurricane", "hurricane"},     // NHC 2012
	}
	for _, c := range cases {
		ms := c.kt * 1852 / 3600
		if got := SaffirSimpson(ms); got != c.cat {
			t.Errorf("%g kt (%.6f m/s): category %d, want %d", c.kt, ms, got, c.cat)
		}
		// Just below the bound (one ulp) belongs to the category below:
		// the interval is closed at its lower end only.
		below := math.Nextafter(ms, 0)
		if got := SaffirSimpson(below); got != c.cat-1 {
			t.Errorf("just below %g kt: category %d, want %d", c.kt, got, c.cat-1)
		}
		// The top of the category below, in whole knots (e.g. 82 kt is
		// still category 1): NHC 2012 ranges 64-82, 83-95, 96-112, 113-136.
		if got := SaffirSimpson((c.kt - 1) * 1852 / 3600); got != c.cat-1 {
			t.Errorf("%g kt: category %d, want %d", c.kt-1, got, c.cat-1)
		}
		if math.Abs(ms-c.msLow) > 0.005 { // reference-values.md rounds to 0.01 m/s
			t.Errorf("%g kt = %.4f m/s, reference-values.md says %.2f", c.kt, ms, c.msLow)
		}
		if StormStage(ms) != c.stage || StormStage(below) != c.prevSt {
			t.Errorf("%g kt: stage %q / below %q, want %q / %q", c.kt, StormStage(ms), StormStage(below), c.stage, c.prevSt)
		}
	}
	// Tropical storm 34-63 kt, tropical depression <= 33 kt (NWS,
	// reference-values.md); 34 kt = 17.49 m/s (derived there).
	ts := 34.0 * 1852 / 3600
	if math.Abs(ts-17.49) > 0.005 {
		t.Errorf("34 kt = %.4f m/s, want 17.49", ts)
	}
	if StormStage(ts) != "tropical_storm" || StormStage(33.0*1852/3600) != "tropical_depression" || StormStage(63.0*1852/3600) != "tropical_storm" {
		t.Errorf("tropical storm bounds wrong")
	}
	if SaffirSimpson(63.999*KnotInMS) != 0 || SaffirSimpson(200*KnotInMS) != 5 || SaffirSimpson(math.NaN()) != 0 {
		t.Errorf("category outside the scale wrong")
	}
	if StormStage(math.NaN()) != "" {
		t.Errorf("NaN wind should have no stage")
	}
	// The knot is 1852/3600 m/s by definition (international nautical mile
	// 1852 m, per hour).
	if float64(KnotInMS) != 0.5144444444444445 {
		t.Errorf("KnotInMS = %.17g", KnotInMS)
	}
}

func TestTropicalStormBoundIsNotTruncated(t *testing.T) {
	// 33.9 kt is a tropical depression (NWS: <= 33 kt means below 34 in
	// half-open intervals); a truncated bound of 17 m/s would call it a
	// storm (33.9 kt = 17.44 m/s).
	if got := StormStage(33.9 * 1852 / 3600); got != "tropical_depression" {
		t.Errorf("33.9 kt: %q, want tropical_depression", got)
	}
}
