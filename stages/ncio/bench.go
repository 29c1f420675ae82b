package ncio

import (
	"fmt"
	"math"
	"time"
)

// RawSpec is the shape and storage of the reference float32 field used to
// measure what the netCDF library alone can do: NT time steps of NY x NX,
// one time step per chunk.
type RawSpec struct {
	NT, NY, NX int
	Deflate    int  // zlib level, 0 for none
	Shuffle    bool // byte shuffle filter
}

// DefaultRawSpec is a year of daily 1.875 x 2.5 degree fields (365 x 96 x
// 144 float32, 20.2 MB), deflate off.
var DefaultRawSpec = RawSpec{NT: 365, NY: 96, NX: 144}

// Bytes is the uncompressed size of the field.
func (s RawSpec) Bytes() int64 { return int64(s.NT) * int64(s.NY) * int64(s.NX) * 4 }

// rawField fills one time step with a smooth pressure-like wave plus
// deterministic noise of about 1 Pa (xorshift, seeded by the step), so
// that deflate meets the same kind of entropy as in model output rather
// than a trivially compressible pattern.
func rawField(buf []float32, t, ny, nx int) {
	state := uint32(2463534242 + 7919*t)
	for j := 0; j < ny; j++ {
		lat := math.Pi * (float64(j)/float64(ny) - 0.5)
		for i := 0; i < nx; i++ {
			lon := 2 * math.Pi * float64(i) / float64(nx)
			state ^= state << 13
			state ^= state >> 17
			state ^= state << 5
			noise := float64(state)/float64(math.MaxUint32) - 0.5
			buf[j*nx+i] = float32(101325 + 1500*math.Cos(lat)*math.Sin(3*lon+0.1*float64(t)) + noise)
		}
	}
}

// RawWriteFloat32 writes the reference field as variable "field" (time,
// lat, lon) to path, one time step per call, and returns the uncompressed
// bytes written and the elapsed time.
func RawWriteFloat32(path string, s RawSpec) (int64, time.Duration, error) {
	// The data are made before the clock starts: eight distinct steps,
	// cycled (more than a deflate window apart, so no cross-step gain).
	const distinct = 8
	steps := make([][]float32, distinct)
	for t := range steps {
		steps[t] = make([]float32, s.NY*s.NX)
		rawField(steps[t], t, s.NY, s.NX)
	}
	begin := time.Now()
	w, err := Create(path)
	if err != nil {
		return 0, 0, err
	}
	w.DefDim("time", s.NT)
	w.DefDim("lat", s.NY)
	w.DefDim("lon", s.NX)
	w.DefVar(VarSpec{Name: "field", Type: Float, Dims: []string{"time", "lat", "lon"},
		Deflate: s.Deflate, Shuffle: s.Shuffle, Chunks: []int{1, s.NY, s.NX}})
	if err := w.EndDef(); err != nil {
		w.Abort()
		return 0, 0, err
	}
	for t := 0; t < s.NT; t++ {
		if err := w.WriteFloat32("field", []int{t, 0, 0}, []int{1, s.NY, s.NX}, steps[t%distinct]); err != nil {
			w.Abort()
			return 0, 0, err
		}
	}
	if err := w.Close(); err != nil {
		return 0, 0, err
	}
	return s.Bytes(), time.Since(begin), nil
}

// RawReadFloat32 reads a 3-D float32 variable one step of its first
// dimension at a time, straight through the library (no masking), and
// returns the bytes read and the elapsed time.
func RawReadFloat32(path, varName string) (int64, time.Duration, error) {
	begin := time.Now()
	f, err := Open(path)
	if err != nil {
		return 0, 0, err
	}
	defer f.Close()
	v, err := f.Var(varName)
	if err != nil {
		return 0, 0, err
	}
	sh := v.Shape()
	if len(sh) != 3 {
		return 0, 0, fmt.Errorf("raw read of %q in %s: want 3 dimensions, have %d", varName, path, len(sh))
	}
	buf := make([]float32, sh[1]*sh[2])
	for t := 0; t < sh[0]; t++ {
		if err := getVaraFloat(f.ds, v.id, []int{t, 0, 0}, []int{1, sh[1], sh[2]}, buf); err != nil {
			return 0, 0, v.readErr(err)
		}
	}
	return int64(v.Len()) * 4, time.Since(begin), nil
}

// MBps converts bytes and a duration to megabytes (1e6 bytes) per second.
func MBps(bytes int64, d time.Duration) float64 {
	if d <= 0 {
		return 0
	}
	return float64(bytes) / 1e6 / d.Seconds()
}
