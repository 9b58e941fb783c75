package segment

import (
	"context"
	"math"
	"testing"
)

// TestSignedContrast checks the contrast against the background field on
// each side, closed forms of its definition (contrastOfGrid): r = I/B,
// max(r-1, 0) on a dark background, max(1-r, 0) on a bright one, |r-1|
// otherwise.
func TestSignedContrast(t *testing.T) {
	for _, c := range []struct {
		r    float64
		bg   Background
		want float64
	}{
		{1.4, BackgroundDark, 0.4},   // brighter than a dark field: an object's side
		{0.6, BackgroundDark, 0},     // darker than a dark field: background
		{1.4, BackgroundBright, 0},   // a halo brighter than a bright field: background
		{0.6, BackgroundBright, 0.4}, // darker than a bright field: an object's side
		{1, BackgroundBright, 0},
		{1.4, "", 0.4},
		{0.6, "", 0.4},
	} {
		if got := signedContrast(c.r, c.bg); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("signedContrast(%v, %q) = %v, want %v", c.r, c.bg, got, c.want)
		}
	}
}

// haloCells is a phase-contrast-like scene on 240 x 160 pixels: six dark
// cells (radius 12, level 0.40) on a grey field (0.60), each ringed by a
// bright halo 3 px wide (0.85) just outside its edge, with Gaussian noise
// of 0.03 (noisyField). Two pairs have centres 30 px apart (6 px between
// the cells, their halos meeting), two cells stand alone. The label is
// the cell, not its halo.
func haloCells(x, y int) (float64, int32) {
	centres := [][2]float64{{40, 40}, {70, 40}, {40, 115}, {70, 115}, {160, 60}, {200, 115}}
	const r, halo = 12.0, 3.0
	fx, fy := float64(x)+0.5, float64(y)+0.5
	v, l := 0.60, int32(0)
	for k, c := range centres {
		d := math.Hypot(fx-c[0], fy-c[1])
		switch {
		case d < r:
			return 0.40, int32(k + 1)
		case d < r+halo:
			v = 0.85
		}
	}
	return v, l
}

// A bright halo around a dark cell on a bright field lies on the
// background's side of it: the cells come out as objects of their own
// size, not with the halo ring (a ring of 3 px around radius 12 would
// add 56 % to each). Against the former contrast |I/B - 1| the ring
// counted as contrast of the cell it surrounds.
func TestHaloOutsideObject(t *testing.T) {
	const w, h = 240, 160
	lum, truth := noisyField(w, h, 15131, haloCells)
	p := defaultParams()
	p.Classes, p.Background = 2, BackgroundBright
	res, err := Run(context.Background(), Input{Width: w, Height: h, Planes: [][]float32{lum}, Luminance: lum}, p)
	if err != nil {
		t.Fatal(err)
	}
	if res.NumObjects != 6 {
		t.Fatalf("%d objects, want the 6 cells", res.NumObjects)
	}
	// The IoU of each cell with the object over most of its pixels.
	for cell := int32(1); cell <= 6; cell++ {
		inter := map[int32]int{}
		area := 0
		for i, l := range truth {
			if l == cell {
				area++
				inter[res.Labels.Pix[i]]++
			}
		}
		best, bestN := int32(0), 0
		for o, n := range inter {
			if o > 0 && n > bestN {
				best, bestN = o, n
			}
		}
		objArea := 0
		for _, o := range res.Labels.Pix {
			if o == best {
				objArea++
			}
		}
		iou := float64(bestN) / float64(area+objArea-bestN)
		if best == 0 || iou < 0.8 {
			t.Errorf("cell %d (%d px): best object %d of %d px, IoU %.2f, want >= 0.8", cell, area, best, objArea, iou)
		}
	}
}
