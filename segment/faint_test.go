package segment

import (
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// A faint square of 16x16 pixels at 1.1 times a flat background with 5 %
// pixel noise, in a single background region, on a grid of 8x8
// superpixels: each of its superpixels averages 64 pixels, so its score
// log(1.1) ≈ 0.095 stands about 15 standard deviations (0.05/8 per
// superpixel) above the background's (Gaussian arithmetic), beyond
// faintSigmas; it becomes one new object region, and nothing else does.
// Flipped (a dark square on a bright background) the same holds.
func TestFaintObjects(t *testing.T) {
	const w, h, cell = 128, 128, 8
	for _, background := range []Background{BackgroundDark, BackgroundBright} {
		r := rand.New(rand.NewPCG(5, 6))
		lum := make([]float32, w*h)
		field := make([]float32, w*h)
		nodeOf := make([]int32, w*h)
		reg := make([]int32, w*h)
		level := float32(1.1)
		if background == "bright" {
			level = 0.9
		}
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				i := y*w + x
				v := float32(1)
				if x >= 64 && x < 80 && y >= 32 && y < 48 {
					v = level
				}
				lum[i] = 0.5 * v * (1 + float32(0.05*r.NormFloat64()))
				field[i] = 0.5
				nodeOf[i] = int32((y/cell)*(w/cell) + x/cell)
			}
		}
		bg := int32(0)
		if background == "bright" {
			bg = 1
		}
		cls := []int32{bg}
		out, n, outCls := faintObjects(lum, field, nodeOf, (w/cell)*(h/cell), labelmap.Map{Pix: reg, Width: w, Height: h}, 1, cls, bg, background, faintSigmas, 20, 1)
		if n != 2 || outCls[1] == bg {
			t.Fatalf("%s: %d regions, classes %v; want 2 with the new one an object", background, n, outCls)
		}
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				in := x >= 64 && x < 80 && y >= 32 && y < 48
				if got := out.At(x, y) == 1; got != in {
					t.Fatalf("%s: pixel (%d,%d) in new region %v, want %v", background, x, y, got, in)
				}
			}
		}
	}
}

// A dim square on a dark field near zero, the case the softened score is
// for: background 0.003 with pixel noise 0.006 (normalized units), the
// square 16x16 at five times the background, 8x8 superpixels. A
// superpixel mean has noise 0.006/8 = 0.00075, a quarter of the
// background itself, so log(Ī/B̄) spreads by about 0.25 and the square's
// log 5 = 1.6 stands only about 6.4 of those spreads out, short of
// faintSigmas; softened by c = 0.006 the background's scores spread by
// about 0.083 and the square's log(0.021/0.009) = 0.85 stands about 10
// out (Gaussian arithmetic). The square becomes one object region and
// nothing else does.
func TestFaintObjectsNearZeroField(t *testing.T) {
	const w, h, cell = 128, 128, 8
	r := rand.New(rand.NewPCG(9, 2))
	lum := make([]float32, w*h)
	field := make([]float32, w*h)
	nodeOf := make([]int32, w*h)
	reg := make([]int32, w*h)
	square := func(x, y int) bool { return x >= 64 && x < 80 && y >= 32 && y < 48 }
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			v := 0.003
			if square(x, y) {
				v = 0.015
			}
			lum[i] = float32(v + 0.006*r.NormFloat64())
			field[i] = 0.003
			nodeOf[i] = int32((y/cell)*(w/cell) + x/cell)
		}
	}
	out, n, outCls := faintObjects(lum, field, nodeOf, (w/cell)*(h/cell), labelmap.Map{Pix: reg, Width: w, Height: h}, 1, []int32{0}, 0, BackgroundDark, faintSigmas, 20, 1)
	if n != 2 || outCls[1] == 0 {
		t.Fatalf("%d regions, classes %v; want 2 with the new one an object", n, outCls)
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if got := out.At(x, y) == 1; got != square(x, y) {
				t.Fatalf("pixel (%d,%d) in new region %v, want %v", x, y, got, square(x, y))
			}
		}
	}
}
