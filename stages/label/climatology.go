package label

import (
	"fmt"
	"math"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// Variables of ivt_climatology.nc.
const (
	ClimThresholdVar = "threshold"
	ClimSamplesVar   = "samples"
)

// HistogramRange returns the bin width and count used for a quantity's
// climatology: IVT 0..2000 kg m-1 s-1 in 5 kg m-1 s-1 bins, IWV 0..100
// kg m-2 in 0.25 kg m-2 bins. Values beyond the range count in the last
// bin, so a percentile there reads as the range's top.
func HistogramRange(quantity string) (width float64, bins int) {
	if quantity == QIWV {
		return 0.25, 400
	}
	return 5, 400
}

// Histogram counts, per grid cell, how many values fell in each of a
// fixed set of bins [k*Width, (k+1)*Width). It holds Cells*Bins uint16
// counts (2 bytes each: 52 MB for a 1-degree global grid with 400 bins),
// which is what lets a per-cell percentile over decades of steps be taken
// in one streaming pass with bounded memory.
type Histogram struct {
	Cells, Bins int
	Width       float64
	counts      []uint16
	n           []uint16
}

// NewHistogram allocates an empty histogram.
func NewHistogram(cells, bins int, width float64) *Histogram {
	return &Histogram{Cells: cells, Bins: bins, Width: width,
		counts: make([]uint16, cells*bins), n: make([]uint16, cells)}
}

// Add counts one field (one value per cell); NaN is skipped. It fails
// when a cell has seen 65535 values (the uint16 counters would wrap).
func (h *Histogram) Add(field []float64) error {
	if len(field) != h.Cells {
		return fmt.Errorf("label: histogram of %d cells given a field of %d", h.Cells, len(field))
	}
	for i, x := range field {
		if math.IsNaN(x) {
			continue
		}
		if h.n[i] == math.MaxUint16 {
			return fmt.Errorf("label: more than %d samples in one cell and month; split the climatology period", math.MaxUint16)
		}
		b := int(x / h.Width)
		if b < 0 {
			b = 0
		} else if b >= h.Bins {
			b = h.Bins - 1
		}
		h.counts[i*h.Bins+b]++
		h.n[i]++
	}
	return nil
}

// Count returns the number of values counted in a cell.
func (h *Histogram) Count(cell int) int { return int(h.n[cell]) }

// Percentile returns, per cell, the p-th percentile (0..100) of its values
// in the sense of numpy's default ("linear"): with N values sorted, the
// value at position (N-1)*p/100, interpolating between neighbours. Each
// order statistic is placed inside its bin as if the bin's k values were
// spread evenly (at lo + Width*(i+0.5)/k), so the result is within one bin
// width of the exact percentile. Cells with fewer than minCount values get
// NaN.
func (h *Histogram) Percentile(p float64, minCount int) []float64 {
	out := make([]float64, h.Cells)
	for i := range out {
		n := int(h.n[i])
		if n == 0 || n < minCount {
			out[i] = math.NaN()
			continue
		}
		pos := float64(n-1) * p / 100
		lo := int(math.Floor(pos))
		frac := pos - float64(lo)
		a := h.orderStat(i, lo)
		if frac == 0 || lo+1 >= n {
			out[i] = a
			continue
		}
		out[i] = a + frac*(h.orderStat(i, lo+1)-a)
	}
	return out
}

// orderStat estimates the r-th smallest value (0-based) of a cell.
func (h *Histogram) orderStat(cell, r int) float64 {
	c := h.counts[cell*h.Bins : (cell+1)*h.Bins]
	cum := 0
	for b, k := range c {
		if r < cum+int(k) {
			return h.Width * (float64(b) + (float64(r-cum)+0.5)/float64(k))
		}
		cum += int(k)
	}
	return h.Width * float64(h.Bins)
}

// Climatology is a read ivt_climatology.nc: a per-cell, per-calendar-month
// threshold (a percentile of IVT or IWV) on a grid.
type Climatology struct {
	Path       string
	Grid       *grid.Grid
	Quantity   string
	Percentile float64
	threshold  [12][]float64
}

// Month returns the thresholds of a calendar month (1..12), NaN where the
// climatology had too few samples.
func (c *Climatology) Month(m int) []float64 { return c.threshold[m-1] }

// ReadClimatology reads an ivt_climatology.nc.
func ReadClimatology(path string) (*Climatology, error) {
	f, err := ncio.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	ng, err := f.Grid()
	if err != nil {
		return nil, err
	}
	g, err := grid.New(ng.Lat, ng.Lon)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	v, err := f.Var(ClimThresholdVar)
	if err != nil {
		return nil, err
	}
	if sh := v.Shape(); len(sh) != 3 || sh[0] != 12 || sh[1] != g.NLat() || sh[2] != g.NLon() {
		return nil, fmt.Errorf("%s: variable %s has shape %v, want (12, %d, %d)", path, ClimThresholdVar, sh, g.NLat(), g.NLon())
	}
	c := &Climatology{Path: path, Grid: g, Quantity: v.AttrString("quantity")}
	c.Percentile, _ = v.AttrFloat64("percentile")
	all, err := v.ReadFloat64(nil, nil)
	if err != nil {
		return nil, err
	}
	n := g.Len()
	for m := range 12 {
		c.threshold[m] = all[m*n : (m+1)*n]
	}
	return c, nil
}

// Check verifies that the climatology fits a fields file: same grid and
// the quantity the AR detection will threshold.
func (c *Climatology) Check(fl *Fields, quantity string) error {
	if err := c.Grid.SameAs(fl.Grid); err != nil {
		return fmt.Errorf("climatology %s does not match %s: %w (compute the climatology from the same subset stage)", c.Path, fl.Path, err)
	}
	if c.Quantity != quantity {
		return fmt.Errorf("climatology %s is of %q but %s gives %q for the AR detection; compute both from the same channels", c.Path, c.Quantity, fl.Path, quantity)
	}
	return nil
}

// ClimatologyMonth is the percentile field of one month with its sample
// counts, as written by WriteClimatology.
type ClimatologyMonth struct {
	Threshold []float64 // NaN where too few samples
	Samples   []int
}

// ClimatologyInfo describes how a climatology was made, for its attributes.
type ClimatologyInfo struct {
	Quantity   string
	Percentile float64
	Scenario   string
	Years      string // e.g. "1980-1999, 2005"
	MinSamples int
}

// WriteClimatology writes ivt_climatology.nc: dims month (12), lat, lon;
// float threshold(month, lat, lon) with quantity, percentile, units and
// _FillValue where a cell has too few samples; int samples(month, lat,
// lon).
func WriteClimatology(path string, g *grid.Grid, months [12]ClimatologyMonth, info ClimatologyInfo, prov ncio.Provenance) error {
	w, err := ncio.Create(path)
	if err != nil {
		return err
	}
	units := "kg m-1 s-1"
	if info.Quantity == QIWV {
		units = "kg m-2"
	}
	w.DefCoord("month", []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12},
		ncio.Attr{Name: "long_name", Value: "calendar month"}, ncio.Attr{Name: "units", Value: "1"})
	w.DefLat(g.Lat)
	w.DefLon(g.Lon)
	const fill = float32(-9999)
	w.DefVar(ncio.VarSpec{Name: ClimThresholdVar, Type: ncio.Float, Dims: []string{"month", "lat", "lon"}, Fill: fill,
		Chunks: []int{1, g.NLat(), g.NLon()}, Deflate: 1, Shuffle: true,
		Attrs: []ncio.Attr{
			{Name: "long_name", Value: fmt.Sprintf("per-cell monthly %gth percentile of %s", info.Percentile, info.Quantity)},
			{Name: "units", Value: units},
			{Name: "quantity", Value: info.Quantity},
			{Name: "percentile", Value: info.Percentile},
			{Name: "scenario", Value: info.Scenario},
			{Name: "years", Value: info.Years},
			{Name: "min_samples", Value: int32(info.MinSamples)},
		}})
	w.DefVar(ncio.VarSpec{Name: ClimSamplesVar, Type: ncio.Int, Dims: []string{"month", "lat", "lon"},
		Chunks: []int{1, g.NLat(), g.NLon()}, Deflate: 1,
		Attrs: []ncio.Attr{{Name: "long_name", Value: "number of time steps counted"}, {Name: "units", Value: "1"}}})
	w.PutConventions("squall per-cell monthly climatology for relative AR thresholds", prov)
	if err := w.EndDef(); err != nil {
		w.Abort()
		return err
	}
	n := g.Len()
	t32 := make([]float32, n)
	s32 := make([]int32, n)
	for m := range 12 {
		for i := range n {
			x := months[m].Threshold[i]
			if math.IsNaN(x) {
				t32[i] = fill
			} else {
				t32[i] = float32(x)
			}
			s32[i] = int32(months[m].Samples[i])
		}
		if err := w.WriteFloat32(ClimThresholdVar, []int{m, 0, 0}, []int{1, g.NLat(), g.NLon()}, t32); err != nil {
			w.Abort()
			return err
		}
		if err := w.WriteInt32(ClimSamplesVar, []int{m, 0, 0}, []int{1, g.NLat(), g.NLon()}, s32); err != nil {
			w.Abort()
			return err
		}
	}
	return w.Close()
}

// ARQuantity opens the AR source of a fields file (the same choice the
// label stage makes: ivt, ivt_u/ivt_v, q/u/v levels, then iwv) and returns
// a reader of it per step, with the quantity's name.
func ARQuantity(fl *Fields, ivtTop float64) (quantity string, read func(step int) ([]float64, error), err error) {
	s, err := planAR(fl, &ARConfig{IVTTop: ivtTop})
	if err != nil {
		return "", nil, err
	}
	return s.quantity, func(step int) ([]float64, error) { return fl.readAR(s, step, ivtTop) }, nil
}
