package normalize

import (
	"context"
	"encoding/hex"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"

	"github.com/zeebo/blake3"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
	"github.com/squall-climate/squall/stages/stream"
)

// NormalizedFile is the file a normalize instance writes.
const NormalizedFile = "normalized.nc"

// Half-precision storage: binary16 bit patterns in an NC_SHORT variable.
const (
	// EncodingAttr names the attribute that marks such a variable, with
	// the value EncodingBinary16.
	EncodingAttr     = "encoding"
	EncodingBinary16 = "IEEE 754 binary16 bit patterns in int16; reinterpret the bits as float16 (numpy: a.view(numpy.float16))"
	// Binary16Fill is the _FillValue of those variables: the bit pattern
	// 0x7e00 of a float16 quiet NaN, so missing values read as NaN when the
	// bits are reinterpreted.
	Binary16Fill = int16(0x7e00)
)

// FillValue is the _FillValue of float32 channels (NC_FILL_FLOAT).
const FillValue = float32(9.969209968386869e36)

// Kind is the normalize stage kind (register normalize.Kind{}): per block,
// it applies the statistics of a fit-stats stage to fields.nc and writes
// normalized.nc.
type Kind struct{}

var (
	_ pipeline.Kind        = Kind{}
	_ pipeline.SectionUser = Kind{}
)

// Name implements pipeline.Kind.
func (Kind) Name() string { return "normalize" }

// Version implements pipeline.Kind.
func (Kind) Version() int { return 1 }

// Doc implements pipeline.Kind.
func (Kind) Doc() string {
	return "Normalises each channel of a block's fields.nc with the statistics of a fit-stats stage (standard score, " +
		"min-max or robust median/IQR), in float32 or half precision (binary16 bits in int16, with the rounding error " +
		"it adds recorded as attributes). Writes " + NormalizedFile + "."
}

// Fan implements pipeline.Kind; the fit instance is broadcast to every block.
func (Kind) Fan() pipeline.Fan { return pipeline.FanBlock }

// CampaignSections implements pipeline.SectionUser: none; everything comes
// from the inputs.
func (Kind) CampaignSections() []string { return []string{} }

// Settings implements pipeline.Kind.
func (Kind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "method", Type: pipeline.TypeString, Default: "standard", Choices: []string{"standard", "min-max", "robust"},
			Doc: "standard: (x - mean)/std; min-max: (x - min)/(max - min); robust: (x - median)/(q75 - q25), needs quantiles 0.25, 0.5, 0.75 in the fit"},
		{Name: "precision", Type: pipeline.TypeString, Default: "float32", Choices: []string{"float32", "float16"},
			Doc: "float16 halves the bytes (what training at scale uses) at about 3 significant digits; the error is recorded"},
		{Name: "deflate", Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(0), Max: pipeline.Bound(9),
			Doc: "zlib level (0: none)"},
		{Name: "shuffle", Type: pipeline.TypeBool, Default: true, Doc: "byte-shuffle filter before zlib"},
	}
}

// Transform is the affine map a channel is normalised with:
// y = (x - Offset) / Scale.
type Transform struct {
	Method        string
	Offset, Scale float64
}

// TransformFor derives the transform of a channel from its statistics.
func TransformFor(method string, levels []float64, c ChannelStats) (Transform, error) {
	t := Transform{Method: method}
	switch method {
	case "standard":
		t.Offset, t.Scale = c.Mean, c.Std
	case "min-max":
		t.Offset, t.Scale = c.Min, c.Max-c.Min
	case "robust":
		q1, ok1 := c.Quantile(levels, 0.25)
		q2, ok2 := c.Quantile(levels, 0.5)
		q3, ok3 := c.Quantile(levels, 0.75)
		if !ok1 || !ok2 || !ok3 {
			return t, fmt.Errorf("channel %q: method robust needs the quantiles 0.25, 0.5 and 0.75, the fit has %v (hint: add them to the fit-stats quantiles setting)", c.Name, levels)
		}
		t.Offset, t.Scale = q2, q3-q1
	default:
		return t, fmt.Errorf("unknown normalisation method %q", method)
	}
	if !(t.Scale > 0) || math.IsInf(t.Scale, 0) {
		return t, fmt.Errorf("channel %q: the %s scale is %v (a constant field in the training years) (hint: drop the channel or use another method)", c.Name, method, t.Scale)
	}
	return t, nil
}

type applyVar struct {
	fv *fieldVar
	cs ChannelStats
	tr Transform
	// half-precision error accumulators (written in order by the I/O
	// goroutine): max absolute, max relative (normal range), sum of squares.
	maxAbs, maxRel, sumSq float64
	n                     int64
}

type stepOut struct {
	f32  [][]float32
	bits [][]int32
	errs [][3]float64 // per channel: max abs, max rel, sum sq
	cnt  []int64
}

// Run implements pipeline.Kind.
func (k Kind) Run(ctx context.Context, job *pipeline.Job) error {
	var fieldsPaths, statsPaths []string
	for _, in := range job.Inputs {
		if p := fileNamed(in.Files, FieldsFile); p != "" {
			fieldsPaths = append(fieldsPaths, p)
		}
		if p := fileNamed(in.Files, StatsFile); p != "" {
			statsPaths = append(statsPaths, p)
		}
	}
	if len(statsPaths) != 1 {
		return fmt.Errorf("normalize: need exactly one %s among the inputs, found %d (hint: list one fit-stats stage in the inputs)", StatsFile, len(statsPaths))
	}
	if len(fieldsPaths) != 1 {
		return fmt.Errorf("normalize: need exactly one %s for scenario %q block %s, found %d (hint: list one subset stage in the inputs)", FieldsFile, job.Scenario, job.Block, len(fieldsPaths))
	}
	st, err := ReadStats(statsPaths[0])
	if err != nil {
		return fmt.Errorf("normalize: %w", err)
	}
	method := job.Settings.String("method")
	half := job.Settings.String("precision") == "float16"
	deflate, shuffle := job.Settings.Int("deflate"), job.Settings.Bool("shuffle")
	workers := max(1, runtime.NumCPU()-1) // compute goroutines; cannot change outputs
	ff, err := openFields(fieldsPaths[0])
	if err != nil {
		return fmt.Errorf("normalize: %w", err)
	}
	defer ff.close()
	var vars []*applyVar
	for _, fv := range ff.vars {
		cs, ok := st.Channel(fv.name)
		if !ok {
			return fmt.Errorf("normalize: channel %q of %s has no statistics in %s (hint: rerun fit-stats on the same subset stage)", fv.name, ff.path, statsPaths[0])
		}
		if cs.Quantity != fv.quantity || cs.LevelPa != fv.levelPa || cs.Units != fv.units {
			return fmt.Errorf("normalize: channel %q is %s at %g Pa in %q in %s but the statistics are for %s at %g Pa in %q (hint: rerun fit-stats)",
				fv.name, fv.quantity, fv.levelPa, fv.units, ff.path, cs.Quantity, cs.LevelPa, cs.Units)
		}
		tr, err := TransformFor(method, st.QuantileLevels, cs)
		if err != nil {
			return fmt.Errorf("normalize: %w", err)
		}
		vars = append(vars, &applyVar{fv: fv, cs: cs, tr: tr})
	}
	out := filepath.Join(job.OutDir, NormalizedFile)
	w, err := ncio.Create(out)
	if err != nil {
		return err
	}
	defer w.Abort()
	ta, err := ff.f.Times()
	if err != nil {
		return err
	}
	w.DefTimeFrom(ta, 0, ta.Len())
	w.DefLat(ff.lat)
	w.DefLon(ff.lon)
	ny, nx := len(ff.lat), len(ff.lon)
	for _, av := range vars {
		spec := ncio.VarSpec{Name: av.fv.name, Type: ncio.Float, Dims: []string{"time", "lat", "lon"}, Fill: FillValue,
			Deflate: deflate, Shuffle: shuffle, Chunks: []int{1, ny, nx}, Attrs: av.attrs(st)}
		if half {
			spec.Type, spec.Fill = ncio.Short, Binary16Fill
			spec.Attrs = append(spec.Attrs, ncio.Attr{Name: EncodingAttr, Value: EncodingBinary16})
		}
		w.DefVar(spec)
	}
	land, landErr := ff.f.Var("land_area_fraction")
	if landErr == nil {
		w.DefVar(ncio.VarSpec{Name: "land_area_fraction", Type: ncio.Float, Dims: []string{"lat", "lon"}, Fill: FillValue,
			Deflate: deflate, Shuffle: shuffle, Attrs: []ncio.Attr{{Name: "standard_name", Value: "land_area_fraction"},
				{Name: "long_name", Value: "land area fraction"}, {Name: "units", Value: "1"}}})
	}
	prov := ncio.Provenance{Tool: "squall", Kind: k.Name(), KindVersion: strconv.Itoa(k.Version()),
		Settings: map[string]string{"method": method, "precision": job.Settings.String("precision"),
			"deflate": strconv.Itoa(deflate), "shuffle": strconv.FormatBool(shuffle)},
		Inputs: []ncio.InputDigest{{Name: FieldsFile, Digest: "scenario " + job.Scenario + " block " + job.Block},
			{Name: StatsFile, Digest: statsDigest(statsPaths[0])}}}
	w.PutConventions("squall normalize", prov)
	if err := w.EndDef(); err != nil {
		return err
	}
	if landErr == nil {
		lf, err := land.ReadFloat32(nil, nil)
		if err != nil {
			return err
		}
		for i, x := range lf {
			if x != x {
				lf[i] = FillValue
			}
		}
		if err := w.WriteFloat32("land_area_fraction", nil, nil, lf); err != nil {
			return err
		}
	}
	err = stream.Steps(ctx, ff.nt, workers,
		func(t int) ([]plane, error) {
			ps := make([]plane, len(vars))
			for i, av := range vars {
				p, err := ff.read(av.fv, t)
				if err != nil {
					return nil, fmt.Errorf("normalize: %w", err)
				}
				ps[i] = p
			}
			return ps, nil
		},
		func(t int, ps []plane) (stepOut, error) {
			o := stepOut{f32: make([][]float32, len(vars)), bits: make([][]int32, len(vars)),
				errs: make([][3]float64, len(vars)), cnt: make([]int64, len(vars))}
			for i, av := range vars {
				if f := ps[i].f32; f != nil && !half {
					// The common case, in place: float in, float out.
					off, sc := av.tr.Offset, av.tr.Scale
					for j, x := range f {
						if x != x {
							f[j] = FillValue
						} else {
							f[j] = float32((float64(x) - off) / sc)
						}
					}
					o.f32[i] = f
					continue
				}
				y := av.apply(ps[i])
				if !half {
					f := make([]float32, len(y))
					for j, x := range y {
						if math.IsNaN(x) {
							f[j] = FillValue
						} else {
							f[j] = float32(x)
						}
					}
					o.f32[i] = f
					continue
				}
				b := make([]int32, len(y))
				var e [3]float64
				var n int64
				for j, x := range y {
					if math.IsNaN(x) {
						b[j] = int32(Binary16Fill)
						continue
					}
					h := Float16BitsOf64(x)
					b[j] = int32(int16(h))
					d := math.Abs(float64(Float16Value(h)) - x)
					e[0] = math.Max(e[0], d)
					if math.Abs(x) >= 6.103515625e-05 { // smallest normal binary16
						e[1] = math.Max(e[1], d/math.Abs(x))
					}
					e[2] += d * d
					n++
				}
				o.bits[i], o.errs[i], o.cnt[i] = b, e, n
			}
			return o, nil
		},
		func(t int, o stepOut) error {
			for i, av := range vars {
				var err error
				if half {
					err = w.WriteInt32(av.fv.name, []int{t, 0, 0}, []int{1, ny, nx}, o.bits[i])
					av.maxAbs = math.Max(av.maxAbs, o.errs[i][0])
					av.maxRel = math.Max(av.maxRel, o.errs[i][1])
					av.sumSq += o.errs[i][2]
					av.n += o.cnt[i]
				} else {
					err = w.WriteFloat32(av.fv.name, []int{t, 0, 0}, []int{1, ny, nx}, o.f32[i])
				}
				if err != nil {
					return err
				}
			}
			return nil
		})
	if err != nil {
		return err
	}
	if half {
		for _, av := range vars {
			rms := 0.0
			if av.n > 0 {
				rms = math.Sqrt(av.sumSq / float64(av.n))
			}
			w.PutAttr(av.fv.name, "half_precision_max_abs_error", av.maxAbs)
			w.PutAttr(av.fv.name, "half_precision_max_rel_error", av.maxRel)
			w.PutAttr(av.fv.name, "half_precision_rms_error", rms)
			job.Logf("normalize: %s in half precision: max |error| %.3g, max relative error %.3g (binary16 bound 2^-11 = 4.88e-4), rms %.3g, in normalised units",
				av.fv.name, av.maxAbs, av.maxRel, rms)
		}
	}
	if err := w.Close(); err != nil {
		return err
	}
	job.Logf("normalize: wrote %s: %d channels x %d time steps (%s, %s)", NormalizedFile, len(vars), ff.nt, method, job.Settings.String("precision"))
	return nil
}

// apply returns (x - offset)/scale in float64, NaN where missing.
func (av *applyVar) apply(p plane) []float64 {
	fv, tr := av.fv, av.tr
	var y []float64
	if p.f32 != nil {
		y = make([]float64, len(p.f32))
		for i, x := range p.f32 {
			y[i] = (float64(x) - tr.Offset) / tr.Scale
		}
		return y
	}
	y = make([]float64, len(p.f64))
	for i, x := range p.f64 {
		if fv.packed {
			x = fv.scale*x + fv.offset
		}
		y[i] = (x - tr.Offset) / tr.Scale
	}
	return y
}

// attrs are the attributes of a normalised channel: what it was, how it
// was normalised and the statistics themselves.
func (av *applyVar) attrs(st *Stats) []ncio.Attr {
	fv, cs, tr := av.fv, av.cs, av.tr
	a := []ncio.Attr{
		{Name: "long_name", Value: "normalised " + fv.quantity},
		{Name: "units", Value: "1"},
		{Name: "quantity", Value: fv.quantity},
	}
	if fv.levelPa > 0 {
		a = append(a, ncio.Attr{Name: "level_pa", Value: fv.levelPa})
	}
	years := make([]int32, len(st.Years))
	for i, y := range st.Years {
		years[i] = int32(y)
	}
	a = append(a,
		ncio.Attr{Name: "original_units", Value: fv.units},
		ncio.Attr{Name: "normalization_method", Value: tr.Method},
		ncio.Attr{Name: "normalization_offset", Value: tr.Offset},
		ncio.Attr{Name: "normalization_scale", Value: tr.Scale},
		ncio.Attr{Name: "comment", Value: "value = (original - normalization_offset) / normalization_scale; original = value * normalization_scale + normalization_offset"},
		ncio.Attr{Name: "stats_mean", Value: cs.Mean},
		ncio.Attr{Name: "stats_std", Value: cs.Std},
		ncio.Attr{Name: "stats_min", Value: cs.Min},
		ncio.Attr{Name: "stats_max", Value: cs.Max},
		ncio.Attr{Name: "stats_count", Value: float64(cs.Count)},
		ncio.Attr{Name: "stats_weighting", Value: st.Weighting},
		ncio.Attr{Name: "stats_training_years", Value: years},
	)
	if len(st.QuantileLevels) > 0 {
		a = append(a, ncio.Attr{Name: "stats_quantile_levels", Value: append([]float64(nil), st.QuantileLevels...)},
			ncio.Attr{Name: "stats_quantiles", Value: append([]float64(nil), cs.Quantiles...)})
	}
	return a
}

// statsDigest is the BLAKE3 digest of stats.json (small, so hashing it
// here is free), for the history attribute.
func statsDigest(path string) string {
	data, err := os.ReadFile(path)
	if err != nil {
		return "unreadable"
	}
	sum := blake3.Sum256(data)
	return "blake3:" + hex.EncodeToString(sum[:])
}
