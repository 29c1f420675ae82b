package label

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// Output file names (part of the kind's interface; see doc.go).
const (
	MaskFile       = "mask.nc"
	CandidatesFile = "tc_candidates.csv"
	TracksFile     = "tc_tracks.csv"
	ARObjectsFile  = "ar_objects.csv"
	// MaskVar is the class mask variable of mask.nc.
	MaskVar = "class_mask"
)

// Research is the caveat every output carries.
const Research = "Heuristic labels from published threshold criteria: research output for training and evaluation, not warnings or forecasts."

// Provenance builds the history of an output from the job: kind, version,
// settings (canonical text, sorted by name) and inputs named by their
// position in the campaign (never by absolute path, which would make
// identical runs differ), sorted.
func Provenance(kind string, version int, job *pipeline.Job) ncio.Provenance {
	p := ncio.Provenance{Tool: "squall", Kind: kind, KindVersion: strconv.Itoa(version), Settings: map[string]string{}}
	for k, v := range job.Settings {
		p.Settings[k] = canonical(v)
	}
	for _, in := range job.Inputs {
		id := in.From
		for _, part := range []string{in.Scenario, in.Block, in.Member} {
			if part != "" {
				id += "/" + part
			}
		}
		names := make([]string, len(in.Files))
		for i, f := range in.Files {
			names[i] = f[strings.LastIndex(f, "/")+1:]
		}
		sort.Strings(names)
		p.Inputs = append(p.Inputs, ncio.InputDigest{Name: id + ":" + strings.Join(names, ","), Digest: "(digest in the run record)"})
	}
	// Sorted, so that the order in which the engine lists inputs does not
	// change the bytes of an output.
	sort.Slice(p.Inputs, func(a, b int) bool { return p.Inputs[a].Name < p.Inputs[b].Name })
	return p
}

// canonical formats a setting value the same way whatever its Go type
// after a JSON round trip.
func canonical(v any) string {
	switch x := v.(type) {
	case []any:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = canonical(e)
		}
		return strings.Join(parts, ",")
	case []string:
		return strings.Join(x, ",")
	case []float64:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = canonical(e)
		}
		return strings.Join(parts, ",")
	case []int:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = strconv.Itoa(e)
		}
		return strings.Join(parts, ",")
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case int:
		return strconv.Itoa(x)
	case string:
		return x
	case bool:
		return strconv.FormatBool(x)
	}
	return fmt.Sprint(v)
}

// maskWriter writes mask.nc one time step at a time.
type maskWriter struct {
	w          *ncio.Writer
	nlat, nlon int
	buf        []int8
}

// createMask defines mask.nc on the grid and time axis of fl: class_mask
// (byte, CF flags) and, when fl has it, land_area_fraction copied over.
func createMask(path string, fl *Fields, title string, prov ncio.Provenance, land []float64) (*maskWriter, error) {
	w, err := ncio.Create(path)
	if err != nil {
		return nil, err
	}
	g := fl.Grid
	nt := fl.Time.Len()
	w.DefTimeFrom(fl.Time, 0, nt)
	w.DefLat(g.Lat)
	w.DefLon(g.Lon)
	w.DefVar(ncio.VarSpec{
		Name: MaskVar, Type: ncio.Byte, Dims: []string{"time", "lat", "lon"},
		Chunks: []int{1, g.NLat(), g.NLon()}, Deflate: 1,
		Attrs: []ncio.Attr{
			{Name: "long_name", Value: "heuristic class label"},
			{Name: "flag_values", Value: []int8{int8(Background), int8(TropicalCyclone), int8(AtmosphericRiver)}},
			{Name: "flag_meanings", Value: FlagMeanings},
			{Name: "comment", Value: Research},
		},
	})
	if land != nil {
		w.DefVar(ncio.VarSpec{
			Name: "land_area_fraction", Type: ncio.Float, Dims: []string{"lat", "lon"}, Fill: float32(math.NaN()),
			Attrs: []ncio.Attr{{Name: "standard_name", Value: "land_area_fraction"}, {Name: "long_name", Value: "land area fraction"}, {Name: "units", Value: "1"}},
		})
	}
	w.PutConventions(title, prov)
	if err := w.EndDef(); err != nil {
		w.Abort()
		return nil, err
	}
	if land != nil {
		l32 := make([]float32, len(land))
		for i, x := range land {
			l32[i] = float32(x)
		}
		if err := w.WriteFloat32("land_area_fraction", nil, nil, l32); err != nil {
			w.Abort()
			return nil, err
		}
	}
	return &maskWriter{w: w, nlat: g.NLat(), nlon: g.NLon(), buf: make([]int8, g.Len())}, nil
}

func (m *maskWriter) write(step int, classes []byte) error {
	for i, c := range classes {
		m.buf[i] = int8(c)
	}
	return m.w.WriteInt8(MaskVar, []int{step, 0, 0}, []int{1, m.nlat, m.nlon}, m.buf)
}

// csvFile is a tiny deterministic CSV writer (no quoting needed: every
// field is a number, an ISO-like date or a plain word).
type csvFile struct {
	f      *os.File
	w      *bufio.Writer
	closed bool
}

func createCSV(path string, header ...string) (*csvFile, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	c := &csvFile{f: f, w: bufio.NewWriter(f)}
	c.row(header...)
	return c, nil
}

func (c *csvFile) row(fields ...string) {
	c.w.WriteString(strings.Join(fields, ","))
	c.w.WriteByte('\n')
}

func (c *csvFile) close() error {
	if c.closed {
		return nil
	}
	c.closed = true
	if err := c.w.Flush(); err != nil {
		c.f.Close()
		return err
	}
	return c.f.Close()
}

// num formats a number with a fixed precision, "" for NaN.
func num(x float64, prec int) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'f', prec, 64)
}

func sci(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'e', 4, 64)
}

// Column layouts of the CSV tables (documented in doc.go).
var (
	candidateHeader = []string{"step", "time", "lat", "lon", "slp_pa", "max_wind_m_s", "vorticity_s-1", "warm_core_k", "track_id"}
	trackHeader     = []string{"track_id", "point", "step", "time", "lat", "lon", "slp_pa", "max_wind_m_s", "vorticity_s-1", "warm_core_k"}
	arHeader        = []string{"step", "time", "object", "quantity", "pixels", "area_km2", "length_km", "width_km", "aspect", "centroid_lat", "centroid_lon", "max_value", "kept", "reason"}
)

func candidateFields(c *Candidate, time string) []string {
	return []string{
		strconv.Itoa(c.Step), time, num(c.Lat, 4), num(c.Lon, 4), num(c.SLP, 1),
		num(c.MaxWind, 3), sci(c.Vorticity), num(c.WarmCore, 3),
	}
}

func writeCandidates(path string, steps [][]Candidate, fl *Fields) error {
	c, err := createCSV(path, candidateHeader...)
	if err != nil {
		return err
	}
	for s, cs := range steps {
		for i := range cs {
			id := ""
			if cs[i].Track > 0 {
				id = strconv.Itoa(cs[i].Track)
			}
			c.row(append(candidateFields(&cs[i], fl.Time.Times[s].String()), id)...)
		}
	}
	return c.close()
}

func writeTracks(path string, tracks []Track, fl *Fields) error {
	c, err := createCSV(path, trackHeader...)
	if err != nil {
		return err
	}
	for _, t := range tracks {
		for i := range t.Points {
			p := &t.Points[i]
			c.row(append([]string{strconv.Itoa(t.ID), strconv.Itoa(i + 1)}, candidateFields(p, fl.Time.Times[p.Step].String())...)...)
		}
	}
	return c.close()
}

type arWriter struct {
	c        *csvFile
	quantity string
}

func (a *arWriter) add(objs []ARObject, time string) {
	for _, o := range objs {
		kept := "no"
		if o.Kept {
			kept = "yes"
		}
		a.c.row(strconv.Itoa(o.Step), time, strconv.Itoa(int(o.Label)), a.quantity, strconv.Itoa(o.Pixels),
			num(o.Area/1e6, 1), num(o.Length/1e3, 1), num(o.Width/1e3, 1), num(o.Aspect, 3),
			num(o.CentroidLat, 4), num(o.CentroidLon, 4), num(o.MaxValue, 2), kept, strings.ReplaceAll(o.Reason, ",", ";"))
	}
}
