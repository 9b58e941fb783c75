package segment

import (
	"context"
	"math"
	"testing"
)

// glowScene is a dark field (0.10, noise 0.03 from noisyField) on
// 320 x 240 pixels with three bright nuclei (0.70, radius 12, labels
// 1-3), each in a glow of out-of-focus light (a Gaussian of height 0.12
// and σ 25 px around it), and four dim nuclei (radius 12, 0.08 above
// the field around them, 2.7 noise deviations a pixel; labels 4-7), two
// on the glows' flanks and two in the open.
func glowScene(x, y int) (float64, int32) {
	bright := [][2]float64{{60, 60}, {200, 70}, {150, 180}}
	dim := [][2]float64{{105, 70}, {200, 125}, {270, 190}, {50, 190}}
	const r = 12.0
	fx, fy := float64(x)+0.5, float64(y)+0.5
	v := 0.10
	for _, c := range bright {
		d2 := (fx-c[0])*(fx-c[0]) + (fy-c[1])*(fy-c[1])
		v += 0.12 * math.Exp(-d2/(2*25*25))
	}
	for k, c := range bright {
		if math.Hypot(fx-c[0], fy-c[1]) < r {
			return 0.70, int32(k + 1)
		}
	}
	for k, c := range dim {
		if math.Hypot(fx-c[0], fy-c[1]) < r {
			return v + 0.08, int32(k + 4)
		}
	}
	return v, 0
}

// The faint search against the local background (Params.Faint) finds
// dim nuclei the rule against the smooth field leaves in the
// background: on glowScene, at level 4 each of the seven nuclei is an
// object of its own (IoU >= 0.8) and there are no others. Off (0) the
// glows widen the spread of the background's scores and the dim nuclei
// stay background (measured: the three bright nuclei alone); that is
// logged, not asserted, as it is the case the level exists for.
func TestFaintLocal(t *testing.T) {
	const w, h = 320, 240
	lum, truth := noisyField(w, h, 15801, glowScene)
	run := func(faint int) *Result {
		p := defaultParams()
		p.Classes, p.Background, p.Faint = 2, BackgroundDark, faint
		res, err := Run(context.Background(), Input{Width: w, Height: h, Planes: [][]float32{lum}, Luminance: lum}, p)
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	off := run(0)
	t.Logf("faint off: %d objects, IoU by nucleus %v", off.NumObjects, bestIoUs(truth, off.Labels.Pix, 7))
	res := run(4)
	ious := bestIoUs(truth, res.Labels.Pix, 7)
	if res.NumObjects != 7 {
		t.Errorf("faint 4: %d objects, want the 7 nuclei (IoU by nucleus %v)", res.NumObjects, ious)
	}
	for k, v := range ious {
		if v < 0.8 {
			t.Errorf("faint 4: nucleus %d best IoU %.2f, want >= 0.8", k+1, v)
		}
	}
}

// bestIoUs is, for each truth label 1..n, the IoU of the object that
// covers most of its pixels (0 when only background does), to 2 places.
func bestIoUs(truth, labels []int32, n int) []float64 {
	out := make([]float64, n)
	area := map[int32]int{}
	for _, o := range labels {
		area[o]++
	}
	for c := int32(1); c <= int32(n); c++ {
		inter := map[int32]int{}
		ca := 0
		for i, l := range truth {
			if l == c {
				ca++
				inter[labels[i]]++
			}
		}
		best, bestN := int32(0), 0
		for o, k := range inter {
			if o > 0 && k > bestN {
				best, bestN = o, k
			}
		}
		if best > 0 {
			out[c-1] = math.Round(100*float64(bestN)/float64(ca+area[best]-bestN)) / 100
		}
	}
	return out
}
