package local_test

import (
	"flag"
	"path/filepath"
	"testing"
	"time"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/enginetest"
	"github.com/squall-climate/squall/scheduler/local"
)

func profile(t *testing.T) *scheduler.Profile {
	p := scheduler.Default()
	p.Engine = "local"
	p.Walltime = scheduler.Duration(time.Hour)
	p.Node.Cores = 2
	p.StateDir = t.TempDir()
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestConformance(t *testing.T) {
	enginetest.Run(t, enginetest.Harness{
		Profile: profile(t),
		New:     func(p *scheduler.Profile) scheduler.Engine { return local.New(p) },
	})
}

var update = flag.Bool("update", false, "rewrite golden files")

func TestGolden(t *testing.T) {
	p := enginetest.GoldenProfile("local")
	enginetest.Golden(t, local.New(p), enginetest.GoldenSpecs()[:5], filepath.Join("testdata", "golden"), ".sh", *update)
}
