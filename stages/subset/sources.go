package subset

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// request says which raw variable a channel needs: found by standard_name
// std, or by one of names; on levels (vertical) or single-level; and the
// units it must be delivered in ("" keeps the file's units).
type request struct {
	std      string
	names    []string
	vertical bool
	units    string
	label    string // what the channel calls it, for errors
}

func (r request) key() string {
	return fmt.Sprintf("%s|%s|%v|%s", r.std, strings.Join(r.names, ","), r.vertical, r.units)
}

// stepRef is one time step of a raw variable.
type stepRef struct {
	f    *ncio.File
	v    *ncio.Var
	t    int
	axis *ncio.TimeAxis
}

// source is a raw variable resolved across the block's files.
type source struct {
	req      request
	varName  string // in the first file that has it
	units    string // as written in the file
	conv     ncio.Converter
	steps    []stepRef
	lv       *ncio.Levels // nil for single-level variables
	hybrid   bool
	needAll  bool         // hybrid, or an integral: every level in range
	needK    map[int]bool // pressure levels to read
	k0, nk   int          // level range read each step
	ps       *source      // surface pressure for hybrid levels
	axisDims [4]string    // time, level ("" if none), lat, lon
}

// planned is everything the write loop needs.
type planned struct {
	files    []*ncio.File
	sources  []*source
	channels []*outChannel
	win      *window
	lat, lon []float64
	keep     []int // indices into the reference steps
	timeVals []float64
	timeUnit string
	timeCal  string
	land     []float32 // output-box land fraction, or nil
	notes    []string
	bufs     *bufPool
}

func (p *planned) close() {
	for _, f := range p.files {
		f.Close()
	}
}

// namesFor returns the file variable names the campaign maps to a
// standard name, sorted.
func namesFor(std string, mapping map[string]string) []string {
	var out []string
	for name, sn := range mapping {
		if sn == std {
			out = append(out, name)
		}
	}
	sort.Strings(out)
	return out
}

// plan opens the files and resolves every channel to raw variables, time
// steps, levels and a window. On error the returned plan (if any) still
// holds files to close.
func plan(channels []pipeline.Channel, mapping map[string]string, paths []string, year int, expectCal string, o *options) (*planned, error) {
	p := &planned{bufs: &bufPool{}}
	paths = append([]string(nil), paths...)
	sort.Strings(paths)
	for _, path := range paths {
		f, err := ncio.Open(path)
		if err != nil {
			return p, err
		}
		p.files = append(p.files, f)
	}
	srcByKey := map[string]*source{}
	getSource := func(r request) (*source, error) {
		if s, ok := srcByKey[r.key()]; ok {
			return s, nil
		}
		s, err := p.resolve(r, mapping, year)
		if err != nil {
			return nil, err
		}
		// Two requests that resolve to the same variable with the same
		// conversion (a channel in the file's units and a derived field
		// asking for the same units by another spelling) share one read.
		for _, o := range p.sources {
			if o.varName == s.varName && o.steps[0].f == s.steps[0].f && (o.lv == nil) == (s.lv == nil) &&
				o.conv.Scale == s.conv.Scale && o.conv.Offset == s.conv.Offset {
				srcByKey[r.key()] = o
				return o, nil
			}
		}
		srcByKey[r.key()] = s
		p.sources = append(p.sources, s)
		if s.hybrid {
			// Variables of one file share its surface pressure.
			psKey := "ps|" + s.lv.PSVar + "|" + s.steps[0].f.Path()
			if ps, ok := srcByKey[psKey]; ok {
				s.ps = ps
				return s, nil
			}
			ps, err := p.surfacePressure(s)
			if err != nil {
				return nil, err
			}
			s.ps = ps
			srcByKey[psKey] = ps
			p.sources = append(p.sources, ps)
		}
		return s, nil
	}
	halo := 0
	for _, ch := range channels {
		oc, err := p.buildChannel(ch, mapping, o, getSource)
		if err != nil {
			return p, err
		}
		if oc.halo > halo {
			halo = oc.halo
		}
		p.channels = append(p.channels, oc)
	}
	if len(p.channels) == 0 {
		return p, errors.New("subset: the campaign lists no channels")
	}
	// Level read ranges.
	for _, s := range p.sources {
		if s.lv == nil {
			continue
		}
		if s.needAll {
			s.k0, s.nk = 0, s.lv.N()
			continue
		}
		lo, hi := math.MaxInt, -1
		for k := range s.needK {
			lo, hi = min(lo, k), max(hi, k)
		}
		s.k0, s.nk = lo, hi-lo+1
	}
	if err := p.checkGridAndTimes(year, expectCal, o, halo); err != nil {
		return p, err
	}
	if o.landFraction {
		if err := p.landFraction(mapping); err != nil {
			return p, err
		}
	}
	return p, nil
}

// resolve finds the variable of a request in the files and its time steps
// in the block year.
func (p *planned) resolve(r request, mapping map[string]string, year int) (*source, error) {
	s := &source{req: r, needK: map[int]bool{}}
	var wrongShape []string
	for _, f := range p.files {
		v := matchVar(f, r)
		if v == nil {
			continue
		}
		g, err := f.GridOf(v)
		if err != nil {
			return nil, fmt.Errorf("subset: %s: %w", r.label, err)
		}
		ta, err := f.TimesOf(v)
		if err != nil {
			return nil, fmt.Errorf("subset: %s: %w", r.label, err)
		}
		dims := v.DimNames()
		var lv *ncio.Levels
		if len(dims) == 4 {
			if lv, err = f.LevelsOf(v); err != nil {
				return nil, fmt.Errorf("subset: %s: variable %q: %w", r.label, v.Name(), err)
			}
		}
		want := []string{ta.Dim, g.LatDim, g.LonDim}
		if lv != nil {
			want = []string{ta.Dim, lv.Dim, g.LatDim, g.LonDim}
		}
		if !slices.Equal(dims, want) {
			return nil, fmt.Errorf("subset: %s: variable %q in %s has dimensions (%s); subset reads (%s) (hint: reorder the file's dimensions, time first and longitude last)",
				r.label, v.Name(), f.Path(), strings.Join(dims, ", "), strings.Join(want, ", "))
		}
		if (lv != nil) != r.vertical {
			wrongShape = append(wrongShape, fmt.Sprintf("%q in %s has dimensions (%s)", v.Name(), filepath.Base(f.Path()), strings.Join(dims, ", ")))
			continue
		}
		if s.varName == "" {
			s.varName, s.units, s.lv = v.Name(), v.Units(), lv
			s.axisDims = [4]string{ta.Dim, "", g.LatDim, g.LonDim}
			if lv != nil {
				s.axisDims[1] = lv.Dim
				s.hybrid = lv.Kind == ncio.HybridSigmaPressure
				s.needAll = s.hybrid
				if lv.P0Assumed {
					p.notes = append(p.notes, fmt.Sprintf("%s: %s names a p0 it does not contain; p0 = %g Pa assumed (CAM convention)", r.label, f.Path(), lv.P0))
				}
			}
		} else if err := sameLevels(s.lv, lv); err != nil {
			return nil, fmt.Errorf("subset: %s: variable %q in %s: %v than in the block's other files", r.label, v.Name(), f.Path(), err)
		}
		if v.Units() != s.units {
			return nil, fmt.Errorf("subset: %s: variable %q has units %q in %s but %q in another file of the block", r.label, v.Name(), v.Units(), f.Path(), s.units)
		}
		for t, tm := range ta.Times {
			if tm.Year == year {
				s.steps = append(s.steps, stepRef{f: f, v: v, t: t, axis: ta})
			}
		}
	}
	if s.varName == "" {
		return nil, p.missingVar(r, wrongShape)
	}
	if len(s.steps) == 0 {
		return nil, fmt.Errorf("subset: %s: variable %q has no time step in year %d in the block's files (hint: check the time units and calendar of the files)", r.label, s.varName, year)
	}
	sort.SliceStable(s.steps, func(i, j int) bool {
		return s.steps[i].axis.Times[s.steps[i].t].Before(s.steps[j].axis.Times[s.steps[j].t])
	})
	for i := 1; i < len(s.steps); i++ {
		a, b := s.steps[i-1], s.steps[i]
		if !a.axis.Times[a.t].Before(b.axis.Times[b.t]) {
			return nil, fmt.Errorf("subset: %s: time %s of variable %q appears in both %s and %s (hint: a block's files must not overlap in time)",
				r.label, b.axis.Times[b.t], s.varName, a.f.Path(), b.f.Path())
		}
	}
	// Units.
	target := r.units
	if s.units == "" {
		return nil, fmt.Errorf("subset: %s: variable %q in %s has no units attribute (hint: add the units to the file; subset does not guess them)",
			r.label, s.varName, s.steps[0].f.Path())
	}
	if target == "" {
		target = s.units
	}
	c, err := ncio.NewConverter(s.units, target)
	if err != nil {
		return nil, fmt.Errorf("subset: %s: variable %q in %s has units %q, which do not convert to %q: %v",
			r.label, s.varName, s.steps[0].f.Path(), s.units, target, err)
	}
	s.conv = c
	return s, nil
}

func sameLevels(a, b *ncio.Levels) error {
	if a == nil && b == nil {
		return nil // single-level variables split in time
	}
	if a == nil || b == nil || a.Kind != b.Kind || a.N() != b.N() {
		return errors.New("other levels")
	}
	for k := 0; k < a.N(); k++ {
		if a.Pressure(k, 1e5) != b.Pressure(k, 1e5) {
			return errors.New("other levels")
		}
	}
	return nil
}

// matchVar finds the variable of r in f: standard_name first, then each
// name in order; among several, the one with the right shape.
func matchVar(f *ncio.File, r request) *ncio.Var {
	var cands []*ncio.Var
	if r.std != "" {
		for _, v := range f.Vars() {
			if v.StandardName() == r.std {
				cands = append(cands, v)
			}
		}
	}
	for _, n := range r.names {
		if f.HasVar(n) {
			v, _ := f.Var(n)
			if !slices.Contains(cands, v) {
				cands = append(cands, v)
			}
		}
	}
	for _, v := range cands {
		nd := len(v.Shape())
		if (r.vertical && nd == 4) || (!r.vertical && nd == 3) {
			return v
		}
	}
	for _, v := range cands {
		if n := len(v.Shape()); n == 3 || n == 4 {
			return v // wrong shape: resolve reports it
		}
	}
	return nil
}

// missingVar builds the error for a variable no file has, listing what
// each file has so that the user can write the variables mapping.
func (p *planned) missingVar(r request, wrongShape []string) error {
	var b strings.Builder
	what := ""
	switch {
	case r.std != "" && len(r.names) > 0:
		what = fmt.Sprintf("no variable with standard_name %q or named %s", r.std, quoteJoin(r.names))
	case r.std != "":
		what = fmt.Sprintf("no variable with standard_name %q", r.std)
	default:
		what = fmt.Sprintf("no variable named %s", quoteJoin(r.names))
	}
	shape := "single-level (time, lat, lon)"
	if r.vertical {
		shape = "on levels (time, level, lat, lon)"
	}
	fmt.Fprintf(&b, "subset: %s: %s %s in the block's files", r.label, what, shape)
	if len(wrongShape) > 0 {
		fmt.Fprintf(&b, "; found but not %s: %s", shape, strings.Join(wrongShape, ", "))
	}
	b.WriteString(". The files have:")
	for _, f := range p.files {
		var vs []string
		for _, v := range f.Vars() {
			d := v.Name()
			if sn := v.StandardName(); sn != "" {
				d += " (" + sn + ")"
			}
			vs = append(vs, d)
		}
		fmt.Fprintf(&b, " %s: %s;", filepath.Base(f.Path()), strings.Join(vs, ", "))
	}
	b.WriteString(" (hint: map the file's name to the standard name in the campaign's variables: section)")
	return errors.New(b.String())
}

func quoteJoin(xs []string) string {
	q := make([]string, len(xs))
	for i, x := range xs {
		q[i] = fmt.Sprintf("%q", x)
	}
	return strings.Join(q, " or ")
}

// surfacePressure resolves the ps variable of a hybrid source, step by
// step from the same files.
func (p *planned) surfacePressure(s *source) (*source, error) {
	ps := &source{req: request{label: s.req.label + " surface pressure"}, needK: map[int]bool{}}
	for _, st := range s.steps {
		v, err := st.f.Var(s.lv.PSVar)
		if err != nil {
			return nil, fmt.Errorf("subset: %s: hybrid levels of %q need surface pressure %q: %w", s.req.label, s.varName, s.lv.PSVar, err)
		}
		if dims := v.DimNames(); len(dims) != 3 || dims[0] != s.axisDims[0] || dims[1] != s.axisDims[2] || dims[2] != s.axisDims[3] {
			return nil, fmt.Errorf("subset: surface pressure %q in %s has dimensions (%s), want (%s, %s, %s)",
				v.Name(), st.f.Path(), strings.Join(dims, ", "), s.axisDims[0], s.axisDims[2], s.axisDims[3])
		}
		ps.steps = append(ps.steps, stepRef{f: st.f, v: v, t: st.t, axis: st.axis})
		ps.varName, ps.units = v.Name(), v.Units()
	}
	if ps.units == "" {
		return nil, fmt.Errorf("subset: surface pressure %q in %s has no units attribute (hint: add units = \"Pa\" to the file)", ps.varName, s.steps[0].f.Path())
	}
	c, err := ncio.NewConverter(ps.units, "Pa")
	if err != nil {
		return nil, fmt.Errorf("subset: surface pressure %q in %s has units %q, not a pressure: %v", ps.varName, s.steps[0].f.Path(), ps.units, err)
	}
	ps.conv = c
	ps.axisDims = s.axisDims
	ps.axisDims[1] = ""
	return ps, nil
}

// needLevel marks the pressure level target (Pa) for reading, or says
// which levels exist.
func (s *source) needLevel(target float64, channel string) error {
	if s.hybrid {
		return nil
	}
	for k, pa := range s.lv.Pa {
		if math.Abs(pa-target) <= 1e-6*target {
			s.needK[k] = true
			return nil
		}
	}
	have := make([]string, len(s.lv.Pa))
	for k, pa := range s.lv.Pa {
		have[k] = fmt.Sprintf("%g", pa/100)
	}
	return fmt.Errorf("subset: channel %q: level %g hPa is not among the pressure levels of %q (%s hPa) (hint: pick one of them; only hybrid sigma-pressure levels are interpolated)",
		channel, target/100, s.varName, strings.Join(have, ", "))
}

// needColumn marks every level inside [top, bottom] plus the nearest one
// outside each end (layers straddling the limits are cut there).
func (s *source) needColumn(top, bottom float64) {
	if s.hybrid {
		return
	}
	above, below := -1, -1
	for k, pa := range s.lv.Pa {
		switch {
		case pa >= top && pa <= bottom:
			s.needK[k] = true
		case pa < top && (above < 0 || pa > s.lv.Pa[above]):
			above = k
		case pa > bottom && (below < 0 || pa < s.lv.Pa[below]):
			below = k
		}
	}
	if above >= 0 {
		s.needK[above] = true
	}
	if below >= 0 {
		s.needK[below] = true
	}
}

// column returns the pressures of the levels read, for a step's ps.
func (s *source) column(ps []float32) column {
	if !s.hybrid {
		return fixedLevels(s.lv.Pa[s.k0 : s.k0+s.nk])
	}
	a := make([]float64, s.nk)
	for k := range a {
		a[k] = s.lv.A[s.k0+k] * s.lv.P0
	}
	return hybridLevels{a: a, b: s.lv.B[s.k0 : s.k0+s.nk], ps: ps}
}
