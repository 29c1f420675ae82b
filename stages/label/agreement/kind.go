// Package agreement is the "agreement" stage kind: how much the members of
// a label sweep agree. Heuristic labels depend on thresholds that the
// literature does not agree on (IVT 200, 250 or 300 kg m-1 s-1; a 3 or 4 K
// warm core), so a campaign can sweep them: the label stage then runs one
// member per value, and this kind turns the members' masks into, per pixel
// and time step, the fraction of members that label it tropical cyclone
// and the fraction that label it atmospheric river.
//
// # Inputs and output
//
// Fan mode FanMembers: one instance per (scenario, block), handed every
// member of its inputs. Every input that has a mask.nc (the shared class
// mask format) is a member; all must share the grid and the time axis.
// Output agreement.nc: coordinates time, lat, lon copied from the masks;
// float tc_agreement and ar_agreement (time, lat, lon) in [0, 1], units
// "1"; global attributes members (the member names, blank-separated, in
// sorted order) and member_count. A pixel with tc_agreement 1 is TC in
// every member; 0.5, in half of them.
//
// # Costs
//
// Streams one time step of every member at a time: memory is members x
// one field of bytes plus two float fields. Reading is the cost.
package agreement

import (
	"context"
	"fmt"
	"path/filepath"
	"sort"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/label"
	"github.com/squall-climate/squall/stages/ncio"
)

// Kind is the "agreement" stage kind.
type Kind struct{}

var _ pipeline.Kind = Kind{}
var _ pipeline.SectionUser = Kind{}

// KindName is the kind's name in campaign files.
const KindName = "agreement"

// Version changes whenever the same inputs would give different outputs.
const Version = 1

// OutputFile is the kind's one output.
const OutputFile = "agreement.nc"

// Output variables.
const (
	TCVar = "tc_agreement"
	ARVar = "ar_agreement"
)

func (Kind) Name() string                 { return KindName }
func (Kind) Version() int                 { return Version }
func (Kind) Fan() pipeline.Fan            { return pipeline.FanMembers }
func (Kind) Settings() []pipeline.Setting { return nil }
func (Kind) CampaignSections() []string   { return []string{} }
func (Kind) Doc() string {
	return "Label uncertainty across a threshold sweep: from the mask.nc of every sweep member of a label stage " +
		"(one scenario and block), writes agreement.nc with, per pixel and time step, the fraction of members " +
		"labelling it tropical_cyclone (tc_agreement) and atmospheric_river (ar_agreement)."
}

type member struct {
	name string
	path string
	f    *ncio.File
	v    *ncio.Var
}

// Run reads every member's mask one step at a time and writes the
// fractions.
func (Kind) Run(ctx context.Context, job *pipeline.Job) (err error) {
	var ms []*member
	for _, in := range job.Inputs {
		for _, f := range in.Files {
			if filepath.Base(f) != label.MaskFile {
				continue
			}
			name := in.Member
			if name == "" {
				name = in.From
			}
			ms = append(ms, &member{name: name, path: f})
		}
	}
	if len(ms) == 0 {
		return fmt.Errorf("stage %s: no input provides %s; list a label stage among its inputs", job.Stage, label.MaskFile)
	}
	sort.Slice(ms, func(a, b int) bool {
		if ms[a].name != ms[b].name {
			return ms[a].name < ms[b].name
		}
		return ms[a].path < ms[b].path
	})
	for i := 1; i < len(ms); i++ {
		if ms[i].name == ms[i-1].name {
			ms[i].name += fmt.Sprintf("#%d", i) // same member from two stages: keep both, distinguishable
		}
	}
	defer func() {
		for _, m := range ms {
			if m.f != nil {
				m.f.Close()
			}
		}
	}()
	var g *grid.Grid
	var times *ncio.TimeAxis
	for i, m := range ms {
		m.f, err = ncio.Open(m.path)
		if err != nil {
			return err
		}
		ng, err := m.f.Grid()
		if err != nil {
			return err
		}
		mg, err := grid.New(ng.Lat, ng.Lon)
		if err != nil {
			return fmt.Errorf("%s: %w", m.path, err)
		}
		ta, err := m.f.Times()
		if err != nil {
			return err
		}
		m.v, err = m.f.Var(label.MaskVar)
		if err != nil {
			return err
		}
		if sh := m.v.Shape(); len(sh) != 3 || sh[0] != ta.Len() || sh[1] != mg.NLat() || sh[2] != mg.NLon() {
			return fmt.Errorf("%s: %s has shape %v, want (time %d, lat %d, lon %d)", m.path, label.MaskVar, sh, ta.Len(), mg.NLat(), mg.NLon())
		}
		if i == 0 {
			g, times = mg, ta
			continue
		}
		if err := g.SameAs(mg); err != nil {
			return fmt.Errorf("members %s (%s) and %s (%s): %w", ms[0].name, ms[0].path, m.name, m.path, err)
		}
		if err := sameTimes(times, ta); err != nil {
			return fmt.Errorf("members %s (%s) and %s (%s): %w", ms[0].name, ms[0].path, m.name, m.path, err)
		}
	}
	names := make([]string, len(ms))
	for i, m := range ms {
		names[i] = m.name
	}
	out := filepath.Join(job.OutDir, OutputFile)
	w, err := ncio.Create(out)
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			w.Abort()
		}
	}()
	w.DefTimeFrom(times, 0, times.Len())
	w.DefLat(g.Lat)
	w.DefLon(g.Lon)
	for _, v := range []struct{ name, class string }{{TCVar, label.ClassTC}, {ARVar, label.ClassAR}} {
		w.DefVar(ncio.VarSpec{Name: v.name, Type: ncio.Float, Dims: []string{"time", "lat", "lon"},
			Chunks: []int{1, g.NLat(), g.NLon()}, Deflate: 1, Shuffle: true,
			Attrs: []ncio.Attr{
				{Name: "long_name", Value: "fraction of sweep members labelling " + v.class},
				{Name: "units", Value: "1"},
				{Name: "valid_range", Value: []float32{0, 1}},
			}})
	}
	w.PutGlobalAttr("members", strings.Join(names, " "))
	w.PutGlobalAttr("member_count", int32(len(ms)))
	w.PutGlobalAttr("comment", "Agreement of heuristic labels across a threshold sweep: research output, not warnings.")
	w.PutConventions("squall label agreement across sweep members", label.Provenance(KindName, Version, job))
	if err = w.EndDef(); err != nil {
		return err
	}
	n := g.Len()
	tc := make([]float32, n)
	ar := make([]float32, n)
	nt, ny, nx := times.Len(), g.NLat(), g.NLon()
	inv := 1 / float32(len(ms))
	for s := range nt {
		if err = ctx.Err(); err != nil {
			return err
		}
		clear(tc)
		clear(ar)
		for _, m := range ms {
			cls, rerr := m.v.ReadInt8([]int{s, 0, 0}, []int{1, ny, nx})
			if rerr != nil {
				return rerr
			}
			for i, c := range cls {
				switch byte(c) {
				case label.TropicalCyclone:
					tc[i]++
				case label.AtmosphericRiver:
					ar[i]++
				case label.Background:
				default:
					return fmt.Errorf("%s: %s holds %d at step %d, point %d; flag_values are 0, 1, 2", m.path, label.MaskVar, c, s, i)
				}
			}
		}
		for i := range tc {
			tc[i] *= inv
			ar[i] *= inv
		}
		if err = w.WriteFloat32(TCVar, []int{s, 0, 0}, []int{1, ny, nx}, tc); err != nil {
			return err
		}
		if err = w.WriteFloat32(ARVar, []int{s, 0, 0}, []int{1, ny, nx}, ar); err != nil {
			return err
		}
	}
	job.Logf("%s: %d members (%s), %d steps", KindName, len(ms), strings.Join(names, ", "), nt)
	return w.Close()
}

// sameTimes checks that two time axes hold the same instants.
func sameTimes(a, b *ncio.TimeAxis) error {
	if a.Len() != b.Len() {
		return fmt.Errorf("time axes differ: %d vs %d steps", a.Len(), b.Len())
	}
	if a.Calendar() != b.Calendar() {
		return fmt.Errorf("time axes differ: calendar %s vs %s", a.Calendar(), b.Calendar())
	}
	for i := range a.Times {
		if !a.Times[i].Equal(b.Times[i]) {
			return fmt.Errorf("time axes differ at step %d: %s vs %s", i, a.Times[i], b.Times[i])
		}
	}
	return nil
}
