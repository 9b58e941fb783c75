package score

import (
	"context"
	"errors"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Boundary matching stops with the context's error once the context is
// cancelled, and gives Boundary's result with a live context.
func TestBoundaryContextCancel(t *testing.T) {
	w, h := 300, 200
	pred, truth := make([]int32, w*h), make([]int32, w*h)
	for i := range pred {
		x, y := i%w, i/w
		pred[i] = int32(x/17 + 20*(y/13))
		truth[i] = int32(x/19 + 20*(y/11))
	}
	want := Boundary(labelmap.Map{Pix: pred, Width: w, Height: h}, labelmap.Map{Pix: truth, Width: w, Height: h}, 3)
	got, err := BoundaryContext(context.Background(), labelmap.Map{Pix: pred, Width: w, Height: h}, labelmap.Map{Pix: truth, Width: w, Height: h}, 3)
	if err != nil || got != want {
		t.Fatalf("live context: %+v, %v; want %+v", got, err, want)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if m, err := BoundaryContext(ctx, labelmap.Map{Pix: pred, Width: w, Height: h}, labelmap.Map{Pix: truth, Width: w, Height: h}, 3); !errors.Is(err, context.Canceled) || m != (BoundaryMatch{}) {
		t.Errorf("cancelled: %+v, %v; want a zero result and context.Canceled", m, err)
	}
}
