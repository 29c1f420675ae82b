package label

import (
	"math"
	"sort"

	"github.com/squall-climate/squall/stages/grid"
)

// Track is a stitched storm: candidates at increasing steps.
type Track struct {
	ID     int // 1-based, in order of first point (step, then row-major position)
	Points []Candidate
}

// Lifetime is the time in hours from the first to the last point.
func (t *Track) Lifetime() float64 {
	return t.Points[len(t.Points)-1].Hours - t.Points[0].Hours
}

// TrackRules are the rules that join candidates into tracks and keep them.
type TrackRules struct {
	MaxSpeed      float64 // metres per hour between matched centres
	MaxGapSteps   int     // steps without a candidate a track survives
	MinLifetime   float64 // hours, first to last point
	GenesisMaxLat float64 // degrees; <= 0 or >= 90 switches the rule off
	CheckGenesis  bool
}

// Stitch joins per-step candidates into tracks and returns those that pass
// the rules, numbered from 1 in order of their first point. steps[t] are
// the candidates at step t and hours[t] its time in hours.
//
// At every step each open track (one whose last point is at most
// MaxGapSteps+1 steps back) may take one candidate lying within
// MaxSpeed * (hours elapsed since its last point) by great-circle distance.
// Pairs are matched greedily, nearest first (ties by track, then candidate
// order), which is deterministic and, for storms farther apart than a step's
// displacement, the same as an optimal assignment. A candidate left over
// opens a new track. Finally tracks shorter than MinLifetime hours, or (with
// CheckGenesis) whose first point lies more than GenesisMaxLat degrees from
// the equator, are dropped. Candidates of kept tracks get Track set, in
// steps as well.
func Stitch(steps [][]Candidate, hours []float64, r TrackRules) []Track {
	type open struct {
		pts  []int // indices into flat
		last int   // step of the last point
	}
	type ref struct{ t, c int }
	var flat []ref
	var tracks []*open
	var active []int // indices into tracks
	type pair struct {
		d    float64
		a, c int // active position, candidate index
	}
	var pairs []pair
	for t, cands := range steps {
		// Close tracks that waited too long.
		keep := active[:0]
		for _, a := range active {
			if t-tracks[a].last-1 <= r.MaxGapSteps {
				keep = append(keep, a)
			}
		}
		active = keep
		pairs = pairs[:0]
		for ai, a := range active {
			lp := flat[tracks[a].pts[len(tracks[a].pts)-1]]
			last := steps[lp.t][lp.c]
			reach := r.MaxSpeed * (hours[t] - hours[last.Step])
			for ci, c := range cands {
				d := grid.Distance(last.Lat, last.Lon, c.Lat, c.Lon)
				if d <= reach {
					pairs = append(pairs, pair{d, ai, ci})
				}
			}
		}
		sort.Slice(pairs, func(x, y int) bool {
			p, q := pairs[x], pairs[y]
			if p.d != q.d {
				return p.d < q.d
			}
			if p.a != q.a {
				return p.a < q.a
			}
			return p.c < q.c
		})
		usedA := make([]bool, len(active))
		usedC := make([]bool, len(cands))
		for _, p := range pairs {
			if usedA[p.a] || usedC[p.c] {
				continue
			}
			usedA[p.a], usedC[p.c] = true, true
			tr := tracks[active[p.a]]
			flat = append(flat, ref{t, p.c})
			tr.pts = append(tr.pts, len(flat)-1)
			tr.last = t
		}
		for ci := range cands {
			if usedC[ci] {
				continue
			}
			flat = append(flat, ref{t, ci})
			tracks = append(tracks, &open{pts: []int{len(flat) - 1}, last: t})
			active = append(active, len(tracks)-1)
		}
	}
	// Tracks were opened in order of first point (step, then candidate
	// order, which is row-major), so numbering in creation order is stable.
	var out []Track
	for _, tr := range tracks {
		first := flat[tr.pts[0]]
		lastR := flat[tr.pts[len(tr.pts)-1]]
		life := hours[lastR.t] - hours[first.t]
		if life < r.MinLifetime {
			continue
		}
		if r.CheckGenesis && r.GenesisMaxLat > 0 && r.GenesisMaxLat < 90 &&
			math.Abs(steps[first.t][first.c].Lat) > r.GenesisMaxLat {
			continue
		}
		id := len(out) + 1
		t := Track{ID: id}
		for _, pi := range tr.pts {
			p := flat[pi]
			steps[p.t][p.c].Track = id
			t.Points = append(t.Points, steps[p.t][p.c])
		}
		out = append(out, t)
	}
	return out
}
