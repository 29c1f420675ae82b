package shard

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
	"github.com/squall-climate/squall/stages/normalize"
)

const fieldsFill = float32(9.969209968386869e36)

// writeBlock writes fields.nc and mask.nc of one year: 6 daily steps in
// the noleap calendar on a 4 x 6 grid, two channels, a mask of mostly
// background with a TC and an AR patch.
func writeBlock(t *testing.T, dir string, year int) (fields, mask string) {
	t.Helper()
	rng := rand.New(rand.NewPCG(uint64(year), 7)) // fixed seed
	lat, lon := []float64{-15, -5, 5, 15}, []float64{0, 60, 120, 180, 240, 300}
	nt, n := 6, 24
	times := make([]float64, nt)
	for i := range times {
		times[i] = float64((year-1990)*365 + i)
	}
	fields, mask = filepath.Join(dir, "fields.nc"), filepath.Join(dir, "mask.nc")
	w, err := ncio.Create(fields)
	if err != nil {
		t.Fatal(err)
	}
	w.DefTime(times, "days since 1990-01-01", "noleap")
	w.DefLat(lat)
	w.DefLon(lon)
	for _, c := range []struct{ name, q string }{{"slp", "air_pressure_at_mean_sea_level"}, {"ivt", "ivt"}} {
		w.DefVar(ncio.VarSpec{Name: c.name, Type: ncio.Float, Dims: []string{"time", "lat", "lon"}, Fill: fieldsFill,
			Chunks: []int{1, 4, 6}, Attrs: []ncio.Attr{{Name: "units", Value: "Pa"}, {Name: "quantity", Value: c.q}}})
	}
	if err := w.EndDef(); err != nil {
		t.Fatal(err)
	}
	a, b := make([]float32, nt*n), make([]float32, nt*n)
	for i := range a {
		a[i] = float32(101000 + 500*rng.NormFloat64())
		b[i] = float32(200 + 80*rng.NormFloat64())
		if i%17 == 3 {
			b[i] = fieldsFill
		}
	}
	w.WriteFloat32("slp", nil, nil, a)
	w.WriteFloat32("ivt", nil, nil, b)
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	m, err := ncio.Create(mask)
	if err != nil {
		t.Fatal(err)
	}
	m.DefTime(times, "days since 1990-01-01", "noleap")
	m.DefLat(lat)
	m.DefLon(lon)
	m.DefVar(ncio.VarSpec{Name: "class_mask", Type: ncio.Byte, Dims: []string{"time", "lat", "lon"}, Attrs: []ncio.Attr{
		{Name: "long_name", Value: "class"}, {Name: "flag_values", Value: []int8{0, 1, 2}},
		{Name: "flag_meanings", Value: "background tropical_cyclone atmospheric_river"}}})
	if err := m.EndDef(); err != nil {
		t.Fatal(err)
	}
	cls := make([]int8, nt*n)
	for i := range cls {
		switch r := rng.IntN(20); {
		case r == 0:
			cls[i] = 1
		case r < 3:
			cls[i] = 2
		}
	}
	m.WriteInt8("class_mask", nil, nil, cls)
	if err := m.Close(); err != nil {
		t.Fatal(err)
	}
	return fields, mask
}

func defaults(kv ...any) pipeline.Values {
	v := pipeline.Values{}
	for _, s := range (Kind{}).Settings() {
		v[s.Name] = s.Default
	}
	for i := 0; i+1 < len(kv); i += 2 {
		v[kv[i].(string)] = kv[i+1]
	}
	return v
}

type block struct {
	year         int
	fields, mask string
	normalized   string
}

func makeBlocks(t *testing.T, years []int) []block {
	var bs []block
	root := t.TempDir()
	for _, y := range years {
		dir := filepath.Join(root, "b"+string(rune('0'+y%10)))
		os.MkdirAll(dir, 0o755)
		f, m := writeBlock(t, dir, y)
		bs = append(bs, block{year: y, fields: f, mask: m})
	}
	return bs
}

func runShard(t *testing.T, bs []block, useNormalized bool, split pipeline.Split, s pipeline.Values) (string, *Manifest) {
	t.Helper()
	out := t.TempDir()
	job := &pipeline.Job{Stage: "shard", Kind: "shard", Settings: s, OutDir: out, Campaign: pipeline.CampaignInfo{Split: split}}
	for _, b := range bs {
		bl := itoa(b.year)
		data := b.fields
		if useNormalized {
			data = b.normalized
		}
		job.Inputs = append(job.Inputs,
			pipeline.Input{From: "data", Kind: "x", Scenario: "control", Block: bl, Files: []string{data}},
			pipeline.Input{From: "label", Kind: "label", Scenario: "control", Block: bl, Files: []string{b.mask}})
	}
	var log strings.Builder
	job.Log = &log
	if err := (Kind{}).Run(context.Background(), job); err != nil {
		t.Fatalf("%v\n%s", err, log.String())
	}
	m, err := ReadManifest(filepath.Join(out, ManifestFile))
	if err != nil {
		t.Fatal(err)
	}
	return out, m
}

func itoa(y int) string { b, _ := json.Marshal(y); return string(b) }

// TestShardEndToEnd: four years, campaign split 1990-91 train, 1992
// validate, 1993 test, a 2-day gap: the first two days of 1992 and of
// 1993 are dropped (derived: 6 daily steps from January 1). Shards of 3
// samples. Then every shard is read back with Debian's python3-netcdf4
// and compared, array for array, with the source files it came from; the
// class counts are recomputed by numpy; ncdump opens every shard.
func TestShardEndToEnd(t *testing.T) {
	bs := makeBlocks(t, []int{1990, 1991, 1992, 1993})
	split := pipeline.Split{Train: []pipeline.Period{{First: 1990, Last: 1991}}, Validate: []pipeline.Period{{First: 1992, Last: 1992}},
		Test: []pipeline.Period{{First: 1993, Last: 1993}}, GapDays: 2}
	out, m := runShard(t, bs, false, split, defaults("samples_per_shard", 3, "ranks", 3, "ranks_per_node", 2))
	if m.Split.GapDropped != 4 {
		t.Errorf("gap dropped %d samples, want 4", m.Split.GapDropped)
	}
	wantSamples := map[string]int{Train: 12, Validate: 4, Test: 4}
	var total int64
	for _, s := range m.Sets {
		if s.Samples != wantSamples[s.Set] {
			t.Errorf("%s: %d samples, want %d", s.Set, s.Samples, wantSamples[s.Set])
		}
		total += s.Bytes
	}
	if len(m.Shards) != 4+2+2 {
		t.Errorf("%d shards, want 8", len(m.Shards))
	}
	var nodeTotal int64
	for _, nb := range m.Ranks.NodeBytes {
		nodeTotal += nb.Bytes
	}
	if m.Ranks.Nodes != 2 || nodeTotal != total || len(m.Ranks.Train) != 3 {
		t.Errorf("ranks: %+v (total bytes %d)", m.Ranks, total)
	}
	if m.LossWeights == nil || m.LossWeights.InverseFrequency[0] >= m.LossWeights.InverseFrequency[1] {
		t.Errorf("loss weights %+v", m.LossWeights)
	}
	sources := map[string]string{}
	masks := map[string]string{}
	for _, b := range bs {
		sources[itoa(b.year)] = b.fields
		masks[itoa(b.year)] = b.mask
	}
	checkShardsWithPython(t, out, m, sources, masks, false)
}

// TestShardHalfPrecision: the binary16 path through the real fit-stats
// and normalize kinds, with fractions instead of the campaign split.
func TestShardHalfPrecision(t *testing.T) {
	bs := makeBlocks(t, []int{1990, 1991, 1992, 1993})
	split := pipeline.Split{Train: []pipeline.Period{{First: 1990, Last: 1991}}}
	statsDir := t.TempDir()
	fit := &pipeline.Job{Stage: "fit", Kind: "fit-stats", OutDir: statsDir, Campaign: pipeline.CampaignInfo{Split: split}, Settings: pipeline.Values{}}
	for _, s := range (normalize.FitKind{}).Settings() {
		fit.Settings[s.Name] = s.Default
	}
	for _, b := range bs {
		fit.Inputs = append(fit.Inputs, pipeline.Input{From: "subset", Kind: "subset", Scenario: "control", Block: itoa(b.year), Files: []string{b.fields}})
	}
	if err := (normalize.FitKind{}).Run(context.Background(), fit); err != nil {
		t.Fatal(err)
	}
	for i, b := range bs {
		dir := t.TempDir()
		job := &pipeline.Job{Stage: "norm", Kind: "normalize", Scenario: "control", Block: itoa(b.year), OutDir: dir, Settings: pipeline.Values{},
			Inputs: []pipeline.Input{{From: "subset", Scenario: "control", Block: itoa(b.year), Files: []string{b.fields}},
				{From: "fit", Files: []string{filepath.Join(statsDir, normalize.StatsFile)}}}}
		for _, s := range (normalize.Kind{}).Settings() {
			job.Settings[s.Name] = s.Default
		}
		job.Settings["precision"] = "float16"
		if err := (normalize.Kind{}).Run(context.Background(), job); err != nil {
			t.Fatal(err)
		}
		bs[i].normalized = filepath.Join(dir, normalize.NormalizedFile)
	}
	out, m := runShard(t, bs, true, pipeline.Split{}, defaults("samples_per_shard", 4, "fractions", []float64{0.5, 0.25, 0.25}, "shuffle_seed", 42))
	if m.Encoding != "binary16" || m.Split.Method != "fractions" || len(m.Split.Train) != 2 || m.Channels[0].NormalizationScale == nil {
		t.Fatalf("manifest: encoding %q split %+v channels %+v", m.Encoding, m.Split, m.Channels)
	}
	sources := map[string]string{}
	masks := map[string]string{}
	for _, b := range bs {
		sources[itoa(b.year)] = b.normalized
		masks[itoa(b.year)] = b.mask
	}
	checkShardsWithPython(t, out, m, sources, masks, true)
}

// checkShardsWithPython reads every shard with netCDF4 (no auto masking:
// raw stored values) and compares input and class_mask with the source
// arrays at (year of time, source_step); it also recounts the classes.
func checkShardsWithPython(t *testing.T, dir string, m *Manifest, sources, masks map[string]string, half bool) {
	t.Helper()
	if _, err := os.Stat("/usr/bin/python3"); err != nil {
		t.Skip("/usr/bin/python3 missing (install Debian python3-netcdf4)")
	}
	script := `
import sys, json, numpy as np, netCDF4
d = sys.argv[1]; man = json.load(open(sys.argv[2])); src = json.loads(sys.argv[3]); msk = json.loads(sys.argv[4])
def raw(path):
    f = netCDF4.Dataset(path); f.set_auto_maskandscale(False); return f
res = []
for sh in man['shards']:
    f = raw(d + '/' + sh['file'])
    x = f['input'][:]; y = f['class_mask'][:]; step = f['source_step'][:]
    dates = netCDF4.num2date(f['time'][:], f['time'].units, f['time'].calendar)
    ok = True
    counts = [0, 0, 0]
    for i in range(x.shape[0]):
        yr = str(dates[i].year)
        s = raw(src[yr]); mk = raw(msk[yr])
        want = np.stack([s[c['name']][step[i]] for c in man['channels']])
        ok = ok and np.array_equal(x[i].view('u1'), want.view('u1')) and x.dtype == want.dtype
        ok = ok and np.array_equal(y[i], mk['class_mask'][step[i]])
    for c in range(3):
        counts[c] = int((y == c).sum())
    res.append({'file': sh['file'], 'ok': bool(ok), 'counts': counts, 'dtype': str(x.dtype), 'chunks': f['input'].chunking()})
print(json.dumps(res))
`
	srcJSON, _ := json.Marshal(sources)
	mskJSON, _ := json.Marshal(masks)
	cmd := exec.Command("/usr/bin/python3", "-c", script, dir, filepath.Join(dir, ManifestFile), string(srcJSON), string(mskJSON))
	var stderr strings.Builder
	cmd.Stderr = &stderr
	outp, err := cmd.Output()
	if err != nil {
		if strings.Contains(stderr.String(), "No module named") {
			t.Skipf("python3-netcdf4 missing: %s", stderr.String())
		}
		t.Fatalf("python: %v\n%s", err, stderr.String())
	}
	var res []struct {
		File   string
		OK     bool
		Counts []int64
		Dtype  string
		Chunks []int
	}
	if err := json.Unmarshal(outp, &res); err != nil {
		t.Fatal(err)
	}
	wantType := "float32"
	if half {
		wantType = "int16"
	}
	for i, r := range res {
		sh := m.Shards[i]
		if !r.OK || r.Dtype != wantType {
			t.Errorf("%s: arrays identical %v, dtype %s", r.File, r.OK, r.Dtype)
		}
		for c := range r.Counts {
			if r.Counts[c] != sh.ClassPixels[c] {
				t.Errorf("%s: class %d has %d pixels, manifest %d", r.File, c, r.Counts[c], sh.ClassPixels[c])
			}
		}
		if len(r.Chunks) != 4 || r.Chunks[0] != 1 {
			t.Errorf("%s: chunks %v, want one sample per chunk", r.File, r.Chunks)
		}
		if n, d, _ := digestFile(filepath.Join(dir, sh.File)); n != sh.Bytes || d != sh.BLAKE3 {
			t.Errorf("%s: size/digest differ from the manifest", sh.File)
		}
		if out, err := exec.Command("ncdump", "-h", filepath.Join(dir, sh.File)).CombinedOutput(); err != nil {
			t.Errorf("ncdump -h %s: %v\n%s", sh.File, err, out)
		}
	}
	var sum float64
	for _, f := range m.ClassFrequency {
		sum += f
	}
	if math.Abs(sum-1) > 1e-12 {
		t.Errorf("class frequencies sum to %v", sum)
	}
}
