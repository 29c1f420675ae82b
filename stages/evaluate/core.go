package evaluate

import (
	"fmt"
	"sort"

	"github.com/squall-climate/squall/stages/catalog"
	"github.com/squall-climate/squall/stages/grid"
)

// K is the number of mask classes (background, tropical cyclone,
// atmospheric river: the shared mask format's flag_values 0, 1, 2).
const K = 3

// eventClasses are the classes scored as events.
var eventClasses = []int{catalog.TropicalCyclone, catalog.AtmosphericRiver}

// Seasons are the meteorological seasons by month of the model calendar
// (December-February, and so on). They are month groups, not hemispheric
// seasons: DJF is southern summer.
var Seasons = []string{"DJF", "MAM", "JJA", "SON"}

// SeasonOf returns the season index of a month 1..12.
func SeasonOf(month int) int {
	return (month % 12) / 3
}

// Region is a named set of cells (centres inside the region).
type Region struct {
	Name  string
	Cells []int
}

// series accumulates one (member, scenario) pair of mask time series: the
// pixel confusion per region and season, the hit/miss/false-alarm maps, and
// the space-time events of both masks with their overlaps.
type series struct {
	member, scenario string
	// conf[region+1][season]: region 0 is the whole grid.
	conf [][]*Confusion
	// quiet[class][region+1][season]: steps where neither mask has the
	// class in the region (the correct negatives of the event table).
	quiet [K][][]float64
	steps int
	// hit, miss, fa [class][cell]: pixel-step counts for the maps.
	hit, miss, fa [K][]int32
	// Events of each mask per class, and overlap areas between them.
	ref, cand [K]*eventSet
	overlap   [K]map[[2]int]float64
	lastHours float64
	started   bool
}

// eventSet is the events of one mask and one class.
type eventSet struct {
	linker *catalog.Linker
	ev     []*evStat
}

type evStat struct {
	areaSteps float64 // km2 summed over cells and steps
	season    int     // season of the first step
	regions   []bool  // touched, per region
}

// Evaluator compares reference and candidate masks on one grid.
type Evaluator struct {
	g           *grid.Grid
	areaKm2     []float64
	areaM2      []float64
	regions     []Region
	cellRegions [][]int32
	series      []*series
	// MaxGapHours: consecutive steps further apart than this break events.
	MaxGapHours float64
	// LinkKmPer6h: per class, distance linking of objects that do not
	// overlap (see catalog.Linker), per 6 hours between steps.
	LinkKmPer6h [K]float64
}

// NewEvaluator makes an Evaluator for a grid and regions.
func NewEvaluator(g *grid.Grid, regions []Region) *Evaluator {
	e := &Evaluator{g: g, areaM2: g.CellAreas(), regions: regions, cellRegions: make([][]int32, g.Len())}
	e.areaKm2 = make([]float64, len(e.areaM2))
	for k, a := range e.areaM2 {
		e.areaKm2[k] = a / 1e6
	}
	for r, reg := range regions {
		for _, k := range reg.Cells {
			e.cellRegions[k] = append(e.cellRegions[k], int32(r))
		}
	}
	return e
}

func (e *Evaluator) newSeries(member, scenario string) *series {
	s := &series{member: member, scenario: scenario}
	nr := len(e.regions) + 1
	s.conf = make([][]*Confusion, nr)
	for r := range s.conf {
		s.conf[r] = make([]*Confusion, len(Seasons))
		for q := range s.conf[r] {
			s.conf[r][q] = NewConfusion(K)
		}
	}
	for _, k := range eventClasses {
		s.quiet[k] = make([][]float64, nr)
		for r := range s.quiet[k] {
			s.quiet[k][r] = make([]float64, len(Seasons))
		}
		s.hit[k] = make([]int32, e.g.Len())
		s.miss[k] = make([]int32, e.g.Len())
		s.fa[k] = make([]int32, e.g.Len())
		s.ref[k] = &eventSet{linker: catalog.NewLinker(e.areaM2)}
		s.cand[k] = &eventSet{linker: catalog.NewLinker(e.areaM2)}
		s.overlap[k] = map[[2]int]float64{}
	}
	e.series = append(e.series, s)
	return s
}

// Series returns the accumulator for (member, scenario), creating it.
func (e *Evaluator) seriesFor(member, scenario string) *series {
	for _, s := range e.series {
		if s.member == member && s.scenario == scenario {
			return s
		}
	}
	return e.newSeries(member, scenario)
}

// Step adds one time step of reference and candidate masks for a
// (member, scenario) series. Steps of one series must come in time order;
// a gap longer than MaxGapHours (or a call to Gap) ends open events.
func (e *Evaluator) Step(member, scenario string, t catalog.Time, ref, cand []byte) error {
	n := e.g.Len()
	if len(ref) != n || len(cand) != n {
		return fmt.Errorf("evaluate: masks have %d and %d cells, grid has %d", len(ref), len(cand), n)
	}
	s := e.seriesFor(member, scenario)
	if s.started && t.Hours <= s.lastHours {
		return fmt.Errorf("evaluate: time %s of scenario %q member %q does not come after the previous step (blocks out of order or repeated?)", t.ISO, scenario, member)
	}
	if s.started && e.MaxGapHours > 0 && t.Hours-s.lastHours > e.MaxGapHours {
		for _, k := range eventClasses {
			s.ref[k].linker.Break()
			s.cand[k].linker.Break()
		}
	}
	dtHours := 0.0
	if s.started {
		dtHours = t.Hours - s.lastHours
	}
	s.started, s.lastHours = true, t.Hours
	season := SeasonOf(t.Month)
	step := s.steps
	s.steps++

	// Pixel level: whole grid, then each region over its own cells. Counts
	// of this step go to a scratch matrix first so that the presence of
	// each class per region (for the quiet steps) comes for free.
	var stepCount [K * K]int64
	whole := s.conf[0][season]
	for k := 0; k < n; k++ {
		r, c := int(ref[k]), int(cand[k])
		if r >= K || c >= K {
			i, j := e.g.RowCol(k)
			return fmt.Errorf("evaluate: mask value outside flag_values 0, 1, 2 (reference %d, candidate %d) at lat %g lon %g, time %s", r, c, e.g.Lat[i], e.g.Lon[j], t.ISO)
		}
		stepCount[r*K+c]++
		whole.Area[r*K+c] += e.areaKm2[k]
		if r != 0 || c != 0 {
			if r == c {
				s.hit[r][k]++
			} else {
				if r != 0 {
					s.miss[r][k]++
				}
				if c != 0 {
					s.fa[c][k]++
				}
			}
		}
	}
	e.addQuiet(s, 0, season, &stepCount, whole)
	for ri, reg := range e.regions {
		m := s.conf[ri+1][season]
		stepCount = [K * K]int64{}
		for _, k := range reg.Cells {
			idx := int(ref[k])*K + int(cand[k])
			stepCount[idx]++
			m.Area[idx] += e.areaKm2[k]
		}
		e.addQuiet(s, ri+1, season, &stepCount, m)
	}
	// Event level: label each mask per class, link through time, and
	// accumulate overlaps between reference and candidate events.
	for _, k := range eventClasses {
		lr, err := e.g.Components(grid.Equal(ref, byte(k)))
		if err != nil {
			return err
		}
		lc, err := e.g.Components(grid.Equal(cand, byte(k)))
		if err != nil {
			return err
		}
		maxKm := e.LinkKmPer6h[k] * dtHours / 6
		evR, err := e.addEvents(s.ref[k], step, season, lr, maxKm)
		if err != nil {
			return err
		}
		evC, err := e.addEvents(s.cand[k], step, season, lc, maxKm)
		if err != nil {
			return err
		}
		ov := s.overlap[k]
		for ci := range lc.Components {
			for _, px := range lc.Pixels(int32(ci + 1)) {
				if r := lr.Labels[px]; r > 0 {
					ov[[2]int{evR[r-1], evC[ci]}] += e.areaKm2[px]
				}
			}
		}
	}
	return nil
}

// Gap ends the open events of a series (the next step does not follow on).
func (e *Evaluator) Gap(member, scenario string) {
	s := e.seriesFor(member, scenario)
	for _, k := range eventClasses {
		s.ref[k].linker.Break()
		s.cand[k].linker.Break()
	}
}

// addQuiet adds a step's counts to a matrix and counts, per event class,
// whether the step is quiet in that region: neither mask has the class.
func (e *Evaluator) addQuiet(s *series, region, season int, step *[K * K]int64, m *Confusion) {
	for i, c := range step {
		m.Count[i] += c
	}
	for _, k := range eventClasses {
		var n int64
		for j := 0; j < K; j++ {
			n += step[k*K+j] + step[j*K+k]
		}
		if n == 0 {
			s.quiet[k][region][season]++
		}
	}
}

func (e *Evaluator) addEvents(es *eventSet, step, season int, lab *grid.Labelling, maxKm float64) ([]int, error) {
	evOf, err := es.linker.Step(step, lab, maxKm)
	if err != nil {
		return nil, err
	}
	for len(es.ev) < len(es.linker.Events()) {
		es.ev = append(es.ev, &evStat{season: season, regions: make([]bool, len(e.regions))})
	}
	for ci := range lab.Components {
		st := es.ev[evOf[ci]]
		st.areaSteps += lab.Components[ci].Area / 1e6
		if len(e.regions) == 0 {
			continue
		}
		for _, px := range lab.Pixels(int32(ci + 1)) {
			for _, r := range e.cellRegions[px] {
				st.regions[r] = true
			}
		}
	}
	return evOf, nil
}

// match pairs reference and candidate events of one class one-to-one.
// Rule (doc.go): every pair that overlaps (shares at least one cell at one
// step) is a candidate; its score is the space-time IoU, overlap /
// (area-steps of the reference + of the candidate - overlap). Pairs are
// accepted greedily by decreasing IoU (ties: lower reference index, then
// lower candidate index) when IoU >= minIoU and neither event is taken.
// It returns, per reference event, the matched candidate or -1, and per
// candidate event whether it is matched.
func match(s *series, k int, minIoU float64) (refMatch []int, candMatched []bool) {
	type pair struct {
		r, c int
		iou  float64
	}
	var pairs []pair
	for key, ov := range s.overlap[k] {
		a := s.ref[k].ev[key[0]].areaSteps
		b := s.cand[k].ev[key[1]].areaSteps
		pairs = append(pairs, pair{key[0], key[1], ov / (a + b - ov)})
	}
	sort.Slice(pairs, func(i, j int) bool {
		if pairs[i].iou != pairs[j].iou {
			return pairs[i].iou > pairs[j].iou
		}
		if pairs[i].r != pairs[j].r {
			return pairs[i].r < pairs[j].r
		}
		return pairs[i].c < pairs[j].c
	})
	refMatch = make([]int, len(s.ref[k].ev))
	for i := range refMatch {
		refMatch[i] = -1
	}
	candMatched = make([]bool, len(s.cand[k].ev))
	for _, p := range pairs {
		if p.iou < minIoU || refMatch[p.r] >= 0 || candMatched[p.c] {
			continue
		}
		refMatch[p.r] = p.c
		candMatched[p.c] = true
	}
	return refMatch, candMatched
}
