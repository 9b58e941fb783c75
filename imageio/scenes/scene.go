package scenes

import (
	"fmt"
	"image"
	"math"
	"math/rand/v2"
)

// Scene is a gray image with its instance truth.
type Scene struct {
	Name          string
	Width, Height int
	BitDepth      int      // 8 or 16
	Pixels        []uint16 // row-major gray values in 0..2^BitDepth-1
	Truth         []int32  // instance mask: 0 background, 1..Objects
	Objects       int
}

// Image returns the scene as *image.Gray (BitDepth 8) or *image.Gray16
// (BitDepth 16). The pixels are copied; with BitDepth 8 they must lie in
// 0..255, as the generators guarantee.
func (s *Scene) Image() image.Image {
	r := image.Rect(0, 0, s.Width, s.Height)
	if s.BitDepth == 8 {
		g := image.NewGray(r)
		for i, v := range s.Pixels {
			g.Pix[i] = uint8(v)
		}
		return g
	}
	g := image.NewGray16(r)
	for i, v := range s.Pixels {
		g.Pix[2*i] = uint8(v >> 8)
		g.Pix[2*i+1] = uint8(v)
	}
	return g
}

// TruthImage returns the instance mask as a 16-bit image whose gray value is
// the object label (0 background). It panics if a label does not fit in 16
// bits, which the generators here never produce.
func (s *Scene) TruthImage() *image.Gray16 {
	g := image.NewGray16(image.Rect(0, 0, s.Width, s.Height))
	for i, v := range s.Truth {
		if v < 0 || v > math.MaxUint16 {
			panic(fmt.Sprintf("scenes: truth label %d does not fit in 16 bits", v))
		}
		g.Pix[2*i] = uint8(v >> 8)
		g.Pix[2*i+1] = uint8(v)
	}
	return g
}

// newRand returns the scene generator's random source. The second PCG word
// is a fixed constant so that a scene depends on Seed alone.
func newRand(seed uint64, stream uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, stream))
}

// coverage converts a signed margin m (pixels inside the boundary, negative
// outside) into an area coverage estimate for anti-aliased rendering: a
// pixel of unit width straddling a straight edge at distance m from its
// centre is covered by the fraction clamp(1/2 + m, 0, 1). The truth test is
// m > 0, the same margin, so coverage > 1/2 exactly where truth says inside.
func coverage(m float64) float64 {
	c := 0.5 + m
	if c < 0 {
		return 0
	}
	if c > 1 {
		return 1
	}
	return c
}

// uniform returns a draw from [lo, hi).
func uniform(rng *rand.Rand, lo, hi float64) float64 {
	return lo + (hi-lo)*rng.Float64()
}

// uniformUnlessSet returns v when it is nonzero (an option set by the
// caller), else a draw from [lo, hi) (see uniform).
func uniformUnlessSet(rng *rand.Rand, v, lo, hi float64) float64 {
	if v != 0 {
		return v
	}
	return uniform(rng, lo, hi)
}

// countPerField returns n when it is nonzero (an option set by the
// caller), else a draw uniform in lo..hi per 512² pixels scaled by the
// field's area in those units, rounded, at least 1.
func countPerField(rng *rand.Rand, n, lo, hi int, area float64) int {
	if n != 0 {
		return n
	}
	return max(1, int(math.Round(float64(lo+rng.IntN(hi-lo+1))*area)))
}
