package catalog

import (
	"fmt"
	"sort"

	"github.com/squall-climate/squall/stages/grid"
)

// Linker joins the connected objects of one class in successive time steps
// into events. Use one Linker per class: objects of different classes are
// never the same event.
//
// Rule (documented in doc.go): two objects at steps t-1 and t are
// candidates for the same event when they share at least one cell; their
// overlap is the area of the shared cells. Candidate pairs are taken
// greedily in order of decreasing overlap (ties: lower label at t-1, then
// lower label at t), each object used at most once, so an event has
// exactly one object per step. An object at t left without a partner
// starts a new event; if it overlapped an object at t-1 (a split) the new
// event records SplitFrom = the event it overlapped most. An object at t-1
// left without a partner ends its event; if it overlapped an object at t
// (a merge) its event records MergedInto = the event that object joined.
// The larger piece by overlap keeps the identity, so ids stay stable under
// small changes of the mask.
//
// Small fast objects (a cyclone a few cells wide on a coarse grid moves
// more than its own size in 6 hours) may not overlap from one step to the
// next. When Step is given a positive maxKm, objects at t-1 and t that
// overlapped nothing at all are then paired greedily by increasing
// great-circle distance between their area-weighted centroids, up to
// maxKm (ties: lower label at t-1, then at t).
//
// Cost: one look-up per object pixel per step plus a sort of the
// overlapping pairs, which are few: linear in object pixels.
type Linker struct {
	cellArea  []float64
	prev      *grid.Labelling
	prevEvent []int // event index per previous object (label-1)
	events    []*Link
}

// Link is the skeleton of one event: its first step, the object label at
// each step it lives, and its relations to other events (0 when none;
// otherwise the event index plus one).
type Link struct {
	First      int     // first step (as numbered by Step calls)
	Labels     []int32 // object label at steps First, First+1, ...
	SplitFrom  int
	MergedInto int
}

// NewLinker makes a Linker for a grid whose cells have the given areas.
func NewLinker(cellArea []float64) *Linker {
	return &Linker{cellArea: cellArea}
}

// Events returns every event found so far, in order of creation (by first
// step, then by label at that step).
func (l *Linker) Events() []*Link { return l.events }

// Break ends every open event, for a gap in time (missing steps): events
// are never linked across a gap.
func (l *Linker) Break() {
	l.prev = nil
	l.prevEvent = nil
}

// Step adds the objects of time step number step (the caller's numbering;
// steps come in increasing order, and a step that does not follow the
// previous one directly must be preceded by Break). lab is the step's
// labelling; it is kept until the next call. Step returns the event index
// of every object, indexed by label-1.
func (l *Linker) Step(step int, lab *grid.Labelling, maxKm float64) ([]int, error) {
	if len(lab.Labels) != len(l.cellArea) {
		return nil, fmt.Errorf("catalog: label image has %d cells, grid has %d", len(lab.Labels), len(l.cellArea))
	}
	type pair struct {
		p, c    int32
		overlap float64
	}
	var pairs []pair
	if l.prev != nil {
		// Overlap per (previous, current) pair. Pixels of one object come
		// in ascending order, so runs of the same pair are common; the map
		// is read in sorted order afterwards, so the result is
		// deterministic whatever the map's iteration order.
		ov := map[[2]int32]float64{}
		prevLab := l.prev.Labels
		for ci := range lab.Components {
			c := int32(ci + 1)
			var runP int32
			var runA float64
			for _, k := range lab.Pixels(c) {
				p := prevLab[k]
				if p != runP {
					if runP > 0 {
						ov[[2]int32{runP, c}] += runA
					}
					runP, runA = p, 0
				}
				runA += l.cellArea[k]
			}
			if runP > 0 {
				ov[[2]int32{runP, c}] += runA
			}
		}
		for k, v := range ov {
			pairs = append(pairs, pair{k[0], k[1], v})
		}
		sort.Slice(pairs, func(i, j int) bool {
			a, b := pairs[i], pairs[j]
			if a.overlap != b.overlap {
				return a.overlap > b.overlap
			}
			if a.p != b.p {
				return a.p < b.p
			}
			return a.c < b.c
		})
	}
	nCur := len(lab.Components)
	nPrev := len(l.prevEvent)
	evOf := make([]int, nCur)
	bestPrev := make([]int32, nCur) // previous label overlapping most, 0 none
	for i := range evOf {
		evOf[i] = -1
	}
	prevUsed := make([]bool, nPrev)
	bestCur := make([]int32, nPrev)
	for _, pr := range pairs {
		p, c := pr.p-1, pr.c-1
		if bestPrev[c] == 0 {
			bestPrev[c] = pr.p
		}
		if bestCur[p] == 0 {
			bestCur[p] = pr.c
		}
		if prevUsed[p] || evOf[c] >= 0 {
			continue
		}
		prevUsed[p] = true
		e := l.prevEvent[p]
		evOf[c] = e
		l.events[e].Labels = append(l.events[e].Labels, pr.c)
	}
	if maxKm > 0 && nPrev > 0 {
		var near []pair
		for p := range nPrev {
			if prevUsed[p] || bestCur[p] != 0 {
				continue
			}
			pc := l.prev.Components[p]
			for c := range nCur {
				if evOf[c] >= 0 || bestPrev[c] != 0 {
					continue
				}
				cc := lab.Components[c]
				d := grid.Distance(pc.CentroidLat, pc.CentroidLon, cc.CentroidLat, cc.CentroidLon) / 1000
				if d <= maxKm {
					near = append(near, pair{int32(p + 1), int32(c + 1), d})
				}
			}
		}
		sort.Slice(near, func(i, j int) bool {
			a, b := near[i], near[j]
			if a.overlap != b.overlap {
				return a.overlap < b.overlap
			}
			if a.p != b.p {
				return a.p < b.p
			}
			return a.c < b.c
		})
		for _, pr := range near {
			p, c := pr.p-1, pr.c-1
			if prevUsed[p] || evOf[c] >= 0 {
				continue
			}
			prevUsed[p] = true
			e := l.prevEvent[p]
			evOf[c] = e
			l.events[e].Labels = append(l.events[e].Labels, pr.c)
		}
	}
	for c := range nCur {
		if evOf[c] >= 0 {
			continue
		}
		ev := &Link{First: step, Labels: []int32{int32(c + 1)}}
		if p := bestPrev[c]; p > 0 {
			ev.SplitFrom = l.prevEvent[p-1] + 1
		}
		l.events = append(l.events, ev)
		evOf[c] = len(l.events) - 1
	}
	for p := range nPrev {
		if !prevUsed[p] && bestCur[p] > 0 {
			l.events[l.prevEvent[p]].MergedInto = evOf[bestCur[p]-1] + 1
		}
	}
	l.prev = lab
	l.prevEvent = evOf
	return evOf, nil
}
