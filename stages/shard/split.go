package shard

import (
	"fmt"
	"math"
	"slices"

	"github.com/squall-climate/squall/pipeline"
)

// The three sets, in the order they are reported.
const (
	Train    = "train"
	Validate = "validate"
	Test     = "test"
)

// Sets lists the set names in order.
var Sets = []string{Train, Validate, Test}

// AssignYears gives each year a set. With fractions (train, validate,
// test; summing to 1) the sorted years are cut into three contiguous runs,
// earliest for training and latest for testing, sized by the largest
// remainder method so the counts sum to the number of years; every set
// with a positive fraction gets at least one year. Without fractions the
// campaign's split decides (years in no period get no set). Whole years
// only: neighbouring time steps are nearly identical, so a random split
// by sample would leak.
func AssignYears(years []int, split pipeline.Split, fractions []float64) (map[int]string, error) {
	years = slices.Clone(years)
	slices.Sort(years)
	years = slices.Compact(years)
	out := map[int]string{}
	if len(fractions) == 0 {
		for _, y := range years {
			if r := split.Role(y); r != "" {
				out[y] = r
			}
		}
		return out, nil
	}
	if err := checkFractions(fractions); err != nil {
		return nil, err
	}
	n := len(years)
	positive := 0
	for _, f := range fractions {
		if f > 0 {
			positive++
		}
	}
	if n < positive {
		return nil, fmt.Errorf("setting fractions %v needs at least %d years, the inputs have %d (%v)", fractions, positive, n, years)
	}
	counts := largestRemainder(fractions, n)
	// At least one year for every positive fraction, taken from the
	// largest set.
	for i, f := range fractions {
		if f > 0 && counts[i] == 0 {
			big := 0
			for j := range counts {
				if counts[j] > counts[big] {
					big = j
				}
			}
			counts[big]--
			counts[i]++
		}
	}
	k := 0
	for i, c := range counts {
		for j := 0; j < c; j++ {
			out[years[k]] = Sets[i]
			k++
		}
	}
	return out, nil
}

func checkFractions(fr []float64) error {
	if len(fr) != 3 {
		return fmt.Errorf("setting fractions needs three numbers (train, validate, test), got %v", fr)
	}
	sum := 0.0
	for _, f := range fr {
		if f < 0 || f > 1 {
			return fmt.Errorf("setting fractions %v: each must lie in 0..1", fr)
		}
		sum += f
	}
	if math.Abs(sum-1) > 1e-9 {
		return fmt.Errorf("setting fractions %v sum to %g, not 1", fr, sum)
	}
	if fr[0] == 0 {
		return fmt.Errorf("setting fractions %v gives no training years", fr)
	}
	return nil
}

// largestRemainder apportions n items by fractions (Hamilton's method):
// floors first, then one more to the largest remainders, ties to the
// earlier set.
func largestRemainder(fr []float64, n int) []int {
	counts := make([]int, len(fr))
	rem := make([]float64, len(fr))
	left := n
	for i, f := range fr {
		x := f * float64(n)
		counts[i] = int(math.Floor(x + 1e-9))
		rem[i] = x - float64(counts[i])
		left -= counts[i]
	}
	for ; left > 0; left-- {
		best := -1
		for i := range rem {
			if fr[i] > 0 && (best < 0 || rem[i] > rem[best]+1e-12) {
				best = i
			}
		}
		counts[best]++
		rem[best] = -1
	}
	return counts
}

// InGap reports whether a sample dayOfYear days into year falls within
// gapDays after a boundary between two different sets (the previous year
// has another set). Those samples are dropped so that the last samples of
// one set and the first of the next are at least gapDays apart.
func InGap(roles map[int]string, year int, dayOfYear, gapDays float64) bool {
	if gapDays <= 0 {
		return false
	}
	prev, ok := roles[year-1]
	return ok && prev != roles[year] && dayOfYear < gapDays
}
