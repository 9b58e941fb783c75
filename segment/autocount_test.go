package segment

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
)

// discField renders bright discs of radius r (area fraction over 4x4
// sub-samples) on a square grid of pitch 4r over a w x w
// dark field, with Gaussian noise of standard deviation 0.03 from a fixed
// seed: objects of one size at a density that does not depend on w.
func discField(w int, r float64) Input {
	rng := rand.New(rand.NewPCG(uint64(w), 7))
	sp := 4 * r
	f := make([]float32, w*w)
	for y := 0; y < w; y++ {
		for x := 0; x < w; x++ {
			cx := (math.Floor(float64(x)/sp) + 0.5) * sp
			cy := (math.Floor(float64(y)/sp) + 0.5) * sp
			cov := 0.0
			for sy := 0; sy < 4; sy++ {
				for sx := 0; sx < 4; sx++ {
					dx := float64(x) + (float64(sx)+0.5)/4 - 0.5 - cx
					dy := float64(y) + (float64(sy)+0.5)/4 - 0.5 - cy
					if dx*dx+dy*dy <= r*r {
						cov++
					}
				}
			}
			f[y*w+x] = float32(0.15 + 0.6*cov/16 + 0.03*rng.NormFloat64())
		}
	}
	return Input{Width: w, Height: w, Planes: [][]float32{f}, Luminance: f}
}

// noiseField is Gaussian noise (mean 0.5, standard deviation 0.05) with
// no object in it.
func noiseField(w int) Input {
	rng := rand.New(rand.NewPCG(uint64(w), 8))
	f := make([]float32, w*w)
	for i := range f {
		f[i] = float32(0.5 + 0.05*rng.NormFloat64())
	}
	return Input{Width: w, Height: w, Planes: [][]float32{f}, Luminance: f}
}

// The rule of autoSuperpixels on given estimates. Expected counts are the
// closed form k·npix/(πr²) with k = 4 (an object of radius r spans four
// superpixels of area πr²/4), worked by hand, then bounded below by the
// per-pixel rule (4000) and above by npix/16 and 48000.
func TestAutoSuperpixelsRule(t *testing.T) {
	found := func(r, strength float64) affinity.ScaleEstimate {
		return affinity.ScaleEstimate{Radius: r, Sigma: r / math.Sqrt2, Strength: strength, Blobs: 50, Found: true}
	}
	for _, c := range []struct {
		name     string
		npix     int
		est      affinity.ScaleEstimate
		want     int
		wantUsed bool
	}{
		// 4·2048²/(π·20²) = 16777216/1256.64 = 13350.8
		{"2048² radius 20", 2048 * 2048, found(20, 300), 13351, true},
		// 4·4096²/(π·40²) = 67108864/5026.55 = 13350.8
		{"4096² radius 40", 4096 * 4096, found(40, 300), 13351, true},
		// 4·2048²/(π·12²) = 37086.3
		{"2048² radius 12", 2048 * 2048, found(12, 300), 37086, true},
		// 4·4096²/(π·12²) = 148345, above the absolute cap
		{"4096² radius 12 capped", 4096 * 4096, found(12, 300), 48000, true},
		// 4·600²/(π·7²) = 9354 < npix/16 = 22500
		{"600² radius 7", 600 * 600, found(7, 100), 9354, true},
		// 4·1200²/(π·6²) = 50930, below npix/16 = 90000, above the absolute cap
		{"1200² radius 6, absolute cap", 1200 * 1200, found(6, 100), 48000, true},
		// 4·1024²/(π·30²) = 1483: never below the per-pixel rule's 4000
		{"1024² radius 30, floor", 1024 * 1024, found(30, 300), 4000, true},
		// 4·512²/(π·12.5²) = 2136: 512² nuclei stay at today's 4000
		{"512² radius 12.5, floor", 512 * 512, found(12.5, 300), 4000, true},
		{"not found", 2048 * 2048, affinity.ScaleEstimate{Strength: 6}, 4000, false},
		// packed grains, plates, surfaces: the boundary or texture scale
		// (measured ranges in the doc of ScaleMinRadius)
		{"boundary scale of packed grains", 2048 * 2048, found(3.0, 21.7), 4000, false},
		{"texture scale of a surface", 2048 * 2048, found(3.6, 38.8), 4000, false},
		{"texture scale of a plate", 2048 * 2048, found(4.1, 24.3), 4000, false},
		// tiny objects, however strong (stars): the per-pixel rule
		{"small strong objects", 2048 * 2048, found(5, 120), 4000, false},
		{"stars", 1000 * 872, found(2.3, 72), 4000, false},
		{"zero radius", 2048 * 2048, found(0, 300), 4000, false},
		{"infinite radius", 2048 * 2048, found(math.Inf(1), 300), 4000, false},
		{"NaN radius", 2048 * 2048, found(math.NaN(), 300), 4000, false},
	} {
		got, used := autoSuperpixels(c.npix, c.est)
		if got != c.want || used != c.wantUsed {
			t.Errorf("%s: %d superpixels (used %v), want %d (used %v)", c.name, got, used, c.want, c.wantUsed)
		}
	}
}

// At a fixed object radius the automatic count rises with the frame
// size (k·npix/(πr²) on the estimated radius), and falls back to today's
// rule without objects; below 192000 pixels no scale is estimated at all
// (today's rule: the pixel graph up to 128², then npix/48).
func TestAutoCountFollowsFrameSize(t *testing.T) {
	const r = 8
	prev := 0
	for _, c := range []struct {
		w        int
		estimate bool
	}{
		{100, false}, {300, false}, {480, true}, {640, true}, {960, true},
	} {
		in := discField(c.w, r)
		count, est, used := autoCount(in, false, 2)
		npix := c.w * c.w
		if !c.estimate {
			want := 0
			if npix > PixelGraphMaxPixels {
				want = max(npix/PixelsPerSuperpixel, MinAutoSuperpixels)
			}
			if count != want || est != nil || used {
				t.Errorf("%d²: count %d est %v used %v, want today's %d without an estimate", c.w, count, est, used, want)
			}
			continue
		}
		if est == nil || !est.Found || !used || math.Abs(est.Radius-r) > 0.2*r {
			t.Fatalf("%d²: estimate %+v used %v, want radius %v within 20%% (Lindeberg's closed form, as in affinity's tests)", c.w, est, used, r)
		}
		want, _ := autoSuperpixels(npix, *est)
		if count != want || count <= prev {
			t.Errorf("%d²: count %d (rule %d), want it above %d of the smaller frame", c.w, count, want, prev)
		}
		t.Logf("%d²: radius %.2f strength %.0f -> %d superpixels (today %d)", c.w, est.Radius, est.Strength, count, min(npix/PixelsPerSuperpixel, MaxAutoSuperpixels))
		prev = count
	}
	for _, w := range []int{480, 960} {
		count, est, used := autoCount(noiseField(w), false, 2)
		if count != MaxAutoSuperpixels || used || est == nil || est.Found {
			t.Errorf("noise %d²: count %d used %v est %+v, want today's %d, the scale not found", w, count, used, est, MaxAutoSuperpixels)
		}
	}
}

// Run reports the estimate and uses its count; a given count is kept and
// no scale is estimated. The worker count changes nothing (determinism).
func TestRunReportsObjectScale(t *testing.T) {
	if testing.Short() {
		t.Skip("segments a 480x480 frame")
	}
	in := discField(480, 8)
	p := defaultParams()
	p.Classes, p.Background = 2, "dark"
	var first *Result
	for _, workers := range []int{1, 2} {
		p.Workers = workers
		res, err := Run(context.Background(), in, p)
		if err != nil {
			t.Fatal(err)
		}
		if res.ObjectScale == nil || !res.ObjectScaleUsed {
			t.Fatalf("workers %d: ObjectScale %v used %v, want an estimate that was used", workers, res.ObjectScale, res.ObjectScaleUsed)
		}
		want, _ := autoSuperpixels(480*480, *res.ObjectScale)
		if res.Params.Superpixels != want {
			t.Errorf("workers %d: Params.Superpixels %d, want the rule's %d", workers, res.Params.Superpixels, want)
		}
		if first == nil {
			first = res
			continue
		}
		if *res.ObjectScale != *first.ObjectScale || res.Params.Superpixels != first.Params.Superpixels || !slices.Equal(res.Labels.Pix, first.Labels.Pix) {
			t.Errorf("workers %d changed the estimate or the labels", workers)
		}
	}
	// discs of radius 8 on a grid of pitch 32 over 480 pixels: 15x15 = 225
	if first.NumObjects != 225 {
		t.Errorf("%d objects, want the 225 discs", first.NumObjects)
	}
	p.Superpixels, p.Workers = 3000, 2
	res, err := Run(context.Background(), in, p)
	if err != nil {
		t.Fatal(err)
	}
	if res.ObjectScale != nil || res.ObjectScaleUsed || res.Params.Superpixels != 3000 {
		t.Errorf("given count: ObjectScale %v used %v superpixels %d, want none, 3000", res.ObjectScale, res.ObjectScaleUsed, res.Params.Superpixels)
	}
}
