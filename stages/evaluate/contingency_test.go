package evaluate

import (
	"math"
	"testing"
)

// finley is Finley's (1884) tornado forecast table as given on the
// WWRP/WGNE Joint Working Group on Forecast Verification Research pages
// (reference-values.md, confirmed): a = 28, b = 72, c = 23, d = 2680.
var finley = Table{Hits: 28, FalseAlarms: 72, Misses: 23, CorrectNegatives: 2680}

func TestFinley(t *testing.T) {
	// Each value is printed in reference-values.md to 7 decimals (the odds
	// ratio to 6); the tolerance is half a unit in that last digit, so the
	// test checks every digit given.
	const half7 = 0.5e-7
	const half6 = 0.5e-6
	cases := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"n", finley.N(), 2803, 0},                            // Finley table total (reference-values.md)
		{"proportion correct", finley.PC(), 0.9661077, half7}, // reference-values.md, Finley
		{"CSI", finley.CSI(), 0.2276423, half7},               // reference-values.md, Finley
		{"POD", finley.POD(), 0.5490196, half7},               // reference-values.md, Finley
		{"FAR", finley.FAR(), 0.72, 0},                        // reference-values.md, Finley: 72/100 exactly
		{"POFD", finley.POFD(), 0.0261628, half7},             // reference-values.md, Finley
		{"frequency bias", finley.Bias(), 1.9607843, half7},   // reference-values.md, Finley
		{"Heidke", finley.Heidke(), 0.3553249, half7},         // reference-values.md, Finley
		{"Peirce", finley.Peirce(), 0.5228568, half7},         // reference-values.md, Finley
		{"Gilbert", finley.Gilbert(), 0.2160456, half7},       // reference-values.md, Finley
		{"odds ratio", finley.OddsRatio(), 45.314010, half6},  // reference-values.md, Finley
		// "Always no" forecast of the same observations: a=0, b=0,
		// c=a+c=51, d=b+d=2752 (reference-values.md, Finley).
		{"always-no PC", Table{Misses: 51, CorrectNegatives: 2752}.PC(), 0.9818052, half7},
	}
	for _, c := range cases {
		if math.Abs(c.got-c.want) > c.tol {
			t.Errorf("%s = %.10g, want %.10g (tolerance %g)", c.name, c.got, c.want, c.tol)
		}
	}
	// Scores() must carry the same numbers as the methods.
	s := finley.Scores()
	if s.Gilbert != finley.Gilbert() || s.OddsRatio != finley.OddsRatio() || s.PC != finley.PC() {
		t.Errorf("Scores() disagrees with the methods: %+v", s)
	}
}

func TestUndefinedScoresAreNaN(t *testing.T) {
	var empty Table
	for name, v := range map[string]float64{
		"POD": empty.POD(), "FAR": empty.FAR(), "CSI": empty.CSI(), "Bias": empty.Bias(),
		"PC": empty.PC(), "Heidke": empty.Heidke(), "Gilbert": empty.Gilbert(), "OddsRatio": empty.OddsRatio(),
	} {
		if !math.IsNaN(v) {
			t.Errorf("%s of an empty table = %g, want NaN (undefined, not a score)", name, v)
		}
	}
	// A perfect forecast: every score at its best value (definitions in
	// reference-values.md: POD 1, FAR 0, CSI 1, bias 1, Heidke 1, Peirce 1).
	p := Table{Hits: 5, CorrectNegatives: 95}
	if p.POD() != 1 || p.FAR() != 0 || p.CSI() != 1 || p.Bias() != 1 || p.Heidke() != 1 || p.Peirce() != 1 {
		t.Errorf("perfect forecast scores wrong: %+v", p.Scores())
	}
}
