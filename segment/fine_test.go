package segment

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestTightenSmallDisc: a disc of radius r (contrast 1) blurred by a
// Gaussian of 1 px plus white noise of 0.03, inside a region 3 px wider
// than the disc (a superpixel region around a spot). tightenObjects must
// outline it at its own size: area within 25 % of the disc's and IoU at
// least 0.7, for radii 3 to 6 px. Outlined on the 3x3 mean (fineRadius
// 0) the discs of radius 3 and 3.5 px failed (radius 3: area 1.52 times
// the disc's, IoU 0.659); on the contrast itself 1.17 and IoU 0.853. At
// 2.5 px even the contrast's half maximum covers 1.30 times the disc
// (the blur spreads its peak), so smaller radii are not asked.
// (Half-maximum outlines are common practice; the discs are ours.)
func TestTightenSmallDisc(t *testing.T) {
	const w, h = 40, 40
	for _, r := range []float64{3, 3.5, 4, 6} {
		rng := rand.New(rand.NewPCG(7, uint64(r*10)))
		var truth []bool
		img := make([]float32, w*h)
		cx, cy := 20.3, 19.6
		for i := range img {
			in := math.Hypot(float64(i%w)-cx, float64(i/w)-cy) <= r
			truth = append(truth, in)
			if in {
				img[i] = 1
			}
		}
		img = affinity.GaussianSmooth(img, w, h, 1, 1)
		con := make([]float64, w*h)
		region := make([]int32, w*h)
		area := 0
		for i, v := range img {
			con[i] = math.Abs(float64(v) + 0.03*rng.NormFloat64())
			if math.Hypot(float64(i%w)-cx, float64(i/w)-cy) <= r+3 {
				region[i] = 1
			}
			if truth[i] {
				area++
			}
		}
		out, n := tightenObjects(con, labelmap.Map{Pix: region, Width: w, Height: h}, 1, 5, 1)
		if n != 1 {
			t.Errorf("radius %v: %d objects, want 1", r, n)
			continue
		}
		got := 0
		for _, l := range out {
			if l == 1 {
				got++
			}
		}
		ratio := float64(got) / float64(area)
		iou := bestIoU(out, n, truth)
		t.Logf("radius %v: area ratio %.2f, IoU %.3f", r, ratio, iou)
		if ratio < 0.75 || ratio > 1.25 || iou < 0.7 {
			t.Errorf("radius %v: area %d over the disc's %d = %.2f (want 0.75..1.25), IoU %.3f (want >= 0.7)", r, got, area, ratio, iou)
		}
	}
}
