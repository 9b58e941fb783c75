package eigen

import (
	"context"
	"errors"
	"slices"
	"sync/atomic"
	"testing"
)

// stepContext is a context that reports itself cancelled from its
// (after+1)-th Err call on, and counts the calls: it stops a solve at
// any of its checks, wherever they fall.
type stepContext struct {
	context.Context
	after int64
	calls atomic.Int64
}

func (c *stepContext) Err() error {
	if c.calls.Add(1) > c.after && c.after >= 0 {
		return context.Canceled
	}
	return nil
}

// A solve stops with context.Canceled and no result at every one of its
// cancellation checks (before the solve, each coarsening level, each
// LOBPCG step), and a context never cancelled gives exactly Smallest's
// result.
func TestSmallestContextCancel(t *testing.T) {
	g := torusGraph(t, 40, 40)
	opt := Options{Workers: 2, Seed: 1}
	want, err := Smallest(g, 4, opt)
	if err != nil {
		t.Fatal(err)
	}
	count := &stepContext{Context: context.Background(), after: -1}
	got, err := SmallestContext(count, g, 4, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got.Values, want.Values) || got.Iterations != want.Iterations {
		t.Errorf("uncancelled: values %v after %d steps; want Smallest's %v after %d", got.Values, got.Iterations, want.Values, want.Iterations)
	}
	checks := count.calls.Load()
	// One check before the solve, one per coarsening level and per level
	// refined, one per LOBPCG step: more than the steps on the input graph.
	if checks <= int64(want.Iterations) {
		t.Fatalf("%d cancellation checks for %d LOBPCG steps; want more", checks, want.Iterations)
	}
	for _, after := range []int64{0, 1, checks / 2, checks - 1} {
		ctx := &stepContext{Context: context.Background(), after: after}
		r, err := SmallestContext(ctx, g, 4, opt)
		if !errors.Is(err, context.Canceled) || r != nil {
			t.Errorf("cancelled after %d of %d checks: result %v, error %v; want none and context.Canceled", after, checks, r != nil, err)
		}
	}
}
