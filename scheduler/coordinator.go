package scheduler

import (
	"context"

	"github.com/squall-climate/squall/pipeline"
)

// ForPipeline adapts an engine to the campaign coordinator of `squall run
// --site`: every instance that must run becomes one job of the default
// shape (one node, one core) within the profile's walltime.
func ForPipeline(e Engine) pipeline.Cluster { return coordinated{e} }

type coordinated struct{ e Engine }

var _ pipeline.Cluster = coordinated{}

func (c coordinated) Submit(ctx context.Context, j pipeline.ClusterJobSpec) (string, error) {
	spec := &JobSpec{Name: j.Name, Dir: j.Dir, Script: j.Script, Log: j.Log, Argv: j.Argv, After: j.After}
	for _, kv := range j.Env {
		spec.Env = append(spec.Env, EnvVar{Name: kv[0], Value: kv[1]})
	}
	return c.e.Submit(ctx, spec)
}

func (c coordinated) States(ctx context.Context, ids []string) (map[string]pipeline.ClusterStatus, error) {
	st, err := c.e.States(ctx, ids)
	if err != nil {
		return nil, err
	}
	out := make(map[string]pipeline.ClusterStatus, len(st))
	for id, s := range st {
		out[id] = pipeline.ClusterStatus{State: string(s.State), Reason: s.Reason, ExitCode: s.ExitCode}
	}
	return out, nil
}

func (c coordinated) Cancel(ctx context.Context, ids []string) error { return c.e.Cancel(ctx, ids) }
