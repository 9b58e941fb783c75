package noise

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestRank compares the histogram selection with a full sort at several
// ranks, with ties.
func TestRank(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for n := 1; n < 3000; n += 97 {
		v := make([]float32, n)
		for i := range v {
			v[i] = float32(rng.ExpFloat64())
			if i%3 == 0 {
				v[i] = float32(rng.IntN(4)) // ties
			}
		}
		s := slices.Clone(v)
		slices.Sort(s)
		for _, k := range []int{0, (n - 1) / 2, n / 2, n - 1, n / 7} {
			if got, want := Rank(slices.Clone(v), k), s[k]; got != want {
				t.Fatalf("n=%d: Rank(%d) %v, want %v", n, k, got, want)
			}
		}
	}
}

// gaussianPlane is w x h normal noise of standard deviation sd(x, y).
func gaussianPlane(w, h int, seed uint64, sd func(x, y int) float64) []float32 {
	rng := rand.New(rand.NewPCG(seed, 1))
	v := make([]float32, w*h)
	for y := range h {
		for x := range w {
			v[y*w+x] = float32(0.5 + sd(x, y)*rng.NormFloat64())
		}
	}
	return v
}

// TestPixel: on white normal noise of standard deviation s the estimate
// is s within the median's sampling error (about 1.25/√n relative for n
// samples of normal data, common practice; n is about 2^17 here, so 1 %
// is over three standard errors).
func TestPixel(t *testing.T) {
	for _, s := range []float64{0.01, 0.05} {
		v := gaussianPlane(512, 512, 3, func(int, int) float64 { return s })
		if got := Pixel(v, 512, 512); math.Abs(got/s-1) > 0.01 {
			t.Errorf("Pixel on noise of %g: %g", s, got)
		}
	}
	if got := Pixel(make([]float32, 5), 1, 5); got != 0 {
		t.Errorf("Pixel on a 1-pixel-wide image: %g, want 0", got)
	}
}

// TestLocal: noise whose standard deviation rises fourfold from the left
// half to the right half of the image (as photon noise does from a dark
// field to a glow sixteen times brighter). Each cell's estimate is within
// 15 % of its half's level (about 4 standard errors of the median of 992
// differences), the floor holds on a flat image, and the result is the
// same for any worker count.
func TestLocal(t *testing.T) {
	const w, h = 256, 200 // 200 rows: 6 cells, the last 40 rows tall
	sd := func(x, _ int) float64 {
		if x < w/2 {
			return 0.01
		}
		return 0.04
	}
	v := gaussianPlane(w, h, 5, sd)
	f := Local(v, w, h, 1e-4, 1)
	if f.GW != 8 || f.GH != 6 {
		t.Fatalf("grid %dx%d, want 8x6", f.GW, f.GH)
	}
	for r := range f.GH {
		for c := range f.GW {
			want := sd(c*Cell, 0)
			if got := f.S[r*f.GW+c]; math.Abs(got/want-1) > 0.15 {
				t.Errorf("cell (%d,%d): %g, want %g", c, r, got, want)
			}
		}
	}
	if g := Local(v, w, h, 1e-4, 4); !slices.Equal(g.S, f.S) {
		t.Error("Local differs with 4 workers")
	}
	flat := Local(make([]float32, w*h), w, h, 0.003, 2)
	for i, s := range flat.S {
		if s != 0.003 {
			t.Fatalf("flat image, cell %d: %g, want the floor 0.003", i, s)
		}
	}
}

// TestSmooth: interpolation between cell centres is exact on the centres,
// linear between them, constant beyond the outer ones, and the Row/Col
// lookups return the cell that holds a pixel.
func TestSmooth(t *testing.T) {
	f := &Field{W: 96, H: 40, GW: 3, GH: 1, S: []float64{1, 3, 7}}
	row := make([]float64, f.W)
	f.Smooth(20, row)
	// Centres at x + 0.5 = 16, 48, 80; pixel x sits at x + 0.5.
	for _, c := range []struct {
		x    int
		want float64
	}{{0, 1}, {15, 1}, {31, 1 + 2*15.5/32}, {47, 1 + 2*31.5/32}, {48, 3 + 4*0.5/32}, {63, 3 + 4*15.5/32}, {79, 3 + 4*31.5/32}, {80, 7}, {95, 7}} {
		if got := row[c.x]; math.Abs(got-c.want) > 1e-12 {
			t.Errorf("Smooth at x=%d: %g, want %g", c.x, got, c.want)
		}
	}
	if got := f.Row(39)[f.Col(70)]; got != 7 {
		t.Errorf("Row/Col at (70, 39): %g, want 7", got)
	}
}

// TestLocalExtremes: samples near float32's limits make differences
// beyond its range; Local holds them at the largest float32 and neither
// panics nor returns a value that is not a number.
func TestLocalExtremes(t *testing.T) {
	const w, h = 40, 40
	v := make([]float32, w*h)
	for i := range v {
		v[i] = math.MaxFloat32
		if i%2 == 1 {
			v[i] = -math.MaxFloat32
		}
	}
	f := Local(v, w, h, 0, 1)
	for i, s := range f.S {
		if math.IsNaN(s) || math.IsInf(s, 0) || s <= 0 {
			t.Fatalf("cell %d: %g", i, s)
		}
	}
}

// BenchmarkLocal is Local on a 2048 x 2048 plane of normal noise (4,096
// cells of 32 x 32 pixels, the object-scale estimate's pass on a 4 MP
// frame), on one goroutine.
func BenchmarkLocal(b *testing.B) {
	v := gaussianPlane(2048, 2048, 3, func(x, y int) float64 { return 0.01 + 0.02*float64(x)/2048 })
	for b.Loop() {
		Local(v, 2048, 2048, 1e-4, 1)
	}
}
