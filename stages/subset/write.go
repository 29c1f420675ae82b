package subset

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"sync"

	"github.com/squall-climate/squall/stages/ncio"
	"github.com/squall-climate/squall/stages/stream"
)

// FillValue is the _FillValue of every channel of fields.nc: the netCDF
// library's default fill for float (NC_FILL_FLOAT), so that readers that
// ignore the attribute still recognise it.
const FillValue = float32(9.969209968386869e36)

// gridTol is how far (degrees) two files' coordinates may differ and still
// be the same grid (float32 coordinates carry about 1e-5 degrees of
// rounding).
const gridTol = 1e-4

func (p *planned) checkGridAndTimes(year int, expectCal string, o *options, halo int) error {
	ref := p.sources[0]
	r0 := ref.steps[0]
	g0, err := r0.f.GridOf(r0.v)
	if err != nil {
		return err
	}
	cal := r0.axis.Calendar()
	if expectCal != "" {
		want, err := ncio.ParseCalendar(expectCal)
		if err == nil && want != cal {
			return fmt.Errorf("subset: %s uses the %s calendar but the campaign expects %s for this scenario (hint: fix the scenario's calendar in the campaign file)",
				r0.f.Path(), cal, want)
		}
	}
	checked := map[string]bool{}
	for _, s := range p.sources {
		for _, st := range s.steps {
			key := st.f.Path() + "|" + st.v.Name()
			if checked[key] {
				continue
			}
			checked[key] = true
			g, err := st.f.GridOf(st.v)
			if err != nil {
				return err
			}
			if !sameCoords(g.Lat, g0.Lat) || !sameCoords(g.Lon, g0.Lon) {
				return fmt.Errorf("subset: %s: variable %q in %s is on a %dx%d grid that differs from %q in %s (%dx%d) (hint: regrid the files to one grid first)",
					s.req.label, st.v.Name(), st.f.Path(), g.NY(), g.NX(), r0.v.Name(), r0.f.Path(), g0.NY(), g0.NX())
			}
			if c := st.axis.Calendar(); c != cal {
				return fmt.Errorf("subset: %s uses the %s calendar and %s the %s calendar (hint: one scenario, one model calendar)",
					st.f.Path(), c, r0.f.Path(), cal)
			}
		}
		if len(s.steps) != len(ref.steps) {
			return fmt.Errorf("subset: %s has %d time steps in %d but %s has %d (hint: every variable needs the same time steps)",
				s.req.label, len(s.steps), year, ref.req.label, len(ref.steps))
		}
		for i, st := range s.steps {
			a, b := st.axis.Times[st.t], ref.steps[i].axis.Times[ref.steps[i].t]
			if !a.Equal(b) {
				return fmt.Errorf("subset: time step %d of %d differs between %s (%s, in %s) and %s (%s, in %s)",
					i, year, s.req.label, a, filepath.Base(st.f.Path()), ref.req.label, b, filepath.Base(ref.steps[i].f.Path()))
			}
		}
	}
	// Months, then the stride.
	n := 0
	for i, st := range ref.steps {
		if !o.anyMonth && !o.months[st.axis.Times[st.t].Month] {
			continue
		}
		if n%o.stride == 0 {
			p.keep = append(p.keep, i)
		}
		n++
	}
	if len(p.keep) == 0 {
		return fmt.Errorf("subset: no time step of %d is left after the months setting (%d steps in the year)", year, len(ref.steps))
	}
	p.timeUnit, p.timeCal = r0.axis.UnitsAttr, r0.axis.CalendarAttr
	for _, i := range p.keep {
		st := ref.steps[i]
		if st.axis.UnitsAttr == p.timeUnit && st.axis.CalendarAttr == p.timeCal {
			p.timeVals = append(p.timeVals, st.axis.Values[st.t]) // the file's own numbers
			continue
		}
		x, err := r0.axis.Units.Encode(st.axis.Times[st.t])
		if err != nil {
			return fmt.Errorf("subset: re-encode time %s of %s: %v", st.axis.Times[st.t], st.f.Path(), err)
		}
		p.timeVals = append(p.timeVals, x)
	}
	w, err := selectWindow(g0.Lat, g0.Lon, g0.Global, o.box, halo)
	if err != nil {
		return fmt.Errorf("subset: grid of %s: %v", r0.f.Path(), err)
	}
	p.win = w
	p.lat, p.lon = w.outLat(), w.outLon()
	return nil
}

func sameCoords(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > gridTol {
			return false
		}
	}
	return true
}

// readWindow reads the window of v for the leading (time, level)
// indices lead with counts leadCount (nk levels at most one > 1), into a
// window-sized slab per level.
func (p *planned) readWindow(v *ncio.Var, lead, leadCount []int) ([][]float32, error) {
	w := p.win
	plane := w.nrow * w.ncol
	nk := 1
	for _, c := range leadCount {
		nk *= c
	}
	buf := p.bufs.get(nk * plane)
	start := append(append([]int(nil), lead...), w.row0, 0)
	count := append(append([]int(nil), leadCount...), w.nrow, 0)
	if len(w.cols) == 1 {
		start[len(lead)+1] = w.cols[0].start
		count[len(lead)+1] = w.cols[0].n
		if err := v.ReadFloat32Into(buf, start, count); err != nil {
			return nil, err
		}
	} else {
		off := 0
		for _, sp := range w.cols {
			start[len(lead)+1], count[len(lead)+1] = sp.start, sp.n
			tmp := p.bufs.get(nk * w.nrow * sp.n)
			if err := v.ReadFloat32Into(tmp, start, count); err != nil {
				return nil, err
			}
			defer p.bufs.put(tmp)
			for k := 0; k < nk; k++ {
				for r := 0; r < w.nrow; r++ {
					copy(buf[k*plane+r*w.ncol+off:k*plane+r*w.ncol+off+sp.n], tmp[(k*w.nrow+r)*sp.n:(k*w.nrow+r+1)*sp.n])
				}
			}
			off += sp.n
		}
	}
	out := make([][]float32, nk)
	for k := range out {
		out[k] = buf[k*plane : (k+1)*plane]
	}
	return out, nil
}

func (p *planned) readStep(i int) (*stepData, error) {
	ti := p.keep[i]
	d := &stepData{slabs: make(map[*source][][]float32, len(p.sources)), win: p.win}
	for _, s := range p.sources {
		st := s.steps[ti]
		lead, cnt := []int{st.t}, []int{1}
		if s.lv != nil {
			lead, cnt = []int{st.t, s.k0}, []int{1, s.nk}
		}
		sl, err := p.readWindow(st.v, lead, cnt)
		if err != nil {
			return nil, err
		}
		if !s.conv.Identity() {
			for _, l := range sl {
				s.conv.Apply32(l)
			}
		}
		d.slabs[s] = sl
	}
	return d, nil
}

// landFraction copies land_area_fraction (as a fraction) from the first
// file that has it on the same grid.
func (p *planned) landFraction(mapping map[string]string) error {
	r := request{std: "land_area_fraction", names: namesFor("land_area_fraction", mapping)}
	for _, f := range p.files {
		var v *ncio.Var
		for _, c := range f.Vars() {
			if c.StandardName() == r.std || contains(r.names, c.Name()) {
				v = c
				break
			}
		}
		if v == nil {
			continue
		}
		g, err := f.GridOf(v)
		if err != nil {
			return err
		}
		dims := v.DimNames()
		n := len(dims)
		if n < 2 || n > 3 || dims[n-2] != g.LatDim || dims[n-1] != g.LonDim {
			p.notes = append(p.notes, fmt.Sprintf("land_area_fraction %q in %s has dimensions (%s); not copied", v.Name(), f.Path(), strings.Join(dims, ", ")))
			return nil
		}
		ref := p.sources[0].steps[0]
		g0, _ := ref.f.GridOf(ref.v)
		if !sameCoords(g.Lat, g0.Lat) || !sameCoords(g.Lon, g0.Lon) {
			p.notes = append(p.notes, fmt.Sprintf("land_area_fraction in %s is on another grid; not copied", f.Path()))
			return nil
		}
		lead, cnt := []int{}, []int{}
		if n == 3 {
			lead, cnt = []int{0}, []int{1}
		}
		sl, err := p.readWindow(v, lead, cnt)
		if err != nil {
			return err
		}
		units := v.Units()
		if units == "" {
			units = "1"
			p.notes = append(p.notes, fmt.Sprintf("land_area_fraction %q in %s has no units; taken as a fraction (1)", v.Name(), f.Path()))
		}
		c, err := ncio.NewConverter(units, "1")
		if err != nil {
			return fmt.Errorf("subset: land_area_fraction %q in %s has units %q, not a fraction or percent: %v", v.Name(), f.Path(), units, err)
		}
		c.Apply32(sl[0])
		p.land = make([]float32, p.win.outNRow*p.win.outNCol)
		p.win.crop(p.land, sl[0])
		return nil
	}
	return nil
}

func contains(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

// write creates fields.nc and streams every kept time step through it.
func (p *planned) write(ctx context.Context, path string, prov ncio.Provenance, o *options) (int, error) {
	ny, nx := len(p.lat), len(p.lon)
	w, err := ncio.Create(path)
	if err != nil {
		return 0, err
	}
	defer w.Abort()
	w.DefTime(p.timeVals, p.timeUnit, p.timeCal)
	w.DefLat(p.lat)
	w.DefLon(p.lon)
	dims := []string{"time", "lat", "lon"}
	for _, ch := range p.channels {
		attrs := []ncio.Attr{}
		if ch.standardName != "" {
			attrs = append(attrs, ncio.Attr{Name: "standard_name", Value: ch.standardName})
		}
		attrs = append(attrs, ncio.Attr{Name: "long_name", Value: ch.longName},
			ncio.Attr{Name: "units", Value: ch.units}, ncio.Attr{Name: "quantity", Value: ch.quantity})
		if ch.levelPa > 0 {
			attrs = append(attrs, ncio.Attr{Name: "level_pa", Value: ch.levelPa})
		}
		if ch.layer != nil {
			attrs = append(attrs, ncio.Attr{Name: "layer_bottom_pa", Value: ch.layer[0]}, ncio.Attr{Name: "layer_top_pa", Value: ch.layer[1]})
		}
		if ch.comment != "" {
			attrs = append(attrs, ncio.Attr{Name: "comment", Value: ch.comment})
		}
		w.DefVar(ncio.VarSpec{Name: ch.name, Type: ncio.Float, Dims: dims, Fill: FillValue,
			Deflate: o.deflate, Shuffle: o.shuffle, Chunks: []int{1, ny, nx}, Attrs: attrs})
	}
	if p.land != nil {
		w.DefVar(ncio.VarSpec{Name: "land_area_fraction", Type: ncio.Float, Dims: []string{"lat", "lon"}, Fill: FillValue,
			Deflate: o.deflate, Shuffle: o.shuffle, Attrs: []ncio.Attr{
				{Name: "standard_name", Value: "land_area_fraction"}, {Name: "long_name", Value: "land area fraction"},
				{Name: "units", Value: "1"}}})
	}
	w.PutConventions("squall subset", prov)
	if err := w.EndDef(); err != nil {
		return 0, err
	}
	if p.land != nil {
		if err := w.WriteFloat32("land_area_fraction", nil, nil, nanToFill(p.land)); err != nil {
			return 0, err
		}
	}
	plane := p.win.nrow * p.win.ncol
	err = stream.Steps(ctx, len(p.keep), o.workers,
		p.readStep,
		func(t int, d *stepData) ([][]float32, error) {
			out := make([][]float32, len(p.channels))
			full := p.bufs.get(plane)
			defer p.bufs.put(full)
			defer d.release(p.bufs)
			for i, ch := range p.channels {
				ch.compute(d, full)
				box := p.bufs.get(ny * nx)
				p.win.crop(box, full)
				if ch.out != nil {
					ch.out.Apply32(box)
				}
				out[i] = nanToFill(box)
			}
			return out, nil
		},
		func(t int, out [][]float32) error {
			for i, ch := range p.channels {
				if err := w.WriteFloat32(ch.name, []int{t, 0, 0}, []int{1, ny, nx}, out[i]); err != nil {
					return err
				}
				p.bufs.put(out[i])
			}
			return nil
		})
	if err != nil {
		return 0, err
	}
	return len(p.keep), w.Close()
}

// bufPool recycles the float32 buffers of the step loop: a step of the
// bench grid reads about 2 MB, and allocating it afresh every step makes
// the garbage collector and page faults a visible share of the run.
type bufPool struct {
	mu   sync.Mutex
	free map[int][][]float32
}

func (bp *bufPool) get(n int) []float32 {
	bp.mu.Lock()
	defer bp.mu.Unlock()
	if l := bp.free[n]; len(l) > 0 {
		b := l[len(l)-1]
		bp.free[n] = l[:len(l)-1]
		return b
	}
	return make([]float32, n)
}

func (bp *bufPool) put(b []float32) {
	bp.mu.Lock()
	defer bp.mu.Unlock()
	if bp.free == nil {
		bp.free = map[int][][]float32{}
	}
	bp.free[len(b)] = append(bp.free[len(b)], b)
}

// release returns the step's slabs to the pool.
func (d *stepData) release(bp *bufPool) {
	for _, sl := range d.slabs {
		if len(sl) > 0 {
			bp.put(sl[0][:len(sl)*len(sl[0])]) // the levels are consecutive parts of one buffer
		}
	}
}

func nanToFill(xs []float32) []float32 {
	for i, x := range xs {
		if x != x || math.IsInf(float64(x), 0) {
			xs[i] = FillValue
		}
	}
	return xs
}
