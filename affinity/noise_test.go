package affinity

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// PixelNoise recovers the standard deviation of white Gaussian noise
// added to a gentle ramp (0.5 over 512 px, so adjacent pixels differ by
// about 0.001, a fiftieth of the noise): the median of |Δ| over ~2^17
// pairs has a sampling error of well under 1 %, and the ramp biases the
// estimate by a fraction of a per cent (Gaussian arithmetic). A constant
// image has none.
func TestPixelNoise(t *testing.T) {
	const w, h = 512, 512
	for _, sigma := range []float64{0.01, 0.05} {
		r := rand.New(rand.NewPCG(1, uint64(sigma*1000)))
		v := make([]float32, w*h)
		for i := range v {
			v[i] = float32(0.2 + 0.5*float64(i%w)/w + sigma*r.NormFloat64())
		}
		if got := PixelNoise(v, w, h); math.Abs(got-sigma) > 0.03*sigma {
			t.Errorf("noise %.2f: estimated %.5f, want within 3%%", sigma, got)
		}
	}
	if got := PixelNoise(make([]float32, w*h), w, h); got != 0 {
		t.Errorf("constant image: noise %g, want 0", got)
	}
}

// PixelNoise on planes with NaN or infinite pixels (the exported
// estimate takes any plane) gives the median of the sorted differences,
// as it did before the histogram selection: no panic, the same value as
// a full sort (slices.Sort puts NaN first).
func TestPixelNoiseNonFinite(t *testing.T) {
	const w, h = 64, 48
	r := rand.New(rand.NewPCG(2, 31))
	for _, bad := range []float32{float32(math.NaN()), float32(math.Inf(1)), float32(math.Inf(-1))} {
		v := make([]float32, w*h)
		for i := range v {
			v[i] = float32(0.3 + 0.02*r.NormFloat64())
			if i%7 == 0 {
				v[i] = bad
			}
		}
		var d []float32
		for y := 0; y < h; y++ {
			for x := 1; x < w; x++ {
				d = append(d, float32(math.Abs(float64(v[y*w+x])-float64(v[y*w+x-1]))))
			}
		}
		slices.Sort(d)
		want := 1.4826 * float64(d[len(d)/2]) / math.Sqrt2
		if got := PixelNoise(v, w, h); !(got == want || math.IsNaN(got) && math.IsNaN(want)) {
			t.Errorf("pixels of %v: PixelNoise %v, want the sorted median's %v", bad, got, want)
		}
	}
}
