package imageio

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestBoxWidths: the three widths' variances sum((w^2-1)/12) come as close
// to sigma^2 as odd widths allow (Kovesi 2010): within one step of the
// width granularity, i.e. |sum - sigma^2| <= (w_l+1)/3, half the variance
// change of widening one box by 2.
func TestBoxWidths(t *testing.T) {
	for _, sigma := range []float64{0.5, 1, 2, 4, 7.5, 30, 100} {
		ws := boxWidths(sigma, 3)
		v := 0.0
		for _, w := range ws {
			if w%2 != 1 {
				t.Fatalf("sigma %v: even width %d", sigma, w)
			}
			v += float64(w*w-1) / 12
		}
		if step := float64(ws[0]+1) / 3; math.Abs(v-sigma*sigma) > step+1e-9 {
			t.Errorf("sigma %v: widths %v give variance %v; want %v within %v", sigma, ws, v, sigma*sigma, step)
		}
	}
}

// TestGaussianBlurReference: against scipy.ndimage.gaussian_filter (scipy
// 1.10.1, mode "reflect", truncate 8; blur.json) on a step of 1000, an
// impulse of 5000 and a ramp. Three boxes approximate the Gaussian (Wells
// 1986); the largest difference measured here was 8.4 units (near the
// impulse); the tolerance is 1% of the 5000 signal range.
func TestGaussianBlurReference(t *testing.T) {
	var ref struct {
		Width, Height int
		Sigma         float64
		Input         []float64
		Blurred       []float64
	}
	readJSON(t, "blur.json", &ref)
	in := make([]float32, len(ref.Input))
	for i, v := range ref.Input {
		in[i] = float32(v)
	}
	got := gaussianBlur(in, ref.Width, ref.Height, ref.Sigma, 2)
	worst := 0.0
	for i := range got {
		worst = math.Max(worst, math.Abs(float64(got[i])-ref.Blurred[i]))
	}
	if worst > 50 {
		t.Errorf("largest difference from scipy %v; want <= 50", worst)
	}
}

// TestGaussianBlurInvariants: a normalized symmetric kernel keeps a
// constant and, away from the borders, a linear ramp unchanged (closed
// form: the kernel has unit sum and zero first moment); with reflection a
// constant stays constant up to the border too, even when sigma exceeds
// the image.
func TestGaussianBlurInvariants(t *testing.T) {
	const w, h = 90, 70
	c := make([]float32, w*h)
	ramp := make([]float32, w*h)
	for i := range c {
		c[i] = 321
		ramp[i] = float32(3*(i%w) + 2*(i/w))
	}
	for _, sigma := range []float64{3, 200} {
		for i, v := range gaussianBlur(c, w, h, sigma, 3) {
			if math.Abs(float64(v)-321) > 1e-3 {
				t.Fatalf("sigma %v: constant became %v at %d", sigma, v, i)
			}
		}
	}
	const sigma = 3
	r := 0
	for _, bw := range boxWidths(sigma, 3) {
		r += bw / 2 // support of the three boxes
	}
	out := gaussianBlur(ramp, w, h, sigma, 1)
	for y := r; y < h-r; y++ {
		for x := r; x < w-r; x++ {
			if d := math.Abs(float64(out[y*w+x] - ramp[y*w+x])); d > 1e-3 {
				t.Fatalf("ramp changed by %v at (%d, %d)", d, x, y)
			}
		}
	}
}

// shadedScene is a background of level bg(x) with 6x6 squares at the left
// and right whose level is contrast times (multiplicative) or plus
// (additive) the background there.
func shadedScene(multiplicative bool) (*Image, [2]int) {
	const w, h = 200, 60
	v := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			bg := 1000 + 150*float64(x) // strong left-to-right shading
			val := bg
			inLeft := x >= 20 && x < 26 && y >= 27 && y < 33
			inRight := x >= 174 && x < 180 && y >= 27 && y < 33
			if inLeft || inRight {
				if multiplicative {
					val = 1.5 * bg
				} else {
					val = bg + 8000
				}
			}
			v[y*w+x] = float32(val)
		}
	}
	return grayImage(w, h, 16, v), [2]int{30*w + 22, 30*w + 176}
}

// TestFlattenRemovesShading: objects under a light gradient (a brighter
// right side) have unequal levels before correction; dividing by (for
// multiplicative shading) or subtracting (additive) a smooth background
// estimate makes them nearly equal, as flat-field correction is meant to
// (common practice). Without correction the normalized levels differ by
// more than 0.4, which is what makes global thresholds fail.
func TestFlattenRemovesShading(t *testing.T) {
	for _, c := range []struct {
		multiplicative bool
		mode           FlattenMode
	}{{true, FlattenDivide}, {false, FlattenSubtract}} {
		im, at := shadedScene(c.multiplicative)
		plain, err := MakeFeatures(im, FeatureOptions{Channel: -1}, 2)
		if err != nil {
			t.Fatal(err)
		}
		flat, err := MakeFeatures(im, FeatureOptions{Channel: -1, Flatten: 15, FlattenMode: c.mode}, 2)
		if err != nil {
			t.Fatal(err)
		}
		p0, p1 := plain.Planes[0][at[0]], plain.Planes[0][at[1]]
		f0, f1 := flat.Planes[0][at[0]], flat.Planes[0][at[1]]
		if math.Abs(float64(p0-p1)) < 0.4 {
			t.Errorf("%s: without correction the objects are %v and %v; the scene should differ by > 0.4", c.mode, p0, p1)
		}
		if math.Abs(float64(f0-f1)) > 0.1 || f0 < 0.5 || f1 < 0.5 {
			t.Errorf("%s: corrected objects %v and %v; want both > 0.5 and within 0.1", c.mode, f0, f1)
		}
	}
}

// TestGaussianBlurWorkersIdentical: on images wider or taller than one
// row or column block (chunks.go), so that the passes are split, the blur
// and the flattening are bit-identical for any worker count (the fixed
// blocks of parallel.Blocks; a property of the code, no reference).
func TestGaussianBlurWorkersIdentical(t *testing.T) {
	for _, size := range [][2]int{{colBlock + 37, 9}, {7, rowBlock + 53}} {
		w, h := size[0], size[1]
		v := make([]float32, w*h)
		for i := range v {
			v[i] = float32((i*7919)%1000) / 7
		}
		want := gaussianBlur(v, w, h, 4, 1)
		wantFlat, err := flatten(context.Background(), v, w, h, 6, FlattenDivide, 1)
		if err != nil {
			t.Fatal(err)
		}
		for _, workers := range []int{2, 3, 0} {
			if got := gaussianBlur(v, w, h, 4, workers); !slices.Equal(got, want) {
				t.Errorf("%dx%d: blur with %d workers differs from one worker", w, h, workers)
			}
			got, err := flatten(context.Background(), v, w, h, 6, FlattenDivide, workers)
			if err != nil || !slices.Equal(got, wantFlat) {
				t.Errorf("%dx%d: flatten with %d workers differs from one worker (%v)", w, h, workers, err)
			}
		}
	}
}

// TestFlattenSubtractLevelsNoise: a dark field (level 100, noise 10)
// beside a glow (level 1600, noise 40: photon noise grows as the square
// root of the level, so a level 16 times higher has 4 times the noise).
// Subtracting the background leaves the glow's noise 4 times the dark
// field's; the noise-levelled subtraction brings the two within 20 % of
// each other (each half's standard deviation measured on 60 x 100
// pixels, about 1 % sampling error; the 20 % allows for the cells that
// straddle the step). With one noise level throughout the levelled
// result is f - B + m within a few percent of the residual (the cell
// estimates' error, about 4 %).
func TestFlattenSubtractLevelsNoise(t *testing.T) {
	const w, h = 256, 128
	rng := rand.New(rand.NewPCG(21, 4))
	step := make([]float32, w*h)
	even := make([]float32, w*h)
	for y := range h {
		for x := range w {
			lvl, sd := 100.0, 10.0
			if x >= w/2 {
				lvl, sd = 1600, 40
			}
			z := rng.NormFloat64()
			step[y*w+x] = float32(lvl + sd*z)
			even[y*w+x] = float32(100 + 10*z)
		}
	}
	sdOf := func(v []float32, x0, x1 int) float64 {
		var s, s2, n float64
		for y := 14; y < h-14; y++ {
			for x := x0; x < x1; x++ {
				f := float64(v[y*w+x])
				s, s2, n = s+f, s2+f*f, n+1
			}
		}
		return math.Sqrt(s2/n - (s/n)*(s/n))
	}
	out, err := flatten(context.Background(), step, w, h, 4, FlattenSubtract, 2)
	if err != nil {
		t.Fatal(err)
	}
	if r := sdOf(out, w/2+34, w-34) / sdOf(out, 34, w/2-34); r < 0.8 || r > 1.25 {
		t.Errorf("levelled subtraction: glow noise / dark noise = %.2f, want within [0.8, 1.25] (4 before)", r)
	}
	bg := gaussianBlur(even, w, h, 4, 1)
	m := meanOf(bg, w, h, 1)
	lev, err := flatten(context.Background(), even, w, h, 4, FlattenSubtract, 1)
	if err != nil {
		t.Fatal(err)
	}
	for i := range even {
		plain := float64(even[i]) - float64(bg[i])
		if d := float64(lev[i]) - m - plain; math.Abs(d) > 0.12*math.Abs(plain)+1e-3 {
			t.Fatalf("one noise level, pixel %d: levelled residual %g, plain %g", i, float64(lev[i])-m, plain)
		}
	}
	for _, workers := range []int{2, 3} {
		again, err := flatten(context.Background(), step, w, h, 4, FlattenSubtract, workers)
		if err != nil || !slices.Equal(again, out) {
			t.Errorf("levelled subtraction with %d workers differs (%v)", workers, err)
		}
	}
}
