package pipeline_test

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/squall-climate/squall/cache"
	"github.com/squall-climate/squall/pipeline"
)

// bigCampaign writes nsc scenarios x nyears one-line files and a campaign
// of `chain` block stages plus a fan-in.
func bigCampaign(b *testing.B, nsc, nyears, chain int) string {
	dir := b.TempDir()
	var sb strings.Builder
	sb.WriteString("campaign: big\nscenarios:\n")
	for s := 0; s < nsc; s++ {
		d := filepath.Join(dir, "data", fmt.Sprintf("s%03d", s))
		os.MkdirAll(d, 0o755)
		for y := 0; y < nyears; y++ {
			os.WriteFile(filepath.Join(d, fmt.Sprintf("f_%d.nc", 1900+y)), []byte(fmt.Sprintf("%d %d\n", s, y)), 0o644)
		}
		fmt.Fprintf(&sb, "  s%03d: {files: data/s%03d/*.nc, period: 1900-%d}\n", s, s, 1900+nyears-1)
	}
	sb.WriteString("stages:\n")
	prev := "scenarios"
	for i := 0; i < chain; i++ {
		fmt.Fprintf(&sb, "  st%d: {kind: concat, inputs: [%s]}\n", i, prev)
		prev = "st" + strconv.Itoa(i)
	}
	fmt.Fprintf(&sb, "  total: {kind: sum, inputs: [%s]}\n", prev)
	f := filepath.Join(dir, "c.yaml")
	os.WriteFile(f, []byte(sb.String()), 0o644)
	return f
}

func peakRSSMB() float64 {
	b, _ := os.ReadFile("/proc/self/status")
	for _, l := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(l, "VmHWM:") {
			f := strings.Fields(l)
			kb, _ := strconv.ParseFloat(f[1], 64)
			return kb / 1024
		}
	}
	return 0
}

// BenchmarkPlan100k plans 100,000 instances (100 scenarios x 100 years x
// 10 chained stages) against an empty store. Target: under 2 s.
func BenchmarkPlan100k(b *testing.B) {
	n := 100
	if s := os.Getenv("SQUALL_BENCH_SCENARIOS"); s != "" {
		n, _ = strconv.Atoi(s)
	}
	f := bigCampaign(b, n, 100, 10)
	for i := 0; i < b.N; i++ {
		c, err := pipeline.Load(f, testRegistry())
		if err != nil {
			b.Fatal(err)
		}
		s, err := cache.Open(c.StoreDir, cache.Options{})
		if err != nil {
			b.Fatal(err)
		}
		t0 := time.Now()
		p, err := pipeline.NewPlan(c, s)
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(time.Since(t0).Seconds(), "s/plan")
		b.ReportMetric(float64(len(p.Steps)), "instances")
		s.Close()
	}
	b.ReportMetric(peakRSSMB(), "peak-RSS-MB")
}

// BenchmarkNoChangeRerun10k runs 10,000 trivial instances once (setup,
// child processes), then measures a rerun with nothing changed: load,
// plan and execute, all reused. Target: under 1 s.
func BenchmarkNoChangeRerun10k(b *testing.B) {
	n := 100
	if s := os.Getenv("SQUALL_BENCH_SCENARIOS"); s != "" {
		n, _ = strconv.Atoi(s)
	}
	f := bigCampaign(b, n, 100, 1)
	run := func() *pipeline.RunRecord {
		c, err := pipeline.Load(f, testRegistry())
		if err != nil {
			b.Fatal(err)
		}
		s, err := cache.Open(c.StoreDir, cache.Options{})
		if err != nil {
			b.Fatal(err)
		}
		defer s.Close()
		p, err := pipeline.NewPlan(c, s)
		if err != nil {
			b.Fatal(err)
		}
		rec, err := pipeline.Execute(context.Background(), p, s, pipeline.RunOptions{Jobs: 2, ChildCommand: childCommand})
		if err != nil {
			b.Fatal(err)
		}
		return rec
	}
	run()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t0 := time.Now()
		rec := run()
		if rec.Counts[pipeline.StateReused] != n*100+1 {
			b.Fatalf("rerun counts %v", rec.Counts)
		}
		b.ReportMetric(time.Since(t0).Seconds(), "s/rerun")
	}
	b.ReportMetric(peakRSSMB(), "peak-RSS-MB")
}

// BenchmarkHashVsSha256sum hashes a 256 MB file with BLAKE3 (cache) and
// with the system's sha256sum on the same file, and reports both rates.
func BenchmarkHashVsSha256sum(b *testing.B) {
	p := filepath.Join(b.TempDir(), "blob")
	buf := make([]byte, 1<<20)
	for i := range buf {
		buf[i] = byte(i * 7)
	}
	fh, _ := os.Create(p)
	for i := 0; i < 256; i++ {
		fh.Write(buf)
	}
	fh.Close()
	const mb = 256.0
	cache.HashFile(p) // warm the page cache
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t0 := time.Now()
		if _, _, err := cache.HashFile(p); err != nil {
			b.Fatal(err)
		}
		ours := mb / time.Since(t0).Seconds()
		b.ReportMetric(ours, "blake3-MB/s")
		if _, err := exec.LookPath("sha256sum"); err == nil {
			t1 := time.Now()
			exec.Command("sha256sum", p).Run()
			ref := mb / time.Since(t1).Seconds()
			b.ReportMetric(ref, "sha256sum-MB/s")
			b.ReportMetric(ours/ref, "ratio")
		}
	}
}
