package pipeline

import (
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestMaxLabelAsMax: the blocked maximum is labelmap's one-pass Max on
// maps of one to several blocks, all-negative maps (0) and a largest
// label in the last pixel, for one to three workers.
func TestMaxLabelAsMax(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 17, 1 << 16, 3<<16 + 5} {
		for _, kind := range []string{"random", "negative", "last"} {
			m := labelmap.Map{Pix: make([]int32, n), Width: n, Height: 1}
			for i := range m.Pix {
				m.Pix[i] = int32(rng.IntN(1000))
				if kind == "negative" {
					m.Pix[i] = -1 - m.Pix[i]
				}
			}
			if kind == "last" {
				m.Pix[n-1] = 5000
			}
			for _, workers := range []int{1, 2, 3} {
				if got, want := maxLabel(m, workers), m.Max(); got != want {
					t.Fatalf("%d pixels, %s, %d workers: %d, want %d", n, kind, workers, got, want)
				}
			}
		}
	}
}
