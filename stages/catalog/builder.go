package catalog

import (
	"fmt"
	"math"
	"sort"

	"github.com/squall-climate/squall/stages/grid"
)

// Class values of the shared mask format (flag_values 0b, 1b, 2b).
const (
	Background       = 0
	TropicalCyclone  = 1
	AtmosphericRiver = 2
)

// ClassNames are the flag_meanings of the shared mask format, by value.
var ClassNames = [3]string{"background", "tropical_cyclone", "atmospheric_river"}

// Time is one time step as the builder sees it: Hours is the time in hours
// since a reference common to the whole run (so durations are differences),
// ISO the decoded model-calendar date ("1990-01-01T06:00:00"); Year and
// Month come from the model calendar too.
type Time struct {
	Hours       float64
	ISO         string
	Year, Month int
}

// Fields are the optional per-step fields read from fields.nc, each in
// (lat, lon) order on the mask's grid; nil when absent. NaN marks missing
// values and is skipped.
type Fields struct {
	SLP  []float32 // air_pressure_at_mean_sea_level, Pa
	Wind []float32 // 10 m wind speed, m s-1
	IVT  []float32 // kg m-1 s-1
	IWV  []float32 // kg m-2
}

// RegionMask is a named region as a mask of the cells whose centre lies
// inside it.
type RegionMask struct {
	Name string
	In   []bool
}

// Point is one step of an event's track.
type Point struct {
	Step    int
	Time    Time
	Lat     float64 // area-weighted centroid, degrees north
	Lon     float64 // degrees east in [-180, 180]
	AreaKm2 float64
	Pixels  int
	MinSLP  float64 // Pa, NaN when unknown
	MaxWind float64 // m s-1
	MaxIVT  float64 // kg m-1 s-1
	MeanIVT float64 // area-weighted over the object's cells
	MaxIWV  float64 // kg m-2
	OnLand  bool    // some cell of the object is land
}

// Landfall is where and when an event first touches land.
type Landfall struct {
	Step    int
	Time    Time
	Lat     float64 // centre of the land cell of the object nearest its centroid
	Lon     float64
	Regions []string // regions containing that cell
}

// Event is one linked event with its summary.
type Event struct {
	ID         int
	Class      int
	Points     []Point
	SplitFrom  int // ID of the event it split from, 0 for none
	MergedInto int // ID of the event it merged into, 0 for none
	Landfall   *Landfall
	Regions    []string // every region any of its cells lies in, campaign order
	MaxAreaKm2 float64
	MinSLP     float64
	MaxWind    float64
	MaxIVT     float64
	MeanIVT    float64 // area-weighted over all its cell-steps
	MaxIWV     float64
	ivtSum     float64
	ivtArea    float64
}

// Start and End are the first and last step times.
func (e *Event) Start() Time { return e.Points[0].Time }
func (e *Event) End() Time   { return e.Points[len(e.Points)-1].Time }

// DurationHours is End - Start: zero for an event seen at one step.
func (e *Event) DurationHours() float64 { return e.End().Hours - e.Start().Hours }

// Category is the Saffir-Simpson category of the event's maximum wind
// (tropical cyclones only; 0 otherwise). See SaffirSimpson for the caution.
func (e *Event) Category() int {
	if e.Class != TropicalCyclone {
		return 0
	}
	return SaffirSimpson(e.MaxWind)
}

// Builder turns a time series of class masks into events. It holds one
// Linker per class and the per-event accumulators; memory is proportional
// to the number of events and their track points, plus two label images.
type Builder struct {
	g       *grid.Grid
	area    []float64 // m2
	land    []bool
	regions []RegionMask
	linkers [3]*Linker
	acc     [3][]*Event // parallel to linkers[k].Events()
	steps   int
	// LinkKmPer6h is, per class, the largest centroid displacement in 6
	// hours for linking objects that do not overlap (0: overlap only); it
	// scales with the time between steps.
	LinkKmPer6h [3]float64
	prevHours   float64
	started     bool
}

// NewBuilder makes a Builder for a grid. land (may be nil) marks land
// cells; regions (may be nil) are reported per event.
func NewBuilder(g *grid.Grid, land []bool, regions []RegionMask) (*Builder, error) {
	if land != nil && len(land) != g.Len() {
		return nil, fmt.Errorf("catalog: land mask has %d cells, grid has %d", len(land), g.Len())
	}
	for _, r := range regions {
		if len(r.In) != g.Len() {
			return nil, fmt.Errorf("catalog: region %q mask has %d cells, grid has %d", r.Name, len(r.In), g.Len())
		}
	}
	b := &Builder{g: g, area: g.CellAreas(), land: land, regions: regions}
	for _, k := range []int{TropicalCyclone, AtmosphericRiver} {
		b.linkers[k] = NewLinker(b.area)
	}
	return b, nil
}

// Break ends every open event (a gap in time).
func (b *Builder) Break() {
	for _, l := range b.linkers {
		if l != nil {
			l.Break()
		}
	}
}

// Step adds one time step: mask holds class values per cell. Values other
// than 0, 1, 2 are an error (readers check flag_values first and name the
// file; this is the last line of defence).
func (b *Builder) Step(step int, t Time, mask []byte, f Fields) error {
	if len(mask) != b.g.Len() {
		return fmt.Errorf("catalog: mask has %d cells, grid has %d", len(mask), b.g.Len())
	}
	for k, v := range mask {
		if v > AtmosphericRiver {
			i, j := b.g.RowCol(k)
			return fmt.Errorf("catalog: mask value %d at lat %g lon %g is not one of the flag_values 0, 1, 2", v, b.g.Lat[i], b.g.Lon[j])
		}
	}
	dtHours := 0.0
	if b.started {
		dtHours = t.Hours - b.prevHours
	}
	b.started, b.prevHours = true, t.Hours
	for _, k := range []int{TropicalCyclone, AtmosphericRiver} {
		lab, err := b.g.Components(grid.Equal(mask, byte(k)))
		if err != nil {
			return err
		}
		evOf, err := b.linkers[k].Step(step, lab, b.LinkKmPer6h[k]*dtHours/6)
		if err != nil {
			return err
		}
		for len(b.acc[k]) < len(b.linkers[k].Events()) {
			b.acc[k] = append(b.acc[k], &Event{Class: k, MinSLP: math.NaN(), MaxWind: math.NaN(),
				MaxIVT: math.NaN(), MaxIWV: math.NaN()})
		}
		for c := range lab.Components {
			b.addObject(b.acc[k][evOf[c]], step, t, lab, int32(c+1), f)
		}
	}
	b.steps++
	return nil
}

func nanMin(a, b float64) float64 {
	if math.IsNaN(a) || b < a {
		return b
	}
	return a
}

func nanMax(a, b float64) float64 {
	if math.IsNaN(a) || b > a {
		return b
	}
	return a
}

func (b *Builder) addObject(e *Event, step int, t Time, lab *grid.Labelling, label int32, f Fields) {
	comp := lab.Components[label-1]
	pix := lab.Pixels(label)
	p := Point{Step: step, Time: t, Lat: comp.CentroidLat, Lon: comp.CentroidLon,
		AreaKm2: comp.Area / 1e6, Pixels: comp.Pixels,
		MinSLP: math.NaN(), MaxWind: math.NaN(), MaxIVT: math.NaN(), MeanIVT: math.NaN(), MaxIWV: math.NaN()}
	var ivtSum, ivtArea float64
	landCell, landDist := -1, math.Inf(1)
	inRegion := make([]bool, len(b.regions))
	for _, k32 := range pix {
		k := int(k32)
		if f.SLP != nil {
			if v := float64(f.SLP[k]); !math.IsNaN(v) {
				p.MinSLP = nanMin(p.MinSLP, v)
			}
		}
		if f.Wind != nil {
			if v := float64(f.Wind[k]); !math.IsNaN(v) {
				p.MaxWind = nanMax(p.MaxWind, v)
			}
		}
		if f.IVT != nil {
			if v := float64(f.IVT[k]); !math.IsNaN(v) {
				p.MaxIVT = nanMax(p.MaxIVT, v)
				ivtSum += v * b.area[k]
				ivtArea += b.area[k]
			}
		}
		if f.IWV != nil {
			if v := float64(f.IWV[k]); !math.IsNaN(v) {
				p.MaxIWV = nanMax(p.MaxIWV, v)
			}
		}
		if b.land != nil && b.land[k] {
			p.OnLand = true
			if e.Landfall == nil {
				i, j := b.g.RowCol(k)
				// Ties go to the lower cell index: pixels come in ascending order.
				if d := grid.Distance(comp.CentroidLat, comp.CentroidLon, b.g.Lat[i], b.g.Lon[j]); d < landDist {
					landCell, landDist = k, d
				}
			}
		}
		for r := range b.regions {
			if b.regions[r].In[k] {
				inRegion[r] = true
			}
		}
	}
	if ivtArea > 0 {
		p.MeanIVT = ivtSum / ivtArea
	}
	if landCell >= 0 {
		i, j := b.g.RowCol(landCell)
		lf := &Landfall{Step: step, Time: t, Lat: b.g.Lat[i], Lon: grid.NormalizeLon180(b.g.Lon[j])}
		for _, r := range b.regions {
			if r.In[landCell] {
				lf.Regions = append(lf.Regions, r.Name)
			}
		}
		e.Landfall = lf
	}
	for r, in := range inRegion {
		if in && !contains(e.Regions, b.regions[r].Name) {
			e.Regions = append(e.Regions, b.regions[r].Name)
		}
	}
	e.Points = append(e.Points, p)
	e.MaxAreaKm2 = math.Max(e.MaxAreaKm2, p.AreaKm2)
	if !math.IsNaN(p.MinSLP) {
		e.MinSLP = nanMin(e.MinSLP, p.MinSLP)
	}
	if !math.IsNaN(p.MaxWind) {
		e.MaxWind = nanMax(e.MaxWind, p.MaxWind)
	}
	if !math.IsNaN(p.MaxIVT) {
		e.MaxIVT = nanMax(e.MaxIVT, p.MaxIVT)
	}
	if !math.IsNaN(p.MaxIWV) {
		e.MaxIWV = nanMax(e.MaxIWV, p.MaxIWV)
	}
	e.ivtSum += ivtSum
	e.ivtArea += ivtArea
}

func contains(xs []string, s string) bool {
	for _, x := range xs {
		if x == s {
			return true
		}
	}
	return false
}

// Filter says which events to keep.
type Filter struct {
	MinSteps   int     // at least this many steps
	MinAreaKm2 float64 // maximum area at least this
}

// Events returns the events that pass the filter, numbered 1..N in order
// of (first step, class, order of creation), with split and merge
// relations translated to the new ids (0 when the related event was
// filtered out). Region lists follow the campaign's region order.
func (b *Builder) Events(flt Filter) []*Event {
	type ref struct {
		k, i int
	}
	var all []ref
	for _, k := range []int{TropicalCyclone, AtmosphericRiver} {
		for i := range b.acc[k] {
			all = append(all, ref{k, i})
		}
	}
	sort.SliceStable(all, func(x, y int) bool {
		a, c := b.acc[all[x].k][all[x].i], b.acc[all[y].k][all[y].i]
		if a.Points[0].Step != c.Points[0].Step {
			return a.Points[0].Step < c.Points[0].Step
		}
		if all[x].k != all[y].k {
			return all[x].k < all[y].k
		}
		return all[x].i < all[y].i
	})
	newID := map[ref]int{}
	var out []*Event
	for _, r := range all {
		e := b.acc[r.k][r.i]
		if len(e.Points) < flt.MinSteps || e.MaxAreaKm2 < flt.MinAreaKm2 {
			continue
		}
		e.ID = len(out) + 1
		newID[r] = e.ID
		out = append(out, e)
	}
	for _, r := range all {
		e := b.acc[r.k][r.i]
		if newID[r] == 0 {
			continue
		}
		l := b.linkers[r.k].Events()[r.i]
		e.SplitFrom, e.MergedInto = 0, 0
		if l.SplitFrom > 0 {
			e.SplitFrom = newID[ref{r.k, l.SplitFrom - 1}]
		}
		if l.MergedInto > 0 {
			e.MergedInto = newID[ref{r.k, l.MergedInto - 1}]
		}
		if e.ivtArea > 0 {
			e.MeanIVT = e.ivtSum / e.ivtArea
		} else {
			e.MeanIVT = math.NaN()
		}
		order := map[string]int{}
		for i, rg := range b.regions {
			order[rg.Name] = i
		}
		sort.SliceStable(e.Regions, func(x, y int) bool { return order[e.Regions[x]] < order[e.Regions[y]] })
	}
	return out
}
