package stream

import (
	"context"
	"fmt"
)

// Steps runs a read-compute-write loop over n steps (time steps of a
// block), overlapping the I/O of one step with the computation of others.
// read and write run on the calling goroutine only, because libnetcdf is
// not thread-safe; compute runs on `workers` goroutines. At most
// `workers+1` steps are in flight, so memory stays bounded by a few steps
// whatever n is. Results are written in step order. The first error stops
// the loop and is returned (from the lowest step that failed to compute,
// or the read/write that failed).
func Steps[In, Out any](ctx context.Context, n, workers int,
	read func(t int) (In, error),
	compute func(t int, in In) (Out, error),
	write func(t int, out Out) error) error {
	if workers < 1 {
		workers = 1
	}
	type job struct {
		t  int
		in In
	}
	type result struct {
		t   int
		out Out
		err error
	}
	depth := workers + 1
	jobs := make(chan job, depth)
	results := make(chan result, depth)
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	for w := 0; w < workers; w++ {
		go func() {
			for j := range jobs {
				var r result
				r.t = j.t
				func() {
					defer func() {
						if p := recover(); p != nil {
							r.err = fmt.Errorf("step %d: internal error: %v", j.t, p)
						}
					}()
					r.out, r.err = compute(j.t, j.in)
				}()
				results <- r
			}
		}()
	}
	inflight := 0
	done := map[int]result{}
	next, written := 0, 0
	var firstErr error
	// drain writes every finished step that is next in order.
	drain := func() error {
		for {
			r, ok := done[written]
			if !ok {
				return nil
			}
			delete(done, written)
			if r.err != nil {
				return r.err
			}
			if err := write(r.t, r.out); err != nil {
				return err
			}
			written++
		}
	}
	for written < n && firstErr == nil {
		if err := ctx.Err(); err != nil {
			firstErr = err
			break
		}
		if inflight < depth && next < n {
			in, err := read(next)
			if err != nil {
				firstErr = err
				break
			}
			jobs <- job{next, in}
			next++
			inflight++
			// Collect whatever has finished without blocking.
			for more := true; more; {
				select {
				case r := <-results:
					inflight--
					done[r.t] = r
				default:
					more = false
				}
			}
		} else {
			r := <-results
			inflight--
			done[r.t] = r
		}
		firstErr = drain()
	}
	close(jobs)
	// Let the workers finish what they hold so none blocks on results.
	for ; inflight > 0; inflight-- {
		<-results
	}
	return firstErr
}
