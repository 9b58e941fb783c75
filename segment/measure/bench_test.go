package measure

import (
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// benchLabels is a 1024 x 1024 label map of 2000 random discs of radius
// 4 to 20 (later ones over earlier ones), with a random intensity plane.
func benchLabels() ([]int32, []float32, int, int) {
	w, h := 1024, 1024
	rng := rand.New(rand.NewPCG(1, 1))
	labels := make([]int32, w*h)
	plane := make([]float32, w*h)
	for k := range 2000 {
		cx, cy, r := rng.IntN(w), rng.IntN(h), 4+rng.IntN(17)
		for y := max(cy-r, 0); y < min(cy+r+1, h); y++ {
			for x := max(cx-r, 0); x < min(cx+r+1, w); x++ {
				if (x-cx)*(x-cx)+(y-cy)*(y-cy) <= r*r {
					labels[y*w+x] = int32(k + 1)
				}
			}
		}
	}
	for i := range plane {
		plane[i] = float32(rng.IntN(65536))
	}
	return labels, plane, w, h
}

func BenchmarkRegions1024(b *testing.B) {
	labels, plane, w, h := benchLabels()
	for b.Loop() {
		if _, err := Regions(labelmap.Map{Pix: labels, Width: w, Height: h}, [][]float32{plane}, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkOutlines1024(b *testing.B) {
	labels, _, w, h := benchLabels()
	for b.Loop() {
		if _, err := Outlines(labelmap.Map{Pix: labels, Width: w, Height: h}); err != nil {
			b.Fatal(err)
		}
	}
}
