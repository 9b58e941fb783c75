package segment

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// flatScene is a w x h field at I = B = 1 and an empty object map.
func flatScene(w, h int) (lum, field []float32, obj labelmap.Map) {
	lum = make([]float32, w*h)
	field = make([]float32, w*h)
	for i := range lum {
		lum[i], field[i] = 1, 1
	}
	return lum, field, labelmap.New(w, h)
}

// lineScene is a bright field (I = B = 1) crossed by a dark horizontal
// line two pixels wide (rows 20 and 21) at I = 1 - line, with a dark disc
// of radius 5 at I = 1 - disc centred on the line at x = 60, and a
// bright square (I = 1.5) of 6 x 6 pixels above the line at x = 20..25,
// rows 12..17. It returns the image, the field, and an object map in
// which object 1 is the stretch x = 10..29 of the line (both rows), and
// object 2 is the disc.
func lineScene(line, disc float32) (lum, field []float32, obj labelmap.Map) {
	const w, h = 90, 40
	lum, field, obj = flatScene(w, h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			if y == 20 || y == 21 {
				lum[i] = 1 - line
				if x >= 10 && x <= 29 {
					obj.Pix[i] = 1
				}
			}
			if y >= 12 && y <= 17 && x >= 20 && x <= 25 {
				lum[i] = 1.5
			}
			if math.Hypot(float64(x)-60, float64(y)-20.5) <= 5 {
				lum[i] = 1 - disc
				obj.Pix[i] = 2
			}
		}
	}
	return lum, field, obj
}

// TestOutshoneLineStretch: worked by hand. On the line two pixels wide
// at contrast c, every line pixel away from the ends and the disc has 6
// line pixels in its 3x3 window, so its smoothed contrast is 6c/9 = 2c/3
// whether it belongs to the stretch or not; halfMaxLevel of the stretch
// (its 40 values, 32 of them at 2c/3 and the 8 at its ends, where the
// window holds the line beyond too, at 2c/3 as well) is c/3, so its
// plateau is 2c/3 and the line beyond its ends, background, reaches it:
// the stretch is dropped. The disc (contrast 0.8 against the line's 0.3)
// is kept: the line leaving it has a smoothed contrast of at most 0.2,
// far below its plateau. The bright square beside the stretch has the
// opposite sign and does not count.
func TestOutshoneLineStretch(t *testing.T) {
	lum, field, obj := lineScene(0.3, 0.8)
	drop := outshone(lum, field, obj, 2, 0)
	if drop == nil || !drop[1] {
		t.Fatalf("the stretch of line was kept (drop %v)", drop)
	}
	if drop[2] {
		t.Errorf("the disc on the line was dropped")
	}
}

// TestOutshoneFrame: the same stretch of line, moved to touch the left
// edge of the frame (x = 0..19, the line going on beyond x = 19 as
// before), is kept: an object cut by the frame is not judged.
func TestOutshoneFrame(t *testing.T) {
	lum, field, obj := lineScene(0.3, 0.8)
	for i, l := range obj.Pix {
		if l == 1 {
			obj.Pix[i] = 0
		}
	}
	for _, y := range []int{20, 21} {
		for x := range 20 {
			obj.Pix[y*obj.Width+x] = 1
		}
	}
	if drop := outshone(lum, field, obj, 2, 0); drop != nil && drop[1] {
		t.Errorf("the stretch cut by the frame was dropped")
	}
}

// TestOutshoneKeepsIsolated: with no line (c = 0) neither object has
// background of its sign around it at its plateau, and nothing is
// dropped (nil), also with noise of a twentieth of the disc's contrast
// on every pixel: the 3x3 mean of the background's noise stays far below
// the disc's plateau.
func TestOutshoneKeepsIsolated(t *testing.T) {
	lum, field, obj := lineScene(0, 0.8)
	// The stretch has no contrast of its own here; give it one, a
	// shallow dark bar, so that it is an object of its own.
	for i, l := range obj.Pix {
		if l == 1 {
			lum[i] = 0.7
		}
	}
	if drop := outshone(lum, field, obj, 2, 0); drop != nil {
		t.Errorf("isolated objects dropped: %v", drop)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range lum {
		lum[i] += float32(rng.NormFloat64() * 0.04)
	}
	if drop := outshone(lum, field, obj, 2, 0); drop != nil {
		t.Errorf("isolated objects dropped under noise: %v", drop)
	}
}

// TestOutshoneNeighbourRim: a dim object beside a bright one, the pixels
// between them (background) brighter than the dim one's plateau but
// within reach of both objects: they are the bright one's rim, not the
// dim one's surround, and the dim object stays.
func TestOutshoneNeighbourRim(t *testing.T) {
	const w, h = 40, 20
	lum, field, obj := flatScene(w, h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			switch {
			case y >= 5 && y < 15 && x >= 5 && x < 15: // bright object
				lum[i], obj.Pix[i] = 3, 1
			case y >= 5 && y < 15 && x >= 15 && x < 17: // its rim, background
				lum[i] = 2
			case y >= 5 && y < 15 && x >= 17 && x < 27: // dim object
				lum[i], obj.Pix[i] = 1.4, 2
			}
		}
	}
	if drop := outshone(lum, field, obj, 2, 0); drop != nil {
		t.Errorf("objects dropped beside a brighter rim: %v", drop)
	}
}

// TestLabelsNear, worked by hand on a 5 x 5 map with label 2 at (0,0),
// 5 at (4,4) and 3 at (2,1): the least and greatest label within
// chessboard distance r of a pixel, 0 and 0 where there is none.
func TestLabelsNear(t *testing.T) {
	const w, h = 5, 5
	labels := make([]int32, w*h)
	labels[0*w+0], labels[4*w+4], labels[1*w+2] = 2, 5, 3
	tests := []struct {
		x, y, r int
		lo, hi  int32
	}{
		{0, 0, 0, 2, 2},
		{1, 0, 0, 0, 0},
		{1, 0, 1, 2, 3},
		{4, 0, 1, 0, 0},
		{3, 3, 1, 5, 5},
		{2, 2, 1, 3, 3},
		{2, 2, 2, 2, 5},
		{0, 4, 1, 0, 0},
		{0, 4, 3, 3, 3},
		{0, 4, 4, 2, 5},
	}
	for _, tc := range tests {
		lo, hi := labelsNear(labels, w, h, tc.y*w+tc.x, tc.r)
		if lo != tc.lo || hi != tc.hi {
			t.Errorf("(%d,%d) r %d: %d..%d, want %d..%d", tc.x, tc.y, tc.r, lo, hi, tc.lo, tc.hi)
		}
	}
}

// TestOutshoneOwnRim: a thin object, a bar of 4 x 20 pixels whose two
// long edges are bright (I = 3) and whose middle two rows are dim (I =
// 1.3), on a field of 1, with its blur outside: a ring one pixel wide at
// I = 1.8 next to its outline (background). By hand (checked with
// scipy's uniform_filter): its plateau (halfMaxLevel of its smoothed
// contrasts over tightenLevel) is 0.87; along its long sides the ring's
// smoothed contrast is (3 x 0.8 + 3 x 2) / 9 = 0.93, above it; one pixel
// farther out at most 3 x 0.8 / 9 = 0.27. The ring is the object's own
// rim, not its surround, and the object stays; a surround that began
// next to the outline dropped it.
func TestOutshoneOwnRim(t *testing.T) {
	const w, h = 40, 20
	lum, field, obj := flatScene(w, h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			switch {
			case x >= 10 && x <= 29 && (y == 9 || y == 10):
				lum[i], obj.Pix[i] = 1.3, 1
			case x >= 10 && x <= 29 && (y == 8 || y == 11):
				lum[i], obj.Pix[i] = 3, 1
			case x >= 9 && x <= 30 && y >= 7 && y <= 12:
				lum[i] = 1.8
			}
		}
	}
	if drop := outshone(lum, field, obj, 1, 0); drop != nil {
		t.Errorf("a thin object dropped for its own blurred rim")
	}
}

// TestOutshoneThick: a disc of radius 8 (I = 1.5) beside a brighter
// background patch (I = 2.5, 6 x 6 pixels two pixels from it): the
// patch is above the disc's plateau, but the disc has pixels more than
// thinReach from the background, so it is no stretch of a thin line (an
// object whose outline left part of it as background, as a coin of
// scikit-image's coins.png had) and stays. Without the disc's thickness
// it would go (checked by a thin bar in the same place).
func TestOutshoneThick(t *testing.T) {
	const w, h = 40, 40
	lum, field, obj := flatScene(w, h)
	bar := labelmap.New(w, h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			if math.Hypot(float64(x)-15, float64(y)-20) <= 8 {
				lum[i], obj.Pix[i] = 1.5, 1
				if y >= 19 && y <= 21 {
					bar.Pix[i] = 1
				}
			}
			if x >= 25 && x <= 30 && y >= 17 && y <= 22 {
				lum[i] = 2.5
			}
		}
	}
	if drop := outshone(lum, field, obj, 1, 0); drop != nil {
		t.Errorf("a thick object dropped")
	}
	if drop := outshone(lum, field, bar, 1, 0); drop == nil {
		t.Errorf("a thin bar with a brighter patch beside it kept")
	}
}

// TestOutshoneAcrossGap: two dark bars three pixels high on a bright
// field, like strokes of two letters: the object (I = 0.4, contrast 0.6)
// and, two pixels below it across paper a little brighter than the
// field (I = 1.1), a darker bar left as background (I = 0). By hand
// (checked with scipy's uniform_filter): the object's plateau is 0.4,
// its outline level 0.2; the dark bar's row three pixels from the
// object has a smoothed contrast of (-0.1 + 1 + 1)/3 = 0.63, above the
// plateau, but the paper's row next to the object has (0.6 - 0.1 -
// 0.1)/3 = 0.13, below the level, so the dark bar is not reached from
// the object and the object stays; counting every pixel near it dropped
// it.
func TestOutshoneAcrossGap(t *testing.T) {
	const w, h = 40, 30
	lum, field, obj := flatScene(w, h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			if x < 10 || x >= 30 {
				continue
			}
			switch {
			case y >= 10 && y <= 12:
				lum[i], obj.Pix[i] = 0.4, 1
			case y >= 13 && y <= 14:
				lum[i] = 1.1
			case y >= 15 && y <= 17:
				lum[i] = 0
			}
		}
	}
	if drop := outshone(lum, field, obj, 1, 0); drop != nil {
		t.Errorf("a bar dropped for a darker one across a gap")
	}
}
