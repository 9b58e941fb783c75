package render

import (
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestPaletteDistinct: the palette colours are pairwise far apart (at
// least 60 in 8-bit sRGB Euclidean distance) and none is near black
// (sum of channels above 200), so no object looks like label 0.
func TestPaletteDistinct(t *testing.T) {
	for i, a := range palette {
		if int(a[0])+int(a[1])+int(a[2]) < 200 {
			t.Errorf("colour %d %v is near black", i, a)
		}
		for j, b := range palette[:i] {
			d := 0
			for k := range 3 {
				d += (int(a[k]) - int(b[k])) * (int(a[k]) - int(b[k]))
			}
			if d < 60*60 {
				t.Errorf("colours %d %v and %d %v are too close", j, b, i, a)
			}
		}
	}
}

// TestColourLabelsNeighbours: on maps of many touching regions (random
// seeds dropped on a grid, each pixel labelled by its nearest seed, a
// Voronoi map, plus some background), no two labels that touch by side or
// corner share a colour, 0 has none, and the colouring is repeatable.
func TestColourLabelsNeighbours(t *testing.T) {
	for _, seed := range []uint64{11001, 11002, 11003} {
		rng := rand.New(rand.NewPCG(seed, 0))
		const w, h, n = 160, 120, 150
		sx, sy := make([]int, n), make([]int, n)
		for k := range n {
			sx[k], sy[k] = rng.IntN(w), rng.IntN(h)
		}
		labels := make([]int32, w*h)
		for y := range h {
			for x := range w {
				best, bd := 0, 1<<30
				for k := range n {
					if d := (x-sx[k])*(x-sx[k]) + (y-sy[k])*(y-sy[k]); d < bd {
						best, bd = k, d
					}
				}
				if best%7 != 0 { // every seventh cell is background
					labels[y*w+x] = int32(best + 1)
				}
			}
		}
		c := ColourLabels(labelmap.Map{Pix: labels, Width: w, Height: h})
		if c.Of(0) != [3]uint8{} {
			t.Errorf("label 0 has colour %v", c.Of(0))
		}
		again := ColourLabels(labelmap.Map{Pix: labels, Width: w, Height: h})
		for y := range h {
			for x := range w {
				a := labels[y*w+x]
				if c.Of(a) != again.Of(a) {
					t.Fatalf("seed %d: label %d coloured differently twice", seed, a)
				}
				for _, d := range [][2]int{{1, 0}, {0, 1}, {1, 1}, {-1, 1}} {
					u, v := x+d[0], y+d[1]
					if u < 0 || u >= w || v >= h {
						continue
					}
					b := labels[v*w+u]
					if a > 0 && b > 0 && a != b && c.Of(a) == c.Of(b) {
						t.Errorf("seed %d: touching labels %d and %d share colour %v", seed, a, b, c.Of(a))
					}
				}
			}
		}
	}
}

// TestColourLabelsSparse: labels larger than the pixel count (a map
// that is not numbered 1..n) are coloured through the map form alike.
func TestColourLabelsSparse(t *testing.T) {
	labels := []int32{0, 1 << 30, 1 << 30, 5, 5, 1<<30 + 1}
	c := ColourLabels(labelmap.Map{Pix: labels, Width: 3, Height: 2})
	if c.Of(1<<30) == c.Of(5) || c.Of(1<<30) == c.Of(1<<30+1) || c.Of(5) == c.Of(1<<30+1) {
		t.Errorf("touching sparse labels share a colour: %v %v %v", c.Of(1<<30), c.Of(5), c.Of(1<<30+1))
	}
	if c.Of(0) != [3]uint8{} || c.Of(99) != [3]uint8{} {
		t.Error("label 0 or an absent label has a colour")
	}
}

// TestNumberSize: digits are 5 x 7 font pixels with one column between
// them (by construction), scaled.
func TestNumberSize(t *testing.T) {
	for _, c := range []struct{ n, s, w, h int }{{0, 1, 5, 7}, {7, 2, 10, 14}, {128, 1, 17, 7}, {4096, 3, 69, 21}} {
		if w, h := NumberSize(c.n, c.s); w != c.w || h != c.h {
			t.Errorf("NumberSize(%d, %d) = %d x %d; want %d x %d", c.n, c.s, w, h, c.w, c.h)
		}
	}
}

// TestColourLabelsMatchesFormer checks ColourLabelsWorkers (on one, two
// and three workers) against colourLabelsOld (the former scan,
// palette_old_test.go): the same colour for every label on random maps
// of touching discs, with negative labels, and with sparse huge labels
// (the map form).
func TestColourLabelsMatchesFormer(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 34))
	for trial := range 12 {
		w, h := 40+rng.IntN(200), 30+rng.IntN(200)
		labels := make([]int32, w*h)
		for k := range 10 + rng.IntN(200) {
			cx, cy, r := rng.IntN(w), rng.IntN(h), 1+rng.IntN(15)
			l := int32(k + 1)
			switch trial % 3 {
			case 1:
				if k%7 == 0 {
					l = -l
				}
			case 2:
				l = int32(1_000_000_000 + rng.IntN(1000))
			}
			for y := max(cy-r, 0); y < min(cy+r+1, h); y++ {
				for x := max(cx-r, 0); x < min(cx+r+1, w); x++ {
					if (x-cx)*(x-cx)+(y-cy)*(y-cy) <= r*r {
						labels[y*w+x] = l
					}
				}
			}
		}
		m := labelmap.Map{Pix: labels, Width: w, Height: h}
		want := colourLabelsOld(m)
		// Heights of 30-229 rows are one to four bands of
		// ColourLabelsWorkers; any worker count gives the same colours.
		for _, workers := range []int{1, 2, 3} {
			got := ColourLabelsWorkers(m, workers)
			for _, l := range labels {
				if got.Of(l) != want.Of(l) {
					t.Fatalf("trial %d, workers %d: label %d coloured %v, formerly %v", trial, workers, l, got.Of(l), want.Of(l))
				}
			}
		}
	}
}
