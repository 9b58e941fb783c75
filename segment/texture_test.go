package segment

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
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

// TestTightenTexturedDisc: a disc of radius 16 whose contrast carries
// chromatin-like grain (the level times 1 + 0.45 z, z smoothed noise of
// unit deviation at 1.5 px, clipped at 0.15, with 2-8 bright foci of
// radius 1-2.5 px at 1.6-2.6 times the level, blurred by 1 px: the model
// of othershapes.py chromatin) and a gap in the grain 4 px wide across
// it at 0.3 of the level (where the grain of that model runs low across
// a nucleus, the 3x3 test cut it in two on choice scenes), inside a
// region 2 px wider than the disc as a superpixel class map leaves it,
// must come out of tightenObjects as one object of IoU at least 0.85
// with the disc, its interior judged on the Gaussian mean
// (texturedInterior). Without the interior rule (textureLimit raised out
// of reach) the disc came out in two pieces or with IoU under 0.85 in 13
// of the 20 draws. The price is that a dim line through a textured
// object no longer parts it at this stage: the re-cut's seam test, held
// to the texture's spread, decides.
func TestTightenTexturedDisc(t *testing.T) {
	const w, h, draws, r = 72, 72, 20, 16.0
	bad, engaged := 0, 0
	for d := range draws {
		rng := rand.New(rand.NewPCG(31, uint64(d)))
		z := smoothNoise(rng, w, h, 1.5)
		var sd float64
		for _, v := range z {
			sd += v * v
		}
		sd = math.Sqrt(sd / float64(len(z)))
		con := make([]float64, w*h)
		disc := make([]bool, w*h)
		region := make([]int32, w*h)
		for c := range con {
			dd := math.Hypot(float64(c%w)-36, float64(c/w)-36)
			if dd <= r {
				disc[c] = true
				con[c] = math.Max(1+0.45*z[c]/sd, 0.15)
			}
			if dd <= r+2 {
				region[c] = 1
			}
		}
		for range 2 + rng.IntN(7) {
			var fx, fy float64
			for {
				fx, fy = 36+r*(2*rng.Float64()-1), 36+r*(2*rng.Float64()-1)
				if math.Hypot(fx-36, fy-36) <= r {
					break
				}
			}
			fr, fv := 1+1.5*rng.Float64(), 1.6+rng.Float64()
			for c := range con {
				if disc[c] && math.Hypot(float64(c%w)-fx, float64(c/w)-fy) <= fr {
					con[c] = fv
				}
			}
		}
		// A gap in the chromatin across the middle: a band 4 px wide
		// at 0.3 of the level, at a random angle.
		th := math.Pi * rng.Float64()
		for c := range con {
			if disc[c] && math.Abs((float64(c%w)-36)*math.Sin(th)-(float64(c/w)-36)*math.Cos(th)) <= 2 {
				con[c] = 0.3
			}
		}
		all := make([]int32, w*h)
		for i := range all {
			all[i] = 1
		}
		con = blurMasked(con, all, w, h)
		sm := boxMean3(float32s(con), w, h)
		px := make([]int, 0)
		for i, l := range region {
			if l == 1 {
				px = append(px, i)
			}
		}
		own := make([]float32, len(px))
		for k, i := range px {
			own[k] = sm[i]
		}
		vals := slices.Clone(own)
		slices.Sort(vals)
		b := box{36 - 18, 36 - 18, 36 + 18, 36 + 18}
		if in := texturedInterior(own, func() gaussCrop { return cropGaussian(con, b, w, h, textureFill) }, px, b, w, halfMaxLevel(vals)); len(in.pix) > 0 {
			engaged++
		}
		out, n := tightenObjects(con, labelmap.Map{Pix: region, Width: w, Height: h}, 1, 20, 1)
		inter, union := 0, 0
		for i := range out {
			if out[i] == 1 && disc[i] {
				inter++
			}
			if out[i] == 1 || disc[i] {
				union++
			}
		}
		if iou := float64(inter) / float64(union); n != 1 || iou < 0.85 {
			bad++
			t.Logf("draw %d: %d objects, IoU %.3f", d, n, iou)
		}
	}
	t.Logf("interior rule engaged on %d of %d draws", engaged, draws)
	if engaged < draws/2 {
		t.Errorf("the textured disc was taken as textured in %d of %d draws, want most", engaged, draws)
	}
	if bad > 0 {
		t.Errorf("the textured disc came out wrong in %d of %d draws, want none", bad, draws)
	}
}

func float32s(v []float64) []float32 {
	out := make([]float32, len(v))
	for i, x := range v {
		out[i] = float32(x)
	}
	return out
}

// TestMedianOfSelection checks medianOf, which selects instead of
// sorting, against the median of the sorted values (the middle value,
// or the mean of the two middle ones for an even count: the definition
// numpy.median uses) on random values with ties, negative zeros and
// odd and even counts.
func TestMedianOfSelection(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 2, 3, 4, 5, 10, 11, 64, 255, 1000, 1001} {
		for rep := 0; rep < 20; rep++ {
			v := make([]float64, n)
			for i := range v {
				switch rng.IntN(4) {
				case 0:
					v[i] = float64(rng.IntN(5)) // ties
				case 1:
					v[i] = math.Copysign(0, -1)
				default:
					v[i] = rng.NormFloat64()
				}
			}
			s := slices.Clone(v)
			slices.Sort(s)
			want := s[n/2]
			if n%2 == 0 {
				want = (s[n/2-1] + s[n/2]) / 2
			}
			if got := medianOf(slices.Clone(v)); got != want {
				t.Fatalf("n %d: medianOf %v, sorted median %v", n, got, want)
			}
		}
	}
	if !math.IsNaN(medianOf(nil)) {
		t.Error("medianOf of no values is not NaN")
	}
}
