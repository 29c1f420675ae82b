package catalog

import (
	"fmt"
	"sort"
)

// Object is one connected region of one class at one time step, as found
// by component labelling. Label images give, for every cell, the index of
// the object holding it in the step's []Object, or -1.
type Object struct {
	Class int     // mask class value (1 tropical cyclone, 2 atmospheric river)
	Area  float64 // m2
}

// Linker joins the objects of successive time steps into events.
//
// Rule (documented in doc.go): two objects of the same class at steps t-1
// and t are candidates for the same event when they share at least one
// cell; their overlap is the area of the shared cells. Candidate pairs are
// taken greedily in order of decreasing overlap (ties: lower object index
// at t-1, then at t), each object used at most once, so an event has
// exactly one object per step. An object at t left without a partner
// starts a new event; if it overlapped an object at t-1 (a split) the new
// event records SplitFrom = the event it overlapped most. An object at t-1
// left without a partner ends its event; if it overlapped an object at t
// (a merge) its event records MergedInto = the event that object joined.
// The larger piece by overlap therefore keeps the identity, which makes
// ids stable under small changes in the mask.
type Linker struct {
	cellArea  []float64
	prevLabel []int32
	prevObjs  []Object
	prevEvent []int // event index per previous object
	events    []*Link
}

// Link is the skeleton of one event: its class, first step, the object
// index at each step it lives, and its relations to other events (0 when
// none; otherwise the event index plus one).
type Link struct {
	Class      int
	First      int   // first step (as numbered by Step calls)
	Objects    []int // object index at steps First, First+1, ...
	SplitFrom  int
	MergedInto int
}

// NewLinker makes a Linker for a grid whose cells have the given areas.
func NewLinker(cellArea []float64) *Linker {
	return &Linker{cellArea: cellArea}
}

// Events returns every event found so far, in order of creation (by first
// step, then by object index at that step).
func (l *Linker) Events() []*Link { return l.events }

// Break ends every open event, for a gap in time (missing steps): events
// are never linked across a gap.
func (l *Linker) Break() {
	l.prevLabel = nil
	l.prevObjs = nil
	l.prevEvent = nil
}

// Step adds the objects of time step number step (the caller's global
// numbering; steps must come in increasing order, and a step that does not
// follow the previous one directly must be preceded by Break). label holds, per cell, the
// object index or -1; it is kept until the next call, so the caller must
// not reuse the slice for the following step. Step returns the event index
// of every object.
func (l *Linker) Step(step int, label []int32, objs []Object) ([]int, error) {
	if len(label) != len(l.cellArea) {
		return nil, fmt.Errorf("catalog: label image has %d cells, grid has %d", len(label), len(l.cellArea))
	}
	type pair struct {
		p, c    int
		overlap float64
	}
	var pairs []pair
	if l.prevLabel != nil {
		// Overlap per (previous object, current object), accumulated in a
		// map keyed by the pair, then sorted: deterministic whatever the
		// map order.
		ov := map[[2]int]float64{}
		for k, c := range label {
			if c < 0 {
				continue
			}
			p := l.prevLabel[k]
			if p < 0 || l.prevObjs[p].Class != objs[c].Class {
				continue
			}
			ov[[2]int{int(p), int(c)}] += l.cellArea[k]
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
	evOf := make([]int, len(objs))
	for i := range evOf {
		evOf[i] = -1
	}
	prevUsed := make([]bool, len(l.prevObjs))
	bestPrev := make([]int, len(objs)) // previous object overlapping most, -1
	bestCur := make([]int, len(l.prevObjs))
	for i := range bestPrev {
		bestPrev[i] = -1
	}
	for i := range bestCur {
		bestCur[i] = -1
	}
	for _, pr := range pairs {
		if bestPrev[pr.c] < 0 {
			bestPrev[pr.c] = pr.p
		}
		if bestCur[pr.p] < 0 {
			bestCur[pr.p] = pr.c
		}
		if prevUsed[pr.p] || evOf[pr.c] >= 0 {
			continue
		}
		prevUsed[pr.p] = true
		e := l.prevEvent[pr.p]
		evOf[pr.c] = e
		l.events[e].Objects = append(l.events[e].Objects, pr.c)
	}
	for c := range objs {
		if evOf[c] >= 0 {
			continue
		}
		ev := &Link{Class: objs[c].Class, First: step, Objects: []int{c}}
		if p := bestPrev[c]; p >= 0 {
			ev.SplitFrom = l.prevEvent[p] + 1
		}
		l.events = append(l.events, ev)
		evOf[c] = len(l.events) - 1
	}
	for p := range l.prevObjs {
		if !prevUsed[p] && bestCur[p] >= 0 {
			l.events[l.prevEvent[p]].MergedInto = evOf[bestCur[p]] + 1
		}
	}
	l.prevLabel = label
	l.prevObjs = objs
	l.prevEvent = evOf
	return evOf, nil
}
