package evaluate

import "math"

// Table is the 2x2 verification table of yes/no events. The fields are
// float64 so that the same scores serve counts and area-weighted sums.
//
//	                 reference yes   reference no
//	candidate yes    Hits (a)        FalseAlarms (b)
//	candidate no     Misses (c)      CorrectNegatives (d)
//
// Every score returns NaN when its denominator is zero: a score that is
// undefined must not read as a perfect or a useless forecast.
type Table struct {
	Hits             float64 `json:"hits"`
	FalseAlarms      float64 `json:"false_alarms"`
	Misses           float64 `json:"misses"`
	CorrectNegatives float64 `json:"correct_negatives"`
}

// Add accumulates another table into t.
func (t *Table) Add(u Table) {
	t.Hits += u.Hits
	t.FalseAlarms += u.FalseAlarms
	t.Misses += u.Misses
	t.CorrectNegatives += u.CorrectNegatives
}

// N is the total a + b + c + d.
func (t Table) N() float64 { return t.Hits + t.FalseAlarms + t.Misses + t.CorrectNegatives }

func ratio(num, den float64) float64 {
	if den == 0 {
		return math.NaN()
	}
	return num / den
}

// POD is the probability of detection (hit rate), a / (a + c).
func (t Table) POD() float64 { return ratio(t.Hits, t.Hits+t.Misses) }

// FAR is the false alarm ratio, b / (a + b).
func (t Table) FAR() float64 { return ratio(t.FalseAlarms, t.Hits+t.FalseAlarms) }

// POFD is the probability of false detection (false alarm rate),
// b / (b + d).
func (t Table) POFD() float64 { return ratio(t.FalseAlarms, t.FalseAlarms+t.CorrectNegatives) }

// CSI is the critical success index (threat score), a / (a + b + c).
func (t Table) CSI() float64 { return ratio(t.Hits, t.Hits+t.FalseAlarms+t.Misses) }

// Bias is the frequency bias, (a + b) / (a + c).
func (t Table) Bias() float64 { return ratio(t.Hits+t.FalseAlarms, t.Hits+t.Misses) }

// PC is the proportion correct, (a + d) / n.
func (t Table) PC() float64 { return ratio(t.Hits+t.CorrectNegatives, t.N()) }

// Heidke is the Heidke skill score,
// 2(ad - bc) / [(a + c)(c + d) + (a + b)(b + d)].
func (t Table) Heidke() float64 {
	a, b, c, d := t.Hits, t.FalseAlarms, t.Misses, t.CorrectNegatives
	return ratio(2*(a*d-b*c), (a+c)*(c+d)+(a+b)*(b+d))
}

// Peirce is the Peirce skill score (true skill statistic),
// a/(a + c) - b/(b + d).
func (t Table) Peirce() float64 { return t.POD() - t.POFD() }

// Gilbert is the Gilbert skill score (equitable threat score),
// (a - ar) / (a + b + c - ar) with ar = (a + b)(a + c) / n, the hits
// expected by chance.
func (t Table) Gilbert() float64 {
	a, b, c := t.Hits, t.FalseAlarms, t.Misses
	n := t.N()
	if n == 0 {
		return math.NaN()
	}
	ar := (a + b) * (a + c) / n
	return ratio(a-ar, a+b+c-ar)
}

// OddsRatio is ad / (bc).
func (t Table) OddsRatio() float64 {
	return ratio(t.Hits*t.CorrectNegatives, t.FalseAlarms*t.Misses)
}

// Scores holds every score of a Table, for tables and JSON. Undefined
// scores are NaN here and null in JSON.
type Scores struct {
	POD       float64
	FAR       float64
	POFD      float64
	CSI       float64
	Bias      float64
	PC        float64
	Heidke    float64
	Peirce    float64
	Gilbert   float64
	OddsRatio float64
}

// Scores computes every score of t.
func (t Table) Scores() Scores {
	return Scores{
		POD: t.POD(), FAR: t.FAR(), POFD: t.POFD(), CSI: t.CSI(), Bias: t.Bias(),
		PC: t.PC(), Heidke: t.Heidke(), Peirce: t.Peirce(), Gilbert: t.Gilbert(),
		OddsRatio: t.OddsRatio(),
	}
}

// scoreNames lists the columns written for a Scores, in order.
var scoreNames = []string{"pod", "far", "pofd", "csi", "frequency_bias", "proportion_correct",
	"heidke", "peirce", "gilbert", "odds_ratio"}

func (s Scores) values() []float64 {
	return []float64{s.POD, s.FAR, s.POFD, s.CSI, s.Bias, s.PC, s.Heidke, s.Peirce, s.Gilbert, s.OddsRatio}
}
