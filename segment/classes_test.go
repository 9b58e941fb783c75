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
	if !rejudge(cls, dropped, lum, field, reg, 0, "dark", 0) {
		t.Fatal("rejudge changed nothing")
	}
	if want := []int32{0, 0, 1, 0}; cls[0] != want[0] || cls[1] != want[1] || cls[2] != want[2] || cls[3] != want[3] {
		t.Errorf("classes %v, want %v", cls, want)
	}
}

// fieldCase is a region map with classes for the field tests: regions
// are horizontal runs of random length on random rows, so runs start and
// end anywhere across the grid's cells, and class c covers a share of
// them (none, or a band of rows only, so that cells far from it take the
// global mean).
type fieldCase struct {
	name     string
	w, h     int
	regions  int
	share    float64 // fraction of regions of class 0
	bandOnly bool    // class 0 only in the top tenth of the rows
}

func (fc fieldCase) make(seed uint64) (lum []float32, reg, cls []int32) {
	rng := rand.New(rand.NewPCG(seed, 7))
	lum = make([]float32, fc.w*fc.h)
	// Values over many orders of magnitude: float64 sums of float32
	// values of one magnitude are exact in any order, and the tests
	// must see the order of the additions.
	for i := range lum {
		lum[i] = float32((0.2 + 0.6*rng.Float64()) * math.Pow(10, -float64(rng.IntN(9))))
	}
	reg = make([]int32, fc.w*fc.h)
	for i := 0; i < len(reg); {
		l := int32(rng.IntN(fc.regions))
		n := 1 + rng.IntN(3*fc.w/2)
		for k := i; k < min(len(reg), i+n); k++ {
			reg[k] = l
		}
		i += n
	}
	cls = make([]int32, fc.regions)
	for r := range cls {
		if rng.Float64() >= fc.share {
			cls[r] = 1
		}
	}
	if fc.bandOnly {
		for i := fc.w * fc.h / 10; i < len(reg); i++ {
			if cls[reg[i]] == 0 {
				reg[i] = int32(fc.regions - 1)
			}
		}
		cls[fc.regions-1] = 1
	}
	return lum, reg, cls
}

var fieldCases = []fieldCase{
	{"square", 256, 256, 40, 0.6, false},
	{"ragged", 333, 190, 25, 0.5, false},
	{"tall", 70, 641, 12, 0.3, false},
	{"band", 500, 500, 30, 0.7, true},
	{"none", 128, 96, 10, 0, false},
	{"tiny", 5, 3, 3, 0.5, false},
}

// TestFieldGridOfClassMatchesMask checks smoothFieldGridOfClass (runs of
// one region read from the region map) against smoothFieldGrid over the
// mask that maskOfClass writes, the plain per-pixel form: every grid value
// equal bit for bit, on one worker and on three.
func TestFieldGridOfClassMatchesMask(t *testing.T) {
	for _, fc := range fieldCases {
		lum, reg, cls := fc.make(15300)
		sigma := float64(max(fc.w, fc.h)) / fieldScale
		mask := make([]bool, len(reg))
		maskOfClass(mask, reg, cls, 0, 1)
		want := smoothFieldGrid(lum, mask, fc.w, fc.h, sigma, 1)
		for _, workers := range []int{1, 3} {
			got := smoothFieldGridOfClass(lum, reg, cls, 0, fc.w, fc.h, sigma, workers)
			if got.gw != want.gw || got.gh != want.gh || got.cell != want.cell {
				t.Fatalf("%s: grid %dx%d cell %d, want %dx%d cell %d", fc.name, got.gw, got.gh, got.cell, want.gw, want.gh, want.cell)
			}
			for c := range want.grid {
				if math.Float64bits(got.grid[c]) != math.Float64bits(want.grid[c]) {
					t.Fatalf("%s, %d workers: cell %d = %v, want %v", fc.name, workers, c, got.grid[c], want.grid[c])
				}
			}
		}
	}
}

// TestContrastOfGridMatchesPlane checks contrastOfGrid against
// contrastMapInto over the grid's interpolated plane: the same map bit
// for bit, on one worker and on three.
func TestContrastOfGridMatchesPlane(t *testing.T) {
	for _, fc := range fieldCases {
		lum, reg, cls := fc.make(15301)
		g := smoothFieldGridOfClass(lum, reg, cls, 0, fc.w, fc.h, float64(max(fc.w, fc.h))/fieldScale, 1)
		// A few field values below fieldFloor, so the floor is taken.
		g.grid[0] = fieldFloor / 4
		for _, bg := range []Background{BackgroundDark, BackgroundBright, ""} {
			want := contrastMap(lum, g.plane(nil, 1), bg, 1)
			for _, workers := range []int{1, 3} {
				got := contrastOfGrid(nil, lum, g, bg, workers)
				for i := range want {
					if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
						t.Fatalf("%s, background %q, %d workers: pixel %d = %v, want %v", fc.name, bg, workers, i, got[i], want[i])
					}
				}
			}
		}
	}
}

// TestPlaneRatioSumsMatchesPlane checks planeRatioSums (the plane made
// in bands on the workers, the ratio sums added band by band as the
// bands are done) against the plane made whole and sumRatioLabels over
// it: the same plane and every region's sum bit for bit, on one worker
// and on three, into a new plane and over an old one, with heights that
// are and are not multiples of the band (rowBand) and below it.
func TestPlaneRatioSumsMatchesPlane(t *testing.T) {
	for _, fc := range fieldCases {
		lum, reg, cls := fc.make(15302)
		g := smoothFieldGridOfClass(lum, reg, cls, 0, fc.w, fc.h, float64(max(fc.w, fc.h))/fieldScale, 1)
		g.grid[0] = fieldFloor / 4 // a few field values below the floor
		n := int(slices.Max(reg)) + 1
		plane := g.plane(nil, 1)
		want := make([]float64, n)
		for r := range want {
			want[r] = float64(r) / 7 // sums are added to what is there
		}
		start := slices.Clone(want)
		sumRatioLabels(reg, lum, plane, want)
		for _, workers := range []int{1, 3} {
			for _, dst := range [][]float32{nil, make([]float32, len(lum))} {
				got := slices.Clone(start)
				out := g.planeRatioSums(dst, lum, reg, got, workers)
				if !slices.Equal(out, plane) {
					t.Fatalf("%s, %d workers: the plane differs from plane()", fc.name, workers)
				}
				if dst != nil && &out[0] != &dst[0] {
					t.Fatalf("%s: the plane was not written into dst", fc.name)
				}
				if !sameBits(got, want) {
					t.Fatalf("%s, %d workers: sums %v, want %v", fc.name, workers, got, want)
				}
			}
		}
	}
}
