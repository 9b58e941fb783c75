package segment

import (
	"context"
	"errors"
	"math/rand/v2"
	"slices"
	"sync/atomic"
	"testing"
)

// stepContext reports itself cancelled from its (after+1)-th Err call on.
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

// k-means stops with context.Canceled at its checks (seeding steps and
// Lloyd iterations of every restart), and an uncancelled context gives
// kmeans's labels exactly.
func TestKmeansContextCancel(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	n, dim, k := 2000, 3, 6
	x := make([]float64, n*dim)
	for i := range x {
		x[i] = rng.Float64() + float64(i%k)
	}
	want := kmeans(x, n, dim, k, nil, kmeansRestarts, 3, 2)
	count := &stepContext{Context: context.Background(), after: -1}
	got, err := kmeansContext(count, x, n, dim, k, nil, kmeansRestarts, 3, 2)
	if err != nil || !slices.Equal(got, want) {
		t.Fatalf("uncancelled: error %v, labels equal %v; want kmeans's labels", err, slices.Equal(got, want))
	}
	checks := count.calls.Load()
	for _, after := range []int64{0, checks / 2, checks - 1} {
		ctx := &stepContext{Context: context.Background(), after: after}
		if lab, err := kmeansContext(ctx, x, n, dim, k, nil, kmeansRestarts, 3, 2); !errors.Is(err, context.Canceled) || lab != nil {
			t.Errorf("cancelled after %d of %d checks: labels %v, error %v; want none and context.Canceled", after, checks, lab != nil, err)
		}
	}
}

// Run stops with the context's error when the context is cancelled, in
// k-way clustering as in bisection.
func TestRunCancelled(t *testing.T) {
	w, h := 40, 40
	lum := make([]float32, w*h)
	for i := range lum {
		if i%w > w/2 {
			lum[i] = 1
		}
	}
	in := Input{Width: w, Height: h, Planes: [][]float32{lum}, Luminance: lum}
	for _, method := range []Method{MethodBisect, MethodKway} {
		p := Params{Superpixels: 0, Radius: 2, AutoSigmaI: true, AutoSigmaX: true, Compactness: 20, Method: method,
			MaxSegments: 4, MaxNcut: 0.15, MinArea: 5, Workers: 1, Seed: 1}
		if _, err := Run(context.Background(), in, p); err != nil {
			t.Fatalf("%s: %v", method, err)
		}
		count := &stepContext{Context: context.Background(), after: -1}
		if _, err := Run(count, in, p); err != nil {
			t.Fatal(err)
		}
		checks := count.calls.Load()
		for _, after := range []int64{0, checks / 2, checks - 1} {
			ctx := &stepContext{Context: context.Background(), after: after}
			if res, err := Run(ctx, in, p); !errors.Is(err, context.Canceled) || res != nil {
				t.Errorf("%s cancelled after %d of %d checks: result %v, error %v; want none and context.Canceled", method, after, checks, res != nil, err)
			}
		}
	}
}
