package shard

import (
	"encoding/hex"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/zeebo/blake3"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
	"github.com/squall-climate/squall/stages/normalize"
)

// Input file names this kind looks for.
const (
	NormalizedFile = normalize.NormalizedFile // preferred
	FieldsFile     = normalize.FieldsFile     // used when no input is normalised
	MaskFile       = "mask.nc"                // label output (shared format)
	MaskVar        = "class_mask"
)

// sample is one time step of one input file.
type sample struct {
	src       *dataFile
	t         int
	year      int
	dayOfYear float64
}

// dataFile is one data input (and its mask). Its files are open only
// while it is in the sources' small set of open files (acquire).
type dataFile struct {
	ref      pipeline.Input
	scenario int // index into sources.scenarios
	dataPath string
	maskPath string
	varNames []string
	times    *ncio.TimeAxis
	f        *ncio.File
	vars     []*ncio.Var
	mask     *ncio.File
	maskVar  *ncio.Var
}

// maxOpen bounds the inputs open at once: every open netCDF-4 file keeps
// its own chunk caches, so keeping all blocks open would make memory grow
// with the number of years.
const maxOpen = 4

// release closes the files of d.
func (d *dataFile) release() {
	if d.f != nil {
		d.f.Close()
	}
	if d.mask != nil {
		d.mask.Close()
	}
	d.f, d.mask, d.vars, d.maskVar = nil, nil, nil, nil
}

// acquire makes sure d's files are open, closing the least recently used
// input beyond maxOpen.
func (s *sources) acquire(d *dataFile) error {
	if i := slices.Index(s.open, d); i >= 0 {
		s.open = append(append(s.open[:i:i], s.open[i+1:]...), d)
		return nil
	}
	if len(s.open) >= maxOpen {
		s.open[0].release()
		s.open = s.open[1:]
	}
	f, err := ncio.Open(d.dataPath)
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	d.f = f
	for _, n := range d.varNames {
		v, err := f.Var(n)
		if err != nil {
			d.release()
			return fmt.Errorf("shard: %w", err)
		}
		d.vars = append(d.vars, v)
	}
	if d.maskPath != "" {
		m, err := ncio.Open(d.maskPath)
		if err != nil {
			d.release()
			return fmt.Errorf("shard: %w", err)
		}
		d.mask = m
		if d.maskVar, err = m.Var(MaskVar); err != nil {
			d.release()
			return fmt.Errorf("shard: %w", err)
		}
	}
	s.open = append(s.open, d)
	return nil
}

// sources are all inputs of a shard instance.
type sources struct {
	files     []*dataFile
	samples   []sample
	channels  []ChannelInfo
	classes   []string
	encoding  string
	lat, lon  []float64
	scenarios []string
	calendar  ncio.Calendar
	timeUnits ncio.TimeUnits
	unitsAttr string
	calAttr   string
	maskFill  *int8
	open      []*dataFile // open inputs, least recently used first
}

func (s *sources) close() {
	for _, d := range s.files {
		d.release()
	}
	s.open = nil
}

func (s *sources) years() []int {
	var ys []int
	for _, smp := range s.samples {
		ys = append(ys, smp.year)
	}
	slices.Sort(ys)
	return slices.Compact(ys)
}

func (s *sources) bytesPerSample() int64 {
	per := int64(4)
	if s.encoding == "binary16" {
		per = 2
	}
	n := int64(len(s.lat) * len(s.lon))
	b := per * n * int64(len(s.channels))
	if len(s.classes) > 0 {
		b += n
	}
	return b
}

func fileNamed(files []string, name string) string {
	for _, f := range files {
		if filepath.Base(f) == name {
			return f
		}
	}
	return ""
}

// openSources finds the data and mask inputs, opens them and checks that
// they agree (channels, grid, calendar, time steps).
func openSources(job *pipeline.Job, maskMember string) (*sources, error) {
	s := &sources{}
	var data []pipeline.Input
	name := NormalizedFile
	for _, in := range job.Inputs {
		if fileNamed(in.Files, NormalizedFile) != "" {
			data = append(data, in)
		}
	}
	if len(data) == 0 {
		name = FieldsFile
		for _, in := range job.Inputs {
			if fileNamed(in.Files, FieldsFile) != "" {
				data = append(data, in)
			}
		}
	}
	if len(data) == 0 {
		return nil, fmt.Errorf("shard: no input has %s or %s (hint: list a normalize or subset stage in the inputs)", NormalizedFile, FieldsFile)
	}
	sort.SliceStable(data, func(i, j int) bool {
		a, b := data[i], data[j]
		if a.Scenario != b.Scenario {
			return a.Scenario < b.Scenario
		}
		return a.Block < b.Block
	})
	masks := map[string][]pipeline.Input{}
	for _, in := range job.Inputs {
		if fileNamed(in.Files, MaskFile) != "" {
			masks[in.Scenario+"/"+in.Block] = append(masks[in.Scenario+"/"+in.Block], in)
		}
	}
	useMasks := len(masks) > 0
	seen := map[string]string{}
	for _, in := range data {
		key := in.Scenario + "/" + in.Block
		if m, dup := seen[key]; dup {
			return s, fmt.Errorf("shard: two data inputs for scenario %q block %s (members %q and %q) (hint: shard one sweep member per stage)", in.Scenario, in.Block, m, in.Member)
		}
		seen[key] = in.Member
		year, err := parseYear(in.Block)
		if err != nil {
			return s, err
		}
		d := &dataFile{ref: in}
		if i := slices.Index(s.scenarios, in.Scenario); i >= 0 {
			d.scenario = i
		} else {
			d.scenario = len(s.scenarios)
			s.scenarios = append(s.scenarios, in.Scenario)
		}
		s.files = append(s.files, d)
		if err := s.openData(d, fileNamed(in.Files, name)); err != nil {
			return s, err
		}
		if useMasks {
			if err := s.openMask(d, masks[key], maskMember); err != nil {
				return s, err
			}
		}
		d.release() // checked; reopened when its samples are written
		for t, tm := range d.times.Times {
			if tm.Year != year {
				return s, fmt.Errorf("shard: time step %d of %s is %s, outside its block %d", t, d.dataPath, tm, year)
			}
			start := ncio.CFTime{Year: year, Month: 1, Day: 1}
			doy := s.calendar.Sub(tm, start).Hours() / 24
			s.samples = append(s.samples, sample{src: d, t: t, year: year, dayOfYear: doy})
		}
	}
	return s, nil
}

func (s *sources) openData(d *dataFile, path string) error {
	d.dataPath = path
	f, err := ncio.Open(path)
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	d.f = f
	g, err := f.Grid()
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	ta, err := f.Times()
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	d.times = ta
	var chans []ChannelInfo
	enc := ""
	for _, v := range f.Vars() {
		dims := v.DimNames()
		if len(dims) != 3 || dims[0] != ta.Dim || dims[1] != g.LatDim || dims[2] != g.LonDim {
			continue
		}
		e := "float32"
		switch {
		case v.Type() == ncio.Short && v.AttrString(normalize.EncodingAttr) == normalize.EncodingBinary16:
			e = "binary16"
		case v.Type() != ncio.Float:
			return fmt.Errorf("shard: variable %q in %s is %s; shards take float or binary16 channels", v.Name(), path, v.Type())
		}
		if enc != "" && e != enc {
			return fmt.Errorf("shard: %s mixes float32 and binary16 channels", path)
		}
		enc = e
		ci := ChannelInfo{Name: v.Name(), Quantity: v.AttrString("quantity"), Units: v.Units()}
		if l, ok := v.AttrFloat64("level_pa"); ok {
			ci.LevelPa = l
		}
		if m := v.AttrString("normalization_method"); m != "" {
			ci.NormalizationMethod = m
			o, _ := v.AttrFloat64("normalization_offset")
			sc, _ := v.AttrFloat64("normalization_scale")
			ci.NormalizationOffset, ci.NormalizationScale = &o, &sc
			if ou := v.AttrString("original_units"); ou != "" {
				ci.Units = ou
			}
		}
		chans = append(chans, ci)
		d.varNames = append(d.varNames, v.Name())
	}
	if len(chans) == 0 {
		return fmt.Errorf("shard: %s has no (time, lat, lon) channel", path)
	}
	if s.channels == nil {
		s.channels, s.encoding, s.lat, s.lon = chans, enc, g.Lat, g.Lon
		s.calendar, s.timeUnits, s.unitsAttr, s.calAttr = ta.Calendar(), ta.Units, ta.UnitsAttr, ta.CalendarAttr
		return nil
	}
	if enc != s.encoding || !sameChannels(chans, s.channels) {
		return fmt.Errorf("shard: %s has channels %s, the first input %s (hint: every block must come from the same stages and settings)",
			path, describeChannels(chans, enc), describeChannels(s.channels, s.encoding))
	}
	if !sameCoords(g.Lat, s.lat) || !sameCoords(g.Lon, s.lon) {
		return fmt.Errorf("shard: %s is on another grid (%dx%d) than the first input (%dx%d)", path, len(g.Lat), len(g.Lon), len(s.lat), len(s.lon))
	}
	if ta.Calendar() != s.calendar {
		return fmt.Errorf("shard: %s uses the %s calendar, the first input %s (hint: shard one model's data at a time)", path, ta.Calendar(), s.calendar)
	}
	return nil
}

func sameChannels(a, b []ChannelInfo) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i].Name != b[i].Name || a[i].Quantity != b[i].Quantity || a[i].LevelPa != b[i].LevelPa || a[i].Units != b[i].Units {
			return false
		}
	}
	return true
}

func describeChannels(cs []ChannelInfo, enc string) string {
	var parts []string
	for _, c := range cs {
		parts = append(parts, c.Name)
	}
	return "(" + strings.Join(parts, ", ") + ") in " + enc
}

func sameCoords(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > 1e-6 {
			return false
		}
	}
	return true
}

func (s *sources) openMask(d *dataFile, cands []pipeline.Input, member string) error {
	in := d.ref
	var pick []pipeline.Input
	for _, c := range cands {
		if member == "" || c.Member == member {
			pick = append(pick, c)
		}
	}
	switch {
	case len(pick) == 0:
		return fmt.Errorf("shard: no %s for scenario %q block %s (member %q) while other blocks have one (hint: label every block, or drop the label stage from the inputs)", MaskFile, in.Scenario, in.Block, member)
	case len(pick) > 1:
		var ms []string
		for _, p := range pick {
			ms = append(ms, strconv.Quote(p.Member))
		}
		return fmt.Errorf("shard: %d masks for scenario %q block %s (members %s) (hint: set mask_member)", len(pick), in.Scenario, in.Block, strings.Join(ms, ", "))
	}
	path := fileNamed(pick[0].Files, MaskFile)
	d.maskPath = path
	f, err := ncio.Open(path)
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	d.mask = f
	v, err := f.Var(MaskVar)
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	if v.Type() != ncio.Byte && v.Type() != ncio.UByte {
		return fmt.Errorf("shard: %s in %s is %s, not byte (mask.nc format)", MaskVar, path, v.Type())
	}
	d.maskVar = v
	g, err := f.GridOf(v)
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	if !sameCoords(g.Lat, s.lat) || !sameCoords(g.Lon, s.lon) {
		return fmt.Errorf("shard: %s is on another grid than the data", path)
	}
	ta, err := f.TimesOf(v)
	if err != nil {
		return fmt.Errorf("shard: %w", err)
	}
	if ta.Len() != d.times.Len() {
		return fmt.Errorf("shard: %s has %d time steps, its data %s %d (hint: label the same subset output)", path, ta.Len(), d.dataPath, d.times.Len())
	}
	for i := range ta.Times {
		if !ta.Times[i].Equal(d.times.Times[i]) {
			return fmt.Errorf("shard: time step %d of %s is %s, of its data %s", i, path, ta.Times[i], d.times.Times[i])
		}
	}
	// Classes from flag_values and flag_meanings (CF section 3.5).
	meanings := strings.Fields(v.AttrString("flag_meanings"))
	vals, _ := v.AttrFloat64s("flag_values")
	if len(meanings) == 0 || len(meanings) != len(vals) {
		return fmt.Errorf("shard: %s in %s needs flag_values and flag_meanings of equal length (CF section 3.5)", MaskVar, path)
	}
	for i, x := range vals {
		if x != float64(i) {
			return fmt.Errorf("shard: %s in %s has flag_values %v; classes must be 0, 1, 2, ...", MaskVar, path, vals)
		}
	}
	if s.classes == nil {
		s.classes = meanings
		if fv, ok := v.AttrFloat64("_FillValue"); ok {
			x := int8(fv)
			s.maskFill = &x
		}
	} else if !slices.Equal(s.classes, meanings) {
		return fmt.Errorf("shard: %s has classes %v, other masks %v", path, meanings, s.classes)
	}
	return nil
}

// writeShard writes one shard file and returns its description (without
// the file name).
func (s *sources) writeShard(path, set string, index int, xs []sample, deflate int, k Kind) (ShardInfo, error) {
	ny, nx, nc := len(s.lat), len(s.lon), len(s.channels)
	n := len(xs)
	info := ShardInfo{Set: set, Samples: n, ClassPixels: make([]int64, len(s.classes))}
	w, err := ncio.Create(path)
	if err != nil {
		return info, err
	}
	defer w.Abort()
	w.DefDim("sample", n)
	w.DefDim("channel", nc)
	w.DefLat(s.lat)
	w.DefLon(s.lon)
	cal := s.calAttr
	if cal == "" {
		cal = "standard"
	}
	w.DefVar(ncio.VarSpec{Name: "time", Type: ncio.Double, Dims: []string{"sample"}, Attrs: []ncio.Attr{
		{Name: "standard_name", Value: "time"}, {Name: "units", Value: s.unitsAttr}, {Name: "calendar", Value: cal}}})
	scen := make([]int32, len(s.scenarios))
	for i := range scen {
		scen[i] = int32(i)
	}
	w.DefVar(ncio.VarSpec{Name: "scenario", Type: ncio.Int, Dims: []string{"sample"}, Attrs: []ncio.Attr{
		{Name: "long_name", Value: "scenario of the sample"}, {Name: "flag_values", Value: scen},
		{Name: "flag_meanings", Value: strings.Join(s.scenarios, " ")}}})
	w.DefVar(ncio.VarSpec{Name: "source_step", Type: ncio.Int, Dims: []string{"sample"}, Attrs: []ncio.Attr{
		{Name: "long_name", Value: "time index of the sample in its source file"}}})
	var names, quantities []string
	levels := make([]float64, nc)
	for i, c := range s.channels {
		names = append(names, c.Name)
		quantities = append(quantities, c.Quantity)
		levels[i] = c.LevelPa
	}
	inAttrs := []ncio.Attr{{Name: "long_name", Value: "network input: channels of one time step"},
		{Name: "channels", Value: strings.Join(names, " ")}, {Name: "channel_quantities", Value: strings.Join(quantities, " ")},
		{Name: "channel_level_pa", Value: levels}}
	if s.channels[0].NormalizationOffset != nil {
		off, sc := make([]float64, nc), make([]float64, nc)
		for i, c := range s.channels {
			off[i], sc[i] = *c.NormalizationOffset, *c.NormalizationScale
		}
		inAttrs = append(inAttrs, ncio.Attr{Name: "normalization_offset", Value: off}, ncio.Attr{Name: "normalization_scale", Value: sc},
			ncio.Attr{Name: "comment", Value: "original = value * normalization_scale + normalization_offset, per channel"})
	}
	inSpec := ncio.VarSpec{Name: "input", Type: ncio.Float, Dims: []string{"sample", "channel", "lat", "lon"},
		Fill: normalize.FillValue, Chunks: []int{1, nc, ny, nx}, Deflate: deflate, Shuffle: deflate > 0, Attrs: inAttrs}
	if s.encoding == "binary16" {
		inSpec.Type, inSpec.Fill = ncio.Short, normalize.Binary16Fill
		inSpec.Attrs = append(inSpec.Attrs, ncio.Attr{Name: normalize.EncodingAttr, Value: normalize.EncodingBinary16})
	}
	w.DefVar(inSpec)
	if len(s.classes) > 0 {
		fv := make([]int8, len(s.classes))
		for i := range fv {
			fv[i] = int8(i)
		}
		spec := ncio.VarSpec{Name: MaskVar, Type: ncio.Byte, Dims: []string{"sample", "lat", "lon"},
			Chunks: []int{1, ny, nx}, Deflate: deflate, Shuffle: false, Attrs: []ncio.Attr{
				{Name: "long_name", Value: "class of each pixel"}, {Name: "flag_values", Value: fv},
				{Name: "flag_meanings", Value: strings.Join(s.classes, " ")}}}
		if s.maskFill != nil {
			spec.Fill = *s.maskFill
		}
		w.DefVar(spec)
	}
	w.PutConventions("squall shard", ncio.Provenance{Tool: "squall", Kind: k.Name(), KindVersion: strconv.Itoa(k.Version()),
		Settings: map[string]string{"set": set, "index": strconv.Itoa(index)}})
	w.PutGlobalAttr("set", set)
	if err := w.EndDef(); err != nil {
		return info, err
	}
	times := make([]float64, n)
	scenIdx, steps := make([]int32, n), make([]int32, n)
	plane := ny * nx
	f32 := make([]float32, nc*plane)
	bits := make([]int32, nc*plane)
	for i, smp := range xs {
		d := smp.src
		if err := s.acquire(d); err != nil {
			return info, err
		}
		tm := d.times.Times[smp.t]
		if d.times.UnitsAttr == s.unitsAttr {
			times[i] = d.times.Values[smp.t]
		} else if times[i], err = s.timeUnits.Encode(tm); err != nil {
			return info, err
		}
		scenIdx[i], steps[i] = int32(d.scenario), int32(smp.t)
		start, count := []int{smp.t, 0, 0}, []int{1, ny, nx}
		for c, v := range d.vars {
			if s.encoding == "binary16" {
				raw, err := v.ReadInt32(start, count)
				if err != nil {
					return info, err
				}
				copy(bits[c*plane:], raw)
				continue
			}
			if err := v.ReadFloat32Into(f32[c*plane:(c+1)*plane], start, count); err != nil {
				return info, err
			}
		}
		st, ct := []int{i, 0, 0, 0}, []int{1, nc, ny, nx}
		if s.encoding == "binary16" {
			err = w.WriteInt32("input", st, ct, bits)
		} else {
			for j, x := range f32 {
				if x != x {
					f32[j] = normalize.FillValue
				}
			}
			err = w.WriteFloat32("input", st, ct, f32)
		}
		if err != nil {
			return info, err
		}
		if len(s.classes) > 0 {
			m, err := d.maskVar.ReadInt8(start, count)
			if err != nil {
				return info, err
			}
			for _, x := range m {
				if x >= 0 && int(x) < len(s.classes) {
					info.ClassPixels[x]++
				} else {
					info.Unlabelled++
				}
			}
			if err := w.WriteInt8(MaskVar, []int{i, 0, 0}, count, m); err != nil {
				return info, err
			}
		}
	}
	if err := w.WriteFloat64("time", nil, nil, times); err != nil {
		return info, err
	}
	if err := w.WriteInt32("scenario", nil, nil, scenIdx); err != nil {
		return info, err
	}
	if err := w.WriteInt32("source_step", nil, nil, steps); err != nil {
		return info, err
	}
	if err := w.Close(); err != nil {
		return info, err
	}
	info.ClassFrequency = Frequencies(info.ClassPixels)
	info.Bytes, info.BLAKE3, err = digestFile(path)
	return info, err
}

// digestFile returns the size and BLAKE3-256 hex digest of a file.
func digestFile(path string) (int64, string, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, "", err
	}
	defer f.Close()
	h := blake3.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return 0, "", fmt.Errorf("digest %s: %w", path, err)
	}
	return n, hex.EncodeToString(h.Sum(nil)), nil
}
