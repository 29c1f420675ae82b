package trends

import (
	"context"
	"encoding/json"
	"fmt"
	"sort"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// Map sources.
const (
	SourceMasks  = "masks"
	SourceTracks = "track points"
)

// freqMaps holds the per-cell event frequency of every sample and class.
type freqMaps struct {
	source   string
	quantity string
	units    string
	lat, lon []float64
	classes  []string
	// per sample (index as in samples), per class: values in (lat, lon)
	// order; nil when the sample has no map.
	values  [][][]float64
	samples []*sample
	base    int
}

// frequencyMaps builds the maps: from class masks when any input holds a
// mask.nc (fraction of time steps each cell lies inside an event of the
// class), otherwise from catalog track points on a regular global grid
// (centroid positions per year in each cell). Returns nil when neither is
// available.
func frequencyMaps(ctx context.Context, cfg config, samples []*sample, base int) (*freqMaps, error) {
	anyMasks, anyPoints := false, false
	for _, s := range samples {
		anyMasks = anyMasks || len(s.masks) > 0
		anyPoints = anyPoints || s.hasPoints
	}
	switch {
	case anyMasks:
		return maskMaps(ctx, samples, base)
	case anyPoints:
		return trackMaps(cfg, samples, base)
	}
	return nil, nil
}

func trackMaps(cfg config, samples []*sample, base int) (*freqMaps, error) {
	g, err := grid.Global(cfg.mapRes, cfg.mapRes)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", setMapRes, err)
	}
	m := &freqMaps{source: SourceTracks, quantity: "event centroid positions per year in the cell",
		units: "year-1", lat: g.Lat, lon: g.Lon, classes: []string{ClassTC, ClassAR}, samples: samples, base: base}
	m.values = make([][][]float64, len(samples))
	for si, s := range samples {
		if !s.hasPoints || len(s.years) == 0 {
			continue
		}
		perClass := make([][]float64, len(m.classes))
		for ci := range perClass {
			perClass[ci] = make([]float64, g.Len())
		}
		for _, e := range s.events {
			ci := indexOf(m.classes, e.class)
			if ci < 0 {
				continue
			}
			for k := range e.lats {
				if i, j, ok := g.Locate(e.lats[k], e.lons[k]); ok {
					perClass[ci][g.Index(i, j)]++
				}
			}
		}
		ny := float64(len(s.years))
		for _, v := range perClass {
			for k := range v {
				v[k] /= ny
			}
		}
		m.values[si] = perClass
	}
	return m, nil
}

// maskMaps reads class_mask of every mask.nc, one file and one time step
// at a time (netCDF calls stay on this goroutine).
func maskMaps(ctx context.Context, samples []*sample, base int) (*freqMaps, error) {
	m := &freqMaps{source: SourceMasks, quantity: "fraction of time steps the cell lies inside an event of the class",
		units: "1", classes: []string{ClassTC, ClassAR}, samples: samples, base: base}
	m.values = make([][][]float64, len(samples))
	var ref *grid.Grid
	for si, s := range samples {
		if len(s.masks) == 0 {
			continue
		}
		files := append([]string(nil), s.masks...)
		sort.Strings(files)
		var counts [][]float64
		steps := 0
		for _, path := range files {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			g, c, n, err := readMaskCounts(path, m.classes)
			if err != nil {
				return nil, err
			}
			if ref == nil {
				ref = g
				m.lat, m.lon = g.Lat, g.Lon
			} else if err := ref.SameAs(g); err != nil {
				return nil, fmt.Errorf("%s: class_mask grid differs from %s's: %v (frequency maps need one grid; regrid the masks)", path, samples[0].label(), err)
			}
			if counts == nil {
				counts = c
			} else {
				for ci := range counts {
					for k := range counts[ci] {
						counts[ci][k] += c[ci][k]
					}
				}
			}
			steps += n
		}
		if steps == 0 {
			continue
		}
		for ci := range counts {
			for k := range counts[ci] {
				counts[ci][k] /= float64(steps)
			}
		}
		m.values[si] = counts
	}
	if ref == nil {
		return nil, nil
	}
	return m, nil
}

// readMaskCounts counts, per class and cell, the time steps of class_mask
// equal to the class's flag value.
func readMaskCounts(path string, classes []string) (*grid.Grid, [][]float64, int, error) {
	f, err := ncio.Open(path)
	if err != nil {
		return nil, nil, 0, err
	}
	defer f.Close()
	v, err := f.Var("class_mask")
	if err != nil {
		return nil, nil, 0, err
	}
	dims := v.DimNames()
	if len(dims) != 3 {
		return nil, nil, 0, fmt.Errorf("%s: class_mask has dimensions %v, expected (time, lat, lon)", path, dims)
	}
	ng, err := f.GridOf(v)
	if err != nil {
		return nil, nil, 0, err
	}
	g, err := grid.New(ng.Lat, ng.Lon)
	if err != nil {
		return nil, nil, 0, fmt.Errorf("%s: %w", path, err)
	}
	// Flag value of each class from flag_values / flag_meanings (CF 3.5);
	// without them the mask.nc convention 1 = cyclone, 2 = river.
	flag := map[string]int{ClassTC: 1, ClassAR: 2}
	if fv, ok := v.AttrFloat64s("flag_values"); ok {
		mean := strings.Fields(v.AttrString("flag_meanings"))
		if len(mean) == len(fv) {
			flag = map[string]int{}
			for i, name := range mean {
				flag[name] = int(fv[i])
			}
		}
	}
	shape := v.Shape()
	nt, ny, nx := shape[0], shape[1], shape[2]
	counts := make([][]float64, len(classes))
	for ci := range counts {
		counts[ci] = make([]float64, ny*nx)
	}
	var flagOf [256]int // class index + 1 per byte value
	for ci, c := range classes {
		if fv, ok := flag[c]; ok && fv >= 0 && fv < 256 {
			flagOf[fv] = ci + 1
		}
	}
	for t := 0; t < nt; t++ {
		buf, err := v.ReadUint8([]int{t, 0, 0}, []int{1, ny, nx})
		if err != nil {
			return nil, nil, 0, err
		}
		for k, b := range buf {
			if ci := flagOf[b]; ci > 0 {
				counts[ci-1][k]++
			}
		}
	}
	return g, counts, nt, nil
}

func indexOf(xs []string, x string) int {
	for i, v := range xs {
		if v == x {
			return i
		}
	}
	return -1
}

// varName makes a netCDF variable name from free text: letters, digits and
// underscores only.
func varName(parts ...string) string {
	s := strings.Join(parts, "_")
	var b strings.Builder
	for _, r := range s {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '_':
			b.WriteRune(r)
		default:
			b.WriteRune('_')
		}
	}
	return b.String()
}

type mapVar struct {
	name, class, scenario, member, baseline string
	diff                                    bool
	data                                    []float64
}

func (m *freqMaps) vars() []mapVar {
	var out []mapVar
	for ci, c := range m.classes {
		for si, s := range m.samples {
			if m.values[si] == nil {
				continue
			}
			lbl := s.Scenario
			if s.Member != "" {
				lbl += "_" + s.Member
			}
			out = append(out, mapVar{name: varName(c, "frequency", lbl), class: c, scenario: s.Scenario, member: s.Member, data: m.values[si][ci]})
		}
	}
	if m.base >= 0 && m.values[m.base] != nil {
		b := m.samples[m.base]
		for ci, c := range m.classes {
			for si, s := range m.samples {
				if si == m.base || m.values[si] == nil {
					continue
				}
				lbl := s.Scenario
				if s.Member != "" {
					lbl += "_" + s.Member
				}
				d := make([]float64, len(m.values[si][ci]))
				for k := range d {
					d[k] = m.values[si][ci][k] - m.values[m.base][ci][k]
				}
				out = append(out, mapVar{name: varName(c, "frequency_difference", lbl, "minus", b.Scenario), class: c,
					scenario: s.Scenario, member: s.Member, baseline: b.Scenario, diff: true, data: d})
			}
		}
	}
	return out
}

// describe summarises the maps for trends.json (nil-safe).
func (m *freqMaps) describe() *MapsInfo {
	if m == nil {
		return nil
	}
	info := &MapsInfo{File: MapsFile, Source: m.source, Quantity: m.quantity, Units: m.units}
	for _, v := range m.vars() {
		info.Variables = append(info.Variables, v.name)
	}
	return info
}

// write creates maps.nc: CF-1.13, dims (lat, lon), one float variable per
// sample and class, and one difference variable per non-baseline sample.
func (m *freqMaps) write(path string, settings map[string]string) error {
	w, err := ncio.Create(path)
	if err != nil {
		return err
	}
	defer w.Abort()
	w.DefLat(m.lat)
	w.DefLon(m.lon)
	vars := m.vars()
	seen := map[string]bool{}
	for _, v := range vars {
		if seen[v.name] {
			return fmt.Errorf("%s: two maps would be called %s (scenario names that differ only in punctuation); rename a scenario", path, v.name)
		}
		seen[v.name] = true
		long := fmt.Sprintf("%s frequency, scenario %s", strings.ReplaceAll(v.class, "_", " "), v.scenario)
		if v.diff {
			long = fmt.Sprintf("%s frequency, scenario %s minus scenario %s", strings.ReplaceAll(v.class, "_", " "), v.scenario, v.baseline)
		}
		attrs := []ncio.Attr{{Name: "long_name", Value: long}, {Name: "units", Value: m.units},
			{Name: "comment", Value: m.quantity + " (" + m.source + ")"},
			{Name: "event_class", Value: v.class}, {Name: "scenario", Value: v.scenario}}
		if v.member != "" {
			attrs = append(attrs, ncio.Attr{Name: "member", Value: v.member})
		}
		if v.diff {
			attrs = append(attrs, ncio.Attr{Name: "baseline_scenario", Value: v.baseline})
		}
		if m.source == SourceMasks {
			attrs = append(attrs, ncio.Attr{Name: "cell_methods", Value: "time: mean"})
		}
		w.DefVar(ncio.VarSpec{Name: v.name, Type: ncio.Float, Dims: []string{"lat", "lon"}, Attrs: attrs,
			Fill: float32(-9999), Deflate: 4, Shuffle: true})
	}
	if err := w.PutConventions("squall trends: event frequency maps", ncio.Provenance{Tool: "squall", Kind: "trends",
		KindVersion: strconv.Itoa(version), Settings: settings}); err != nil {
		return err
	}
	w.PutGlobalAttr("comment", Caution)
	w.PutGlobalAttr("source", "squall trends from "+m.source)
	if err := w.EndDef(); err != nil {
		return err
	}
	for _, v := range vars {
		f := make([]float32, len(v.data))
		for k, x := range v.data {
			f[k] = float32(x)
		}
		if err := w.WriteFloat32(v.name, nil, nil, f); err != nil {
			return err
		}
	}
	return w.Close()
}

// settingsText renders settings canonically for the history attribute.
func settingsText(v pipeline.Values) map[string]string {
	out := map[string]string{}
	for k, x := range v {
		b, _ := json.Marshal(x)
		out[k] = string(b)
	}
	return out
}
