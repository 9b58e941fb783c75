package affinity

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestAutoSigmaI checks the estimate against its model: for Gaussian noise
// of standard deviation s, the median absolute neighbour difference is
// 0.6745·√2·s (the half-normal median, a textbook fact), so AutoSigmaI
// should return 2√2·s, also when a few high-contrast steps are present.
func TestAutoSigmaI(t *testing.T) {
	const w, h = 200, 150
	for _, c := range []struct {
		name  string
		s     float64
		steps bool
	}{
		{"noise 0.05", 0.05, false},
		{"noise 0.02 with steps", 0.02, true},
		{"noise 0.1 with steps", 0.1, true},
	} {
		rng := rand.New(rand.NewPCG(5, 6))
		p := make([]float32, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				v := 0.5
				if c.steps && (x/40+y/50)%2 == 1 {
					v = 0.9
				}
				p[y*w+x] = float32(v + c.s*rng.NormFloat64())
			}
		}
		got := AutoSigmaI([][]float32{p}, w, h)
		want := 2 * math.Sqrt2 * c.s
		if relErr(got, want) > 0.05 {
			t.Errorf("%s: AutoSigmaI = %.4g, want %.4g within 5%%", c.name, got, want)
		}
	}
}

func TestAutoSigmaIDegenerate(t *testing.T) {
	constant := [][]float32{slices.Repeat([]float32{0.3}, 64)}
	step := make([]float32, 64) // clean step 0 -> 0.6: median difference 0
	for i := range step {
		if i%8 >= 4 {
			step[i] = 0.6
		}
	}
	cases := []struct {
		name string
		f    [][]float32
		w, h int
		want float64
	}{
		{"constant", constant, 8, 8, minSigmaI},
		{"1x1", [][]float32{{0.7}}, 1, 1, minSigmaI},
		{"clean step uses 1% of spread", [][]float32{step}, 8, 8, 0.006},
	}
	for _, c := range cases {
		got := AutoSigmaI(c.f, c.w, c.h)
		if !(got > 0) || math.IsInf(got, 0) || relErr(got, c.want) > 1e-6 { // float32(0.6) is 0.6 to 4e-8
			t.Errorf("%s: AutoSigmaI = %v, want %v", c.name, got, c.want)
		}
	}
}

// TestLowerMedian: the element of rank (n-1)/2 (noise.Rank, tested
// there against a full sort), worked by hand.
func TestLowerMedian(t *testing.T) {
	for _, c := range []struct {
		v    []float32
		want float32
	}{
		{[]float32{5}, 5},
		{[]float32{3, 1}, 1},            // even length: the lower of the two
		{[]float32{0.4, 0.1, 0.3}, 0.3}, // odd length: the middle
		{[]float32{2, 2, 0, 2, 7, 0}, 2},
		{[]float32{0, 0, 0, 0}, 0},
	} {
		if got := lowerMedian(slices.Clone(c.v)); got != c.want {
			t.Errorf("lowerMedian(%v) = %v, want %v", c.v, got, c.want)
		}
	}
}

// AutoRegionSigmaI on a hand-made labelling: a 3x1 strip of regions with
// means 0.1, 0.2, 0.6 has adjacent differences 0.1 and 0.4; the lower
// median of {0.1, 0.4} is 0.1, above the floor 0.01 x spread 0.5.
func TestAutoRegionSigmaI(t *testing.T) {
	labels := []int32{0, 0, 1, 1, 2, 2}
	f := [][]float32{{0.1, 0.1, 0.2, 0.2, 0.6, 0.6}}
	r := Summarize(f, labelmap.Map{Pix: labels, Width: 6, Height: 1}, 3)
	got := AutoRegionSigmaI(r, Adjacency(labelmap.Map{Pix: labels, Width: 6, Height: 1}, 3, 2))
	if math.Abs(got-0.1) > 1e-6 {
		t.Errorf("sigma-i = %v, want 0.1", got)
	}
	// A constant image: every difference 0, spread 0 -> the absolute floor.
	c := [][]float32{{0.5, 0.5, 0.5, 0.5, 0.5, 0.5}}
	if got := AutoRegionSigmaI(Summarize(c, labelmap.Map{Pix: labels, Width: 6, Height: 1}, 3), Adjacency(labelmap.Map{Pix: labels, Width: 6, Height: 1}, 3, 2)); got != minSigmaI {
		t.Errorf("constant: sigma-i = %v, want the floor %v", got, minSigmaI)
	}
}
