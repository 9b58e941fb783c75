package segment

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestFineTexture checks fineTexture on closed forms. A flat disc and a
// paraboloid dome have no grain: the masked Gaussian reproduces a
// quadratic up to a constant (G_ρ * (x² + y²) = x² + y² + 2ρ²) away
// from the rim, so the residual's spread is near 0. Stripes
// A·cos(2πx/6) on a flat disc take the values ±A, ±A/2 on integer x,
// so the residual's median absolute deviation is A/2 after the
// Gaussian of 3 px has taken out all but exp(-2π²·9/36) = 0.7 % of them
// (the Gaussian's transfer function): 1.4826·0.993·A/2 = 0.736·A. A
// disc 5 px deep is too small to tell grain from shape, and a
// checkerboard of squares at the plateau and at 0 has half its inside
// below the half maximum (textureMaxLow): both read 0.
func TestFineTexture(t *testing.T) {
	const cw, ch, cx, cy, r = 64, 64, 32.0, 32.0, 20.0
	tests := []struct {
		name   string
		radius float64
		value  func(x, y float64) float64
		want   float64
		tol    float64
	}{
		{"flat disc", r, func(x, y float64) float64 { return 1 }, 0, 1e-6},
		{"dome", r, func(x, y float64) float64 { return 1 - 0.5*((x-cx)*(x-cx)+(y-cy)*(y-cy))/(r*r) }, 0, 0.01},
		{"stripes of period 6 px, A = 0.3", r, func(x, y float64) float64 { return 1 + 0.3*math.Cos(2*math.Pi*x/6) }, 0.736 * 0.3, 0.015},
		{"stripes on a disc 5 px deep (too small)", 5, func(x, y float64) float64 { return 1 + 0.3*math.Cos(2*math.Pi*x/6) }, 0, 0},
		// half the inside at 0: bodies with gaps between them, no grain
		{"squares of 8 px, 1 and 0", r, func(x, y float64) float64 { return float64((int(x)/8 + int(y)/8) % 2) }, 0, 0},
	}
	for _, tc := range tests {
		smooth := make([]float32, cw*ch)
		mask := make([]bool, cw*ch)
		var nodes []int
		for c := range smooth {
			x, y := float64(c%cw), float64(c/cw)
			if math.Hypot(x-cx, y-cy) <= tc.radius {
				nodes = append(nodes, c)
				mask[c] = true
				smooth[c] = float32(tc.value(x, y))
			}
		}
		dist := distanceInside(mask, cw, ch)
		got := fineTexture(smooth, nodes, dist, cw, ch, 1)
		if math.Abs(got-tc.want) > tc.tol {
			t.Errorf("%s: fineTexture %.4f, want %.4f ± %.3f", tc.name, got, tc.want, tc.tol)
		}
	}
}

// TestRefineTexturedDisc: a single disc of radius 15 whose contrast
// carries grain (correlated noise of deviation 0.4 of its plateau,
// correlation length about 2 px: smoothNoise with s = 1.2), its mask
// dented where the grain falls below half the plateau within 3 px of
// the rim, as a class decision on superpixels leaves it, must stay one
// object; a pair of such discs of radius 13 joined by a bar 10 px wide
// (a neck) must still come apart. Before the texture rule (textureLimit
// raised out of reach) the disc was cut in 1 of the 20 draws and the
// pair came out wrong in 5.
func TestRefineTexturedDisc(t *testing.T) {
	const w, h, draws = 72, 72, 20
	refine := func(con []float64, lab []int32) int { return refinedCount(t, con, lab, w, h) }
	make1 := func(rng *rand.Rand, inside func(x, y float64) bool) ([]float64, []int32) {
		grain := smoothNoise(rng, w, h, 1.2)
		con := make([]float64, w*h)
		lab := make([]int32, w*h)
		mask := make([]bool, w*h)
		for c := range con {
			if inside(float64(c%w), float64(c/w)) {
				con[c] = 1
				lab[c] = 1
				mask[c] = true
			}
		}
		rim := distanceInside(mask, w, h)
		con = blurMasked(con, lab, w, h)
		for c := range con {
			if lab[c] == 1 {
				con[c] += 0.4 * grain[c]
				// dark grain within 3 px of the rim falls to the
				// background
				if rim[c] <= 3 && con[c] < 0.5 {
					lab[c], con[c] = 0, 0
				}
			}
		}
		keepLargest(lab, w, h)
		for c := range con {
			if lab[c] == 0 {
				con[c] = 0
			}
		}
		return con, lab
	}
	singles, pairs := 0, 0
	for d := range draws {
		rng := rand.New(rand.NewPCG(29, uint64(d)))
		con, lab := make1(rng, func(x, y float64) bool { return math.Hypot(x-36, y-36) <= 15 })
		if n := refine(con, lab); n != 1 {
			singles++
			t.Logf("draw %d: the textured disc cut into %d", d, n)
		}
		con, lab = make1(rng, func(x, y float64) bool {
			return math.Hypot(x-22, y-36) <= 13 || math.Hypot(x-50, y-36) <= 13 || (x > 22 && x < 50 && math.Abs(y-36) <= 5)
		})
		if n := refine(con, lab); n != 2 {
			pairs++
			t.Logf("draw %d: the textured pair in %d pieces", d, n)
		}
	}
	if singles > 0 {
		t.Errorf("the textured disc was cut in %d of %d draws, want none", singles, draws)
	}
	if pairs > 0 {
		t.Errorf("the textured pair through a neck did not come out as two in %d of %d draws, want none", pairs, draws)
	}
}

// keepLargest keeps the largest 4-connected component of lab == 1.
func keepLargest(lab []int32, w, h int) {
	comp := make([]int, len(lab))
	for i := range comp {
		comp[i] = -1
	}
	best, bestN := -1, 0
	for s := range lab {
		if lab[s] != 1 || comp[s] >= 0 {
			continue
		}
		stack := []int{s}
		comp[s] = s
		n := 0
		for len(stack) > 0 {
			c := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			n++
			x, y := c%w, c/w
			for _, d := range [][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
				nx, ny := x+d[0], y+d[1]
				if nx < 0 || ny < 0 || nx >= w || ny >= h {
					continue
				}
				if j := ny*w + nx; lab[j] == 1 && comp[j] < 0 {
					comp[j] = s
					stack = append(stack, j)
				}
			}
		}
		if n > bestN {
			best, bestN = s, n
		}
	}
	for i := range lab {
		if lab[i] == 1 && comp[i] != best {
			lab[i] = 0
		}
	}
}
