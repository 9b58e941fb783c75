package segment

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/score"
)

// autoSmooth's rule on given estimates, worked by hand from its closed
// forms: the pixel ratio c/s = e·Strength/(2√(2π)·σ), and the smoothing
// g = SmoothSNR/(2√π·c/s), at most r/5.
func TestAutoSmoothRule(t *testing.T) {
	est := func(r, strength float64) affinity.ScaleEstimate {
		return affinity.ScaleEstimate{Radius: r, Sigma: r / math.Sqrt2, Strength: strength, Blobs: 40, Found: true}
	}
	// Strength for a pixel ratio q at radius r: q·2√(2π)·(r/√2)/e.
	strength := func(q, r float64) float64 { return q * 2 * math.Sqrt(2*math.Pi) * r / math.Sqrt2 / math.E }
	for _, c := range []struct {
		name string
		est  affinity.ScaleEstimate
		want float64
	}{
		// q = 2: g = 7/(2√π·2) = 7/7.0898 = 0.98732.
		{"ratio 2, radius 10", est(10, strength(2, 10)), 7 / (4 * math.Sqrt(math.Pi))},
		// q = 3.5: g = 7/(2√π·3.5) = 1/√π = 0.56419.
		{"ratio 3.5, radius 12", est(12, strength(3.5, 12)), 1 / math.Sqrt(math.Pi)},
		// q = 0.5 wants g = 3.9493, above r/5 = 2.
		{"ratio 0.5 capped at r/5", est(10, strength(0.5, 10)), 2},
		{"ratio just above 7: clear enough", est(10, strength(7.01, 10)), 0},
		{"ratio 30", est(10, strength(30, 10)), 0},
		{"no scale found", affinity.ScaleEstimate{Strength: 8, Sigma: 3}, 0},
		// A radius of 3 px at Strength 15 is the weak small scale of
		// packed boundaries (ObjectRadius 0): no smoothing.
		{"weak small scale", est(3, 15), 0},
	} {
		t.Run(c.name, func(t *testing.T) {
			if got := autoSmooth(c.est); math.Abs(got-c.want) > 1e-9 {
				t.Errorf("autoSmooth = %v, want %v", got, c.want)
			}
		})
	}
}

// dimDiscs is a 256 x 256 field of 16 discs of radius 10 on a 4 x 4
// grid at contrast q noise standard deviations (sd) above a flat
// background, with white Gaussian noise: at q of 1 to 3, the
// photon-starved exposure of a fluorescence camera. It returns the
// input and the true instance map.
func dimDiscs(seed uint64, q, sd float64) (Input, []int32) {
	const n, r = 256, 10.0
	rng := rand.New(rand.NewPCG(seed, 21))
	f := make([]float32, n*n)
	truth := make([]int32, n*n)
	for y := 0; y < n; y++ {
		for x := 0; x < n; x++ {
			i := y*n + x
			gx, gy := x/64, y/64
			cx, cy := float64(gx*64+32), float64(gy*64+32)
			v := 0.3
			if dx, dy := float64(x)-cx, float64(y)-cy; dx*dx+dy*dy <= r*r {
				v += q * sd
				truth[i] = int32(gy*4 + gx + 1)
			}
			f[i] = float32(v + sd*rng.NormFloat64())
		}
	}
	return Input{Width: n, Height: n, Planes: [][]float32{f}, Luminance: f}, truth
}

// On a field whose objects stand 1.2 noise standard deviations above
// the background the automatic smoothing is applied, at g =
// 7/(2√π·1.2) = 1.65 px when the scale estimate reads the ratio well,
// and every object is found; without it the graph is built on single
// noisy pixels and finds none of them (the scene is one that needs the
// smoothing). The F1 of 0.9 is our bar for a scene of separate discs
// that smoothing and a threshold segment (common practice), not a
// measured value.
func TestSmoothFindsDimObjects(t *testing.T) {
	in, truth := dimDiscs(5, 1.2, 0.05)
	first := in.Planes[0][0]
	p := DefaultParams()
	p.Classes, p.Background, p.Workers = 2, BackgroundDark, 2
	res, err := Run(context.Background(), in, p)
	if err != nil {
		t.Fatal(err)
	}
	m := score.MatchObjects(res.Labels.Pix, truth)
	off := p
	off.AutoSmooth, off.Smooth = false, 0
	resOff, err := Run(context.Background(), in, off)
	if err != nil {
		t.Fatal(err)
	}
	mOff := score.MatchObjects(resOff.Labels.Pix, truth)
	t.Logf("smooth %.3f px: %d objects, F1 %.3f; unsmoothed: %d objects, F1 %.3f", res.Params.Smooth, res.NumObjects, m.F1, resOff.NumObjects, mOff.F1)
	if !(res.Params.Smooth > 1.3 && res.Params.Smooth < 2) {
		t.Errorf("automatic smoothing %v px, want about 1.65 (1.3 to 2)", res.Params.Smooth)
	}
	if !res.Params.AutoSmooth {
		t.Error("Result.Params.AutoSmooth was cleared; want it kept beside the value used")
	}
	if m.F1 < 0.9 {
		t.Errorf("object F1 %.3f with the automatic smoothing, want at least 0.9", m.F1)
	}
	if mOff.F1 > 0.5 {
		t.Errorf("unsmoothed object F1 %.3f: the scene no longer needs smoothing, so it tests nothing", mOff.F1)
	}
	if resOff.Params.Smooth != 0 {
		t.Errorf("smoothing off reports %v px", resOff.Params.Smooth)
	}
	if in.Planes[0][0] != first {
		t.Error("Run wrote the caller's plane")
	}
}

// The same discs at 20 noise standard deviations are not smoothed: their
// pixels already stand far above the noise.
func TestSmoothLeavesCleanImages(t *testing.T) {
	in, _ := dimDiscs(6, 20, 0.01)
	p := DefaultParams()
	p.Classes, p.Background, p.Workers = 2, BackgroundDark, 2
	res, err := Run(context.Background(), in, p)
	if err != nil {
		t.Fatal(err)
	}
	if res.Params.Smooth != 0 || res.ObjectScale == nil || !res.ObjectScale.Found {
		t.Errorf("clean image smoothed at %v px (scale estimate %+v), want 0 with a scale found", res.Params.Smooth, res.ObjectScale)
	}
}

// A fixed smoothing out of range is refused by name.
func TestSmoothRange(t *testing.T) {
	for _, v := range []float64{-1, 0.05, 51, math.NaN()} {
		p := DefaultParams()
		p.AutoSmooth, p.Smooth = false, v
		err := p.Validate()
		pe, ok := err.(*ParamError)
		if !ok || pe.Name != "smooth" {
			t.Errorf("Smooth %v: error %v, want a ParamError for smooth", v, err)
		}
	}
	p := DefaultParams()
	p.AutoSmooth, p.Smooth = false, 0
	if err := p.Validate(); err != nil {
		t.Errorf("Smooth 0 (none): %v", err)
	}
}
