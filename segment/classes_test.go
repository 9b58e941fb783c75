package segment

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestMADScale checks the constant against the normal quantile:
// 1/Φ⁻¹(3/4) with Φ⁻¹(p) = √2 erf⁻¹(2p - 1) (Abramowitz and Stegun
// 26.2.2 relates Φ to erf).
func TestMADScale(t *testing.T) {
	want := 1 / (math.Sqrt2 * math.Erfinv(0.5))
	if math.Abs(madScale-want) > 1e-12 {
		t.Fatalf("madScale = %.15g, want %.15g", madScale, want)
	}
}

// noiseScene is a background field B(x) = 0.05 + 0.15 x/w (shading) with
// Gaussian noise of standard deviation cv·B, the whole image marked as
// background.
func noiseScene(w, h int, cv float64, seed uint64) (lum, field []float32, ref []bool) {
	rng := rand.New(rand.NewPCG(seed, 1))
	lum = make([]float32, w*h)
	field = make([]float32, w*h)
	ref = make([]bool, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			b := 0.05 + 0.15*float64(x)/float64(w)
			i := y*w + x
			field[i] = float32(b)
			lum[i] = float32(b * (1 + cv*rng.NormFloat64()))
			ref[i] = true
		}
	}
	return lum, field, ref
}

// TestNoiseCV: the scaled MAD of normal noise estimates its standard
// deviation (common practice); with 65536 samples the estimate's relative
// standard error is about 0.5% (asymptotic variance of the scaled MAD
// about 1.36 σ²/n for normal data, from memory), so 5% is a safe bound.
func TestNoiseCV(t *testing.T) {
	for _, cv := range []float64{0.05, 0.1, 0.25} {
		lum, field, ref := noiseScene(512, 512, cv, 3)
		c, ok := noiseCV(lum, field, ref)
		if !ok || math.Abs(c-cv) > 0.05*cv {
			t.Errorf("cv %.2f: estimate %.4f (ok %v)", cv, c, ok)
		}
	}
	if _, ok := noiseCV(make([]float32, 4), make([]float32, 4), make([]bool, 4)); ok {
		t.Error("no background pixel: want ok = false")
	}
}

// TestNoiseBound: with c = 0.1 the rule is I/B > 1.3 (dark background)
// or I/B < 0.7 (bright background), by 3c as defined; regions beyond it
// leave the background class, regions inside it stay, and no region
// ever moves into the background.
func TestNoiseBound(t *testing.T) {
	lum, field, ref := noiseScene(256, 256, 0.1, 5)
	cases := []struct {
		background Background
		ratio      []float64 // I/B of each region
		cls        []int32   // input classes
		want       []int32
	}{
		{"dark", []float64{1, 1.2, 1.45, 2.5, 8}, []int32{0, 0, 0, 0, 1}, []int32{0, 0, 1, 1, 1}},
		{"dark", []float64{1, 1.1, 5}, []int32{0, 1, 1}, []int32{0, 1, 1}},
		{"bright", []float64{1, 0.8, 0.6, 0.3, 0.1}, []int32{1, 1, 1, 1, 0}, []int32{1, 1, 0, 0, 0}},
		{"bright", []float64{1, 0.9, 0.2}, []int32{1, 0, 0}, []int32{1, 0, 0}},
	}
	for _, c := range cases {
		score := make([]float64, len(c.ratio))
		for r, v := range c.ratio {
			score[r] = math.Log(v)
		}
		got := noiseBound(c.cls, score, lum, field, ref, c.background)
		for r := range got {
			if got[r] != c.want[r] {
				t.Errorf("%s %v: region %d (I/B %.2f) class %d, want %d", c.background, c.ratio, r, c.ratio[r], got[r], c.want[r])
			}
		}
	}
}

// TestKthSmallest compares the selection with a full sort (the definition
// of the k-th order statistic) on random data with ties.
func TestKthSmallest(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for _, n := range []int{1, 2, 3, 10, 101, 1000} {
		for trial := 0; trial < 20; trial++ {
			v := make([]float64, n)
			for i := range v {
				v[i] = float64(rng.IntN(n/2 + 1))
			}
			sorted := slices.Clone(v)
			slices.Sort(sorted)
			k := rng.IntN(n)
			if got := kthSmallest(slices.Clone(v), k); got != sorted[k] {
				t.Fatalf("n %d k %d: %v, want %v", n, k, got, sorted[k])
			}
		}
	}
}

// Regions that went back to the background with a glow are judged again
// against a field that follows the glow: a disc 0.8 on a glow of 0.5
// (I/B 1.6) comes back as an object, the glow itself (I/B 1) does not,
// and a region that was not dropped keeps its class whatever its score.
// The background (region 0) has 5 % pixel noise, so the noise rule's
// bound is about log(1.15).
func TestRejudge(t *testing.T) {
	const w, h = 64, 64
	rng := rand.New(rand.NewPCG(1, 2))
	lum := make([]float32, w*h)
	field := make([]float32, w*h)
	reg := make([]int32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			b := 0.2
			switch {
			case x >= 30 && x < 60 && y >= 10 && y < 40:
				b = 0.5
				reg[i] = 1 // the glow
			case x < 10 && y < 10:
				reg[i] = 3 // a bright patch that was not dropped
			}
			v := b
			if x >= 40 && x < 50 && y >= 20 && y < 30 {
				v = 0.8
				reg[i] = 2 // the disc inside the glow
			}
			if reg[i] == 3 {
				v = 0.6
			}
			lum[i] = float32(v * (1 + 0.05*rng.NormFloat64()))
			field[i] = float32(b)
		}
	}
	cls := []int32{0, 0, 0, 0}
	dropped := []bool{false, true, true, false}
	if !rejudge(cls, dropped, lum, field, reg, 0, "dark") {
		t.Fatal("rejudge changed nothing")
	}
	if want := []int32{0, 0, 1, 0}; cls[0] != want[0] || cls[1] != want[1] || cls[2] != want[2] || cls[3] != want[3] {
		t.Errorf("classes %v, want %v", cls, want)
	}
}
