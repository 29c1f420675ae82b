package world

import (
	"context"
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

// BenchmarkGenerate writes one demo-grid season of 5 days (20 steps, 5.4
// MB of raw fields) per iteration and reports raw MB per wall second and
// per CPU second of the process (the latter is steadier on a shared
// machine):
//
//	go test ./examples/world -run XXX -bench Generate -benchtime 5x
func BenchmarkGenerate(b *testing.B) {
	for _, vertical := range []string{"pressure", "hybrid"} {
		b.Run(vertical, func(b *testing.B) {
			o := mustPreset("demo")
			o.Days = 5
			o.Vertical = vertical
			o.Scenarios = o.Scenarios[1:]
			o.Scenarios[0].LastYear = o.Scenarios[0].FirstYear
			dir := b.TempDir()
			var raw int64
			var secs float64
			cpu0 := cpuSeconds()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				o.Dir = filepath.Join(dir, "run")
				s, err := Generate(context.Background(), o)
				if err != nil {
					b.Fatal(err)
				}
				raw += s.RawBytes
				secs += s.Seconds
				b.StopTimer()
				os.RemoveAll(o.Dir)
				b.StartTimer()
			}
			cpu := cpuSeconds() - cpu0
			b.ReportMetric(float64(raw)/1e6/secs, "MB/s")
			b.ReportMetric(float64(raw)/1e6/cpu, "MB/cpu-s")
			b.ReportMetric(0, "ns/op")
		})
	}
}

// BenchmarkCompute times the field computation of one demo step without
// any I/O, on one goroutine.
func BenchmarkCompute(b *testing.B) {
	o := mustPreset("demo")
	o.Dir = "unused"
	g := newGrid(&o)
	s := newSeason(&o, g, o.Scenarios[1], 0)
	f := newFields(g.points(), s.nlev())
	raw := float64(4 * g.points() * (5 + 4*s.nlev()))
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		s.compute(f, float64((i%s.steps)*o.StepHours), 1)
	}
	b.ReportMetric(raw*float64(b.N)/1e6/b.Elapsed().Seconds(), "MB/s")
}

// cpuSeconds is the user plus system CPU time of the process so far.
func cpuSeconds() float64 {
	var r syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &r); err != nil {
		return 0
	}
	return float64(r.Utime.Nano()+r.Stime.Nano()) / 1e9
}
