package ncio

import (
	"os"
	"path/filepath"
	"testing"
	"time"
)

// The reference limits for the data stages: the netCDF library alone
// writing and reading a year of daily 96 x 144 float32 fields, one time
// step per chunk, uncompressed and with deflate 1 + shuffle.
//
//	go test -run '^$' -bench . -benchtime 3x ./stages/ncio/

var benchSpecs = []struct {
	name string
	spec RawSpec
}{
	{"uncompressed", DefaultRawSpec},
	{"deflate1_shuffle", RawSpec{NT: DefaultRawSpec.NT, NY: DefaultRawSpec.NY, NX: DefaultRawSpec.NX, Deflate: 1, Shuffle: true}},
}

func BenchmarkWrite(b *testing.B) {
	for _, bs := range benchSpecs {
		b.Run(bs.name, func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "raw.nc")
			var total int64
			var elapsed time.Duration
			for i := 0; i < b.N; i++ {
				n, d, err := RawWriteFloat32(path, bs.spec)
				if err != nil {
					b.Fatal(err)
				}
				total += n
				elapsed += d
			}
			b.ReportMetric(MBps(total, elapsed), "MB/s")
			if st, err := os.Stat(path); err == nil {
				b.ReportMetric(float64(bs.spec.Bytes())/float64(st.Size()), "ratio")
			}
		})
	}
}

func BenchmarkReadFloat32(b *testing.B) {
	for _, bs := range benchSpecs {
		path := filepath.Join(b.TempDir(), "raw.nc")
		if _, _, err := RawWriteFloat32(path, bs.spec); err != nil {
			b.Fatal(err)
		}
		b.Run(bs.name+"/raw", func(b *testing.B) {
			var total int64
			var elapsed time.Duration
			for i := 0; i < b.N; i++ {
				n, d, err := RawReadFloat32(path, "field")
				if err != nil {
					b.Fatal(err)
				}
				total += n
				elapsed += d
			}
			b.ReportMetric(MBps(total, elapsed), "MB/s")
		})
		// The same reads through Var.ReadFloat32Into, with fill masking:
		// the overhead of the CF layer over the library.
		b.Run(bs.name+"/cf", func(b *testing.B) {
			var total int64
			begin := time.Now()
			for i := 0; i < b.N; i++ {
				f, err := Open(path)
				if err != nil {
					b.Fatal(err)
				}
				v, _ := f.Var("field")
				sh := v.Shape()
				buf := make([]float32, sh[1]*sh[2])
				for t := 0; t < sh[0]; t++ {
					if err := v.ReadFloat32Into(buf, []int{t, 0, 0}, []int{1, sh[1], sh[2]}); err != nil {
						b.Fatal(err)
					}
				}
				f.Close()
				total += int64(v.Len()) * 4
			}
			b.ReportMetric(MBps(total, time.Since(begin)), "MB/s")
		})
	}
}
