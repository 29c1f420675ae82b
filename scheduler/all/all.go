// Package all is the one list of engines a binary knows: New picks the
// engine a validated profile names. Adding an engine means adding one case
// here and passing scheduler/enginetest.
package all

import (
	"fmt"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/local"
	"github.com/squall-climate/squall/scheduler/lsf"
	"github.com/squall-climate/squall/scheduler/pbs"
	"github.com/squall-climate/squall/scheduler/slurm"
)

// New returns the engine for p (which must have passed Validate).
func New(p *scheduler.Profile) (scheduler.Engine, error) {
	switch p.Engine {
	case "slurm":
		return slurm.New(p), nil
	case "pbs":
		return pbs.New(p), nil
	case "lsf":
		return lsf.New(p), nil
	case "local":
		return local.New(p), nil
	}
	return nil, fmt.Errorf("site profile %s: unknown engine %q (one of %v)", p.File(), p.Engine, scheduler.Engines)
}

// Load reads and validates a profile and returns it with its engine.
func Load(path string) (*scheduler.Profile, scheduler.Engine, error) {
	p, err := scheduler.Load(path)
	if err != nil {
		return nil, nil, err
	}
	e, err := New(p)
	return p, e, err
}
