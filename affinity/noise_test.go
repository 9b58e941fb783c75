package affinity

import (
	"math"
	"math/rand/v2"
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
