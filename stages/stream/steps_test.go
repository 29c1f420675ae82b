package stream

import (
	"context"
	"errors"
	"testing"
	"time"
)

func TestStepsOrder(t *testing.T) {
	var got []int
	err := Steps(context.Background(), 50, 3,
		func(t int) (int, error) { return t * 2, nil },
		func(t, in int) (int, error) {
			// Later steps finish first, so ordering is really exercised.
			time.Sleep(time.Duration(50-t) * 10 * time.Microsecond)
			return in + 1, nil
		},
		func(t, out int) error {
			if out != 2*t+1 {
				return errors.New("wrong value")
			}
			got = append(got, t)
			return nil
		})
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range got {
		if v != i {
			t.Fatalf("written out of order: %v", got)
		}
	}
	if len(got) != 50 {
		t.Fatalf("wrote %d steps", len(got))
	}
}

func TestStepsErrors(t *testing.T) {
	boom := errors.New("boom")
	writes := 0
	err := Steps(context.Background(), 20, 2,
		func(t int) (int, error) { return t, nil },
		func(t, in int) (int, error) {
			if t == 7 {
				return 0, boom
			}
			return in, nil
		},
		func(t, out int) error { writes++; return nil })
	if !errors.Is(err, boom) || writes != 7 {
		t.Fatalf("err %v after %d writes; want boom after 7", err, writes)
	}
	err = Steps(context.Background(), 5, 1,
		func(t int) (int, error) { return t, nil },
		func(t, in int) (int, error) {
			var m map[string]int
			m["x"] = 1 // panics: a bug in compute must become an error
			return 0, nil
		},
		func(t, out int) error { return nil })
	if err == nil {
		t.Fatal("panic in compute was not reported")
	}
	err = Steps(context.Background(), 5, 1,
		func(t int) (int, error) {
			if t == 2 {
				return 0, boom
			}
			return t, nil
		},
		func(t, in int) (int, error) { return in, nil },
		func(t, out int) error { return nil })
	if !errors.Is(err, boom) {
		t.Fatalf("read error lost: %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	err = Steps(ctx, 5, 1,
		func(t int) (int, error) { return t, nil },
		func(t, in int) (int, error) { return in, nil },
		func(t, out int) error { return nil })
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("cancel: %v", err)
	}
}
