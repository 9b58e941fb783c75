package segment

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// twoDiscs renders two discs of radius r at I/B = level on a flat
// background B = 0.1, centres d pixels apart on one row, with the pixels
// within 1.5 px of the perpendicular bisector (the seam) dimmed to
// I/B = seam; it returns the image, the field and the two exact masks.
func twoDiscs(w, h int, r, d, level, seam float64) (inten, field []float32, a, b []bool) {
	inten = make([]float32, w*h)
	field = make([]float32, w*h)
	a = make([]bool, w*h)
	b = make([]bool, w*h)
	cy := float64(h) / 2
	ax := float64(w)/2 - d/2
	bx := float64(w)/2 + d/2
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			field[i] = 0.1
			v := 1.0
			fx, fy := float64(x)+0.5, float64(y)+0.5
			inA := math.Hypot(fx-ax, fy-cy) <= r && fx < float64(w)/2
			inB := math.Hypot(fx-bx, fy-cy) <= r && fx >= float64(w)/2
			if inA || inB {
				v = level
				if math.Abs(fx-float64(w)/2) < 1.5 {
					v = seam
				}
			}
			a[i], b[i] = inA, inB
			inten[i] = float32(0.1 * v)
		}
	}
	return inten, field, a, b
}

// TestTightenObjects: a faint touching pair that the regions gave as one
// blocky patch (the discs' bounding box grown by 1 px, as superpixels
// that cut corners at faint edges) comes out as two objects whose masks
// match the discs: the dim seam (two pixels at I/B 1.1; after the 3x3
// mean about 0.53 in contrast) is below half the patch's median contrast
// (about 0.7: two thirds of the patch is disc at 1.4). With a 2 px
// margin the median drops and the seam stays, as the rule says.
// Half-maximum outlines are common practice.
func TestTightenObjects(t *testing.T) {
	const w, h = 64, 40
	inten, field, a, b := twoDiscs(w, h, 9, 17, 2.4, 1.1)
	labels := make([]int32, w*h)
	x0, x1, y0, y1 := w, -1, h, -1
	for i := range a {
		if a[i] || b[i] {
			x, y := i%w, i/w
			x0, x1, y0, y1 = min(x0, x), max(x1, x), min(y0, y), max(y1, y)
		}
	}
	for y := max(y0-1, 0); y <= min(y1+1, h-1); y++ {
		for x := max(x0-1, 0); x <= min(x1+1, w-1); x++ {
			labels[y*w+x] = 1
		}
	}
	out, n := tightenObjects(contrastMap(inten, field, "", 2), labelmap.Map{Pix: labels, Width: w, Height: h}, 1, 20, 2)
	if n != 2 {
		t.Fatalf("got %d objects, want 2", n)
	}
	for _, truth := range [][]bool{a, b} {
		// The object holding most of this disc, and its IoU with it.
		count := map[int32]int{}
		for i, in := range truth {
			if in && out[i] > 0 {
				count[out[i]]++
			}
		}
		var best int32
		for l, c := range count {
			if best == 0 || c > count[best] {
				best = l
			}
		}
		inter, union := 0, 0
		for i := range truth {
			p := out[i] == best
			if p && truth[i] {
				inter++
			}
			if p || truth[i] {
				union++
			}
		}
		if iou := float64(inter) / float64(union); iou < 0.85 {
			t.Errorf("object %d: IoU %.3f with its disc, want >= 0.85", best, iou)
		}
	}
}

// TestFillHoles: a hole inside one object is filled; background that
// reaches the border, and a hole between two objects, are not.
func TestFillHoles(t *testing.T) {
	const w, h = 9, 7
	rows := []string{
		".........",
		".aaa.bbb.",
		".a.a.b.b.",
		".aaa.bbb.",
		"..aa.b...",
		"..a..b...",
		".........",
	}
	want := []string{
		".........",
		".aaa.bbb.",
		".aaa.bbb.",
		".aaa.bbb.",
		"..aa.b...",
		"..a..b...",
		".........",
	}
	parse := func(rs []string) []int32 {
		g := make([]int32, w*h)
		for y, r := range rs {
			for x, c := range r {
				g[y*w+x] = -1
				if c != '.' {
					g[y*w+x] = int32(c - 'a')
				}
			}
		}
		return g
	}
	g := parse(rows)
	fillHoles(g, w, h)
	wg := parse(want)
	for i := range g {
		if g[i] != wg[i] {
			t.Errorf("pixel (%d,%d): group %d, want %d", i%w, i/w, g[i], wg[i])
		}
	}
	// A hole bordered by two groups stays background.
	two := parse([]string{
		".........",
		".aaabbb..",
		".aa.bbb..",
		".aaabbb..",
		".........",
		".........",
		".........",
	})
	fillHoles(two, w, h)
	if two[2*w+3] != -1 {
		t.Errorf("hole between two groups filled with %d", two[2*w+3])
	}
}

// A disc with a sharp border and a broad Gaussian hill (σ 50 px) of the
// same height on a noisy background (3 % noise): along the hill's outline
// (where it reaches half its height) the slope is 0.2·1.18/50 per pixel,
// an edge energy (σ = 1.5) of about 0.007, at the level noise alone gives
// there; along the disc's border the smoothed step gives about
// 0.4/sqrt(2π) ≈ 0.16 (closed forms of the smoothed ramp and step). Only
// the hill is marked.
func TestEdgeless(t *testing.T) {
	const w, h = 320, 160
	lum, labels := noisyField(w, h, 9, func(x, y int) (v float64, l int32) {
		v = 0.2
		dx, dy := float64(x-60), float64(y-80)
		if dx*dx+dy*dy < 15*15 {
			v, l = 0.6, 1
		}
		hx, hy := float64(x-220), float64(y-80)
		hill := 0.4 * math.Exp(-(hx*hx+hy*hy)/(2*50*50))
		v += hill
		if hill > 0.2 {
			l = 2
		}
		return v, l
	})
	energy := affinity.EdgeEnergy(lum, w, h, affinity.ContourScale, 1)
	drop := edgeless(labelmap.Map{Pix: labels, Width: w, Height: h}, 2, &edgeTest{w: w, h: h, fine: energy, floor: edgeFloor(energy, 1)})
	if drop == nil || drop[1] || !drop[2] {
		t.Fatalf("edgeless = %v, want only the hill (2) marked", drop)
	}
	out, n := withoutLabels(labels, 2, drop)
	if n != 1 || out[80*w+60] != 1 || out[80*w+220] != 0 {
		t.Errorf("after dropping: %d objects, disc label %d, hill label %d", n, out[80*w+60], out[80*w+220])
	}
}

// Hand-worked: object 2 (2 pixels, under the minimum of 3) touches
// objects 1 and 3 along 2 pixel edges each, and the tie goes to the
// smaller label, 1; object 4 (1 pixel) touches no object and goes to the
// background; objects are renumbered in raster order.
func TestAbsorbSmall(t *testing.T) {
	const w, h = 6, 3
	labels := []int32{
		1, 1, 2, 3, 3, 0,
		1, 1, 2, 3, 3, 0,
		1, 1, 0, 3, 0, 4,
	}
	want := []int32{
		1, 1, 1, 2, 2, 0,
		1, 1, 1, 2, 2, 0,
		1, 1, 0, 2, 0, 0,
	}
	// Counted on bands of one row: the same on one to three workers.
	for _, workers := range []int{1, 2, 3} {
		got, n := absorbSmall(labelmap.Map{Pix: labels, Width: w, Height: h}, 4, 3, workers)
		if n != 2 {
			t.Fatalf("%d workers: %d objects, want 2", workers, n)
		}
		for i := range want {
			if got[i] != want[i] {
				t.Fatalf("%d workers: labels %v, want %v", workers, got, want)
			}
		}
	}
}

// Two labelled halves of one bright bar touch with no dip in contrast
// and become one object; the same halves with the two border columns
// dimmed to 0.3 of the bar's contrast (below seamRatio = 0.8 of it, the
// rule of objectsFrom) stay two. A step is a border too: a right half at
// 0.4 of the left's contrast (below tightenLevel of it, a dim object
// pressed against a bright one) stays apart with no dip at the border,
// one at 0.6 joins.
func TestJoinTouching(t *testing.T) {
	const w, h = 12, 4
	labels := make([]int32, w*h)
	for y := 0; y < h; y++ {
		for x := 1; x < 11; x++ {
			labels[y*w+x] = 1
			if x >= 6 {
				labels[y*w+x] = 2
			}
		}
	}
	for _, c := range []struct {
		seam, right float64
		want        int
	}{{1, 1, 1}, {0.3, 1, 2}, {-1, 0.4, 2}, {-1, 0.6, 1}} { // seam -1: none
		con := make([]float64, w*h)
		for i, l := range labels {
			switch {
			case l > 0 && c.seam >= 0 && (i%w == 5 || i%w == 6):
				con[i] = c.seam
			case l == 1:
				con[i] = 1
			case l == 2:
				con[i] = c.right
			}
		}
		_, n := joinTouching(con, labelmap.Map{Pix: slices.Clone(labels), Width: w, Height: h}, 2, 1)
		if n != c.want {
			t.Errorf("border contrast %v, right half %v: %d objects, want %d", c.seam, c.right, n, c.want)
		}
	}
}

// noisyField returns a w x h luminance and label map: scene gives each
// pixel's noiseless value and label, and the luminance adds Gaussian noise
// of standard deviation 0.03, drawn in row-major order from a PCG source
// seeded with (seed, seed).
func noisyField(w, h int, seed uint64, scene func(x, y int) (float64, int32)) ([]float32, []int32) {
	r := rand.New(rand.NewPCG(seed, seed))
	lum := make([]float32, w*h)
	labels := make([]int32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v, l := scene(x, y)
			lum[y*w+x] = float32(v + 0.03*r.NormFloat64())
			labels[y*w+x] = l
		}
	}
	return lum, labels
}

// sharpAndBlurredDisc is the scene of TestEdgelessDiffuse on 200 x 100
// pixels: the value and label of pixel (x, y), a sharp disc of radius 20
// at (50,50) labelled 1 and, at (150,50), a disc of radius 20 whose
// profile across the rim is the normal CDF of σ 8 (a blurred step, as
// the rim is nearly straight at this radius), labelled 2 where it
// exceeds half its height, both 0.4 above a background of 0.2.
func sharpAndBlurredDisc(x, y int) (v float64, l int32) {
	v = 0.2
	dx, dy := float64(x)+0.5-50, float64(y)+0.5-50
	if dx*dx+dy*dy < 20*20 {
		v += 0.4
		l = 1
	}
	d := math.Hypot(float64(x)+0.5-150, float64(y)+0.5-50)
	b := 0.4 * 0.5 * (1 + math.Erf((20-d)/(8*math.Sqrt2)))
	v += b
	if b > 0.2 {
		l = 2
	}
	return v, l
}

// A sharp disc and a disc blurred by a Gaussian of σ 8 px, both 0.4 above
// a background with 3 % noise and labelled where they exceed half their
// height: both outlines pass the edge floor (the blurred step's slope,
// 0.4/(8√(2π)) per pixel, gives an energy of about 0.03 at σ = 1.5, well
// above the noise), but the blurred one's edge is as wide as the coarse
// scale (ratio ρ(8) ≈ 3.1 > diffuseRatio, closed form of diffuseRatio),
// so only it is marked once the coarse energy is given.
func TestEdgelessDiffuse(t *testing.T) {
	const w, h = 200, 100
	lum, labels := noisyField(w, h, 4, sharpAndBlurredDisc)
	fine := affinity.EdgeEnergy(lum, w, h, affinity.ContourScale, 1)
	if drop := edgeless(labelmap.Map{Pix: labels, Width: w, Height: h}, 2, &edgeTest{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1)}); drop != nil {
		t.Fatalf("without the coarse energy: %v marked, want none", drop)
	}
	coarse := coarseEnergy(lum, w, h, 1)
	drop := edgeless(labelmap.Map{Pix: labels, Width: w, Height: h}, 2, &edgeTest{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1), coarse: coarse})
	if drop == nil || drop[1] || !drop[2] {
		t.Fatalf("with the coarse energy: %v, want only the blurred disc (2) marked", drop)
	}
	// Against the flat background 0.2 the blurred disc's pixels lie at
	// I/B 2 to 3 (median contrast above 1): a source (sourceRatio 2), so
	// it is kept once the contrast is known; with the contrast halved
	// (median below 1) it is shading again.
	field := make([]float32, w*h)
	for i := range field {
		field[i] = 0.2
	}
	con := contrastMap(lum, field, "", 2)
	test := &edgeTest{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1), coarse: coarse, con: con, source: sourceContrast("dark")}
	if drop := edgeless(labelmap.Map{Pix: labels, Width: w, Height: h}, 2, test); drop != nil {
		t.Errorf("with the contrast: %v marked, want none (the blurred disc is a source)", drop)
	}
	for i := range con {
		con[i] /= 2 // the contrast halved, the edge energies kept
	}
	if drop := edgeless(labelmap.Map{Pix: labels, Width: w, Height: h}, 2, test); drop == nil || drop[1] || !drop[2] {
		t.Errorf("at half the contrast: %v, want only the blurred disc (2) marked", drop)
	}
}

// The ratio of EdgeEnergy at diffuseScale and at ContourScale at a
// straight step blurred by a Gaussian of width σ_e follows the closed
// form ρ(σ_e) = (σ_c/σ_f)·√(σ_f²+σ_e²)/√(σ_c²+σ_e²) of diffuseRatio
// (the scale-normalized gradient of a blurred step, Lindeberg 1998),
// and diffuseRatio is ρ(σ_c). Measured at the step (the Hessian term of
// EdgeEnergy vanishes there), within 3 % for the sampled kernels.
func TestDiffuseRatio(t *testing.T) {
	const w, h = 160, 40
	sf, sc := affinity.ContourScale, diffuseScale
	rho := func(se float64) float64 { return sc / sf * math.Sqrt(sf*sf+se*se) / math.Sqrt(sc*sc+se*se) }
	if math.Abs(diffuseRatio-rho(sc)) > 1e-12 {
		t.Fatalf("diffuseRatio %v, want ρ(σ_c) = %v", diffuseRatio, rho(sc))
	}
	for _, se := range []float64{2, 4, 6, 10} {
		lum := make([]float32, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				// Step at x = 80 (between pixels 79 and 80, centres at
				// x+0.5), blurred: the normal CDF via erf.
				lum[y*w+x] = float32(0.2 + 0.5*0.5*(1+math.Erf((float64(x)+0.5-80)/(se*math.Sqrt2))))
			}
		}
		ef := affinity.EdgeEnergy(lum, w, h, sf, 1)
		ec := affinity.EdgeEnergy(lum, w, h, sc, 1)
		// The step lies between pixels 79 and 80: average the two.
		i, j := (h/2)*w+79, (h/2)*w+80
		got := float64(ec[i]+ec[j]) / float64(ef[i]+ef[j])
		if want := rho(se); math.Abs(got-want) > 0.03*want {
			t.Errorf("σ_e %v: ratio %.3f, want %.3f", se, got, want)
		}
		// coarseEnergy, computed on the image reduced by 2, agrees.
		er := coarseEnergy(lum, w, h, 1)
		if r := float64(er[i]+er[j]) / float64(ef[i]+ef[j]); math.Abs(r-got) > 0.03*got {
			t.Errorf("σ_e %v: ratio from the reduced image %.3f, full %.3f", se, r, got)
		}
	}
}

// withoutCrumbs: pieces of one group smaller than crumbFraction of the
// group's largest piece whose contrast stays below crumbPeak times the
// group's median are dropped; the two halves of a split pair (one group
// each, or comparable pieces of one group) and a small piece nearly as
// bright as its group are kept.
// Hand-made maps; the expected outcome is the rule's definition.
func TestWithoutCrumbs(t *testing.T) {
	// Group 0 (median 1): a piece of 40 px, a dim crumb of 4 px (below
	// 40/8 = 5) and a bright one of 4 px; group 1: pieces of 20 and
	// 6 px (6 is not below 20/8 = 2.5).
	w, h := 20, 6
	labels := make([]int32, w*h)
	group := make([]int32, w*h)
	sm := make([]float32, w*h)
	for i := range group {
		group[i] = -1
	}
	put := func(l, g int32, x0, x1, y0, y1 int, c float32) {
		for y := y0; y < y1; y++ {
			for x := x0; x < x1; x++ {
				labels[y*w+x], group[y*w+x], sm[y*w+x] = l, g, c
			}
		}
	}
	put(1, 0, 0, 10, 0, 4, 1)    // 40 px
	put(2, 0, 11, 13, 0, 2, 0.6) // 4 px dim crumb
	put(3, 1, 14, 19, 0, 4, 1)   // 20 px
	put(4, 1, 11, 14, 2, 4, 0.6) // 6 px
	put(5, 0, 0, 2, 4, 6, 1.2)   // 4 px, brighter than its group's median
	median := []float32{1, 1}
	out, n := withoutCrumbs(labels, 5, group, func(i int) float32 { return sm[i] }, median, 0)
	if n != 4 {
		t.Fatalf("%d objects, want 4", n)
	}
	if out[11] != 0 {
		t.Errorf("the 4 px crumb kept as %d", out[11])
	}
	if out[0] == 0 || out[14] == 0 || out[2*w+11] == 0 || out[4*w] == 0 {
		t.Errorf("a piece was dropped: %d %d %d %d", out[0], out[14], out[2*w+11], out[4*w])
	}
}

// TestHalfMaxLevel checks the fixed point of halfMaxLevel on two profiles
// with closed forms.
//   - A flat disc of height P blurred by a Gaussian of σ = 1.5 px, seen
//     through a region 4 px wider than the disc: the outline of a blurred
//     step lies at its half maximum (common practice). For a disc of
//     radius 12 the level should be near P/2; for radius 6, where half the
//     disc lies within 1.5 σ of its edge, the level may sit lower but the
//     outline must stay within 0.5 px of the true edge: the level at
//     least Φ(-0.5/σ)·P, the blurred step's value 0.5 px outside it. The
//     region's plain median, which halfMaxLevel replaced, misses that.
//   - A Gaussian blob exp(-r²/2s²): the area above v grows as ln(P/v), so
//     the values above L have median sqrt(P·L) and the fixed point
//     L = sqrt(P·L)/2 is L = P/4 (derived here; no published source).
func TestHalfMaxLevel(t *testing.T) {
	const sigma, p = 1.5, 2.0
	// blurredDisc returns the sorted values of a disc of the radius blurred
	// by σ over the region of radius+4: each value is the Gaussian-weighted
	// fraction of the disc around the pixel, summed on a 0.25 px grid.
	blurredDisc := func(radius float64) []float32 {
		n := int(2*radius) + 13
		c := float64(n / 2)
		var vals []float32
		for y := 0; y < n; y++ {
			for x := 0; x < n; x++ {
				if math.Hypot(float64(x)-c, float64(y)-c) > radius+4 {
					continue
				}
				var sum, wsum float64
				for v := -4 * sigma; v <= 4*sigma; v += 0.25 {
					for u := -4 * sigma; u <= 4*sigma; u += 0.25 {
						g := math.Exp(-(u*u + v*v) / (2 * sigma * sigma))
						wsum += g
						if math.Hypot(float64(x)+u-c, float64(y)+v-c) <= radius {
							sum += g
						}
					}
				}
				vals = append(vals, float32(p*sum/wsum))
			}
		}
		slices.Sort(vals)
		return vals
	}
	halfPxOut := p * 0.5 * math.Erfc(0.5/sigma/math.Sqrt2) // Φ(-0.5/σ)·P
	for _, tc := range []struct {
		radius, lo, hi float64
	}{
		{12, 0.45 * p, 0.55 * p},
		{6, halfPxOut, 0.55 * p},
	} {
		vals := blurredDisc(tc.radius)
		if got := float64(halfMaxLevel(vals)); got < tc.lo || got > tc.hi {
			t.Errorf("blurred disc of radius %g: level %.3f, want %.3f-%.3f", tc.radius, got, tc.lo, tc.hi)
		}
		if plain := float64(tightenLevel * vals[(len(vals)-1)/2]); plain >= tc.lo {
			t.Errorf("blurred disc of radius %g: half the region's median is %.3f; this test expects it below %.3f (the bias halfMaxLevel removes)", tc.radius, plain, tc.lo)
		}
	}
	var blob []float32
	for y := -12; y <= 12; y++ {
		for x := -12; x <= 12; x++ {
			if r := math.Hypot(float64(x), float64(y)); r <= 12 {
				blob = append(blob, float32(p*math.Exp(-r*r/(2*4*4))))
			}
		}
	}
	slices.Sort(blob)
	if got := halfMaxLevel(blob); math.Abs(float64(got)-p/4) > 0.05*p {
		t.Errorf("Gaussian blob: level %.3f, want P/4 = %.3f within 5%% of P", got, p/4)
	}
	if got := halfMaxLevel(nil); got != 0 {
		t.Errorf("no values: level %v, want 0", got)
	}
}

// TestMedianFloat32 checks the histogram selection of edgeFloor against
// the element of rank len/2 of a copy sorted by Go's slices.Sort (the
// standard library's), on sizes around the block of the histogram
// passes, with ties, zeros, +Inf and subnormals, for 1, 2 and 3
// workers; and, where bits and values order differently (negative
// values, -0, NaN), against kthSmallest on a copy, the selection it
// falls back to (what edgeFloor computed before).
func TestMedianFloat32(t *testing.T) {
	rng := rand.New(rand.NewPCG(13970, 1))
	uniform := func(n int) []float32 {
		v := make([]float32, n)
		for i := range v {
			v[i] = rng.Float32() * 3
		}
		return v
	}
	ties := func(n int) []float32 {
		v := make([]float32, n)
		for i := range v {
			v[i] = float32(rng.IntN(5)) / 4
		}
		return v
	}
	special := func(n int) []float32 {
		v := uniform(n)
		for i := range v {
			switch rng.IntN(6) {
			case 0:
				v[i] = 0
			case 1:
				v[i] = float32(math.Inf(1))
			case 2:
				v[i] = math.Float32frombits(uint32(rng.IntN(1 << 23))) // subnormal
			}
		}
		return v
	}
	withBits := func(b uint32) func(int) []float32 {
		return func(n int) []float32 {
			v := uniform(n)
			v[rng.IntN(n)] = math.Float32frombits(b)
			return v
		}
	}
	sizes := []int{1, 2, 3, 100, selectBlock - 1, selectBlock, selectBlock + 1, 3*selectBlock + 7}
	for _, tc := range []struct {
		name     string
		make     func(int) []float32
		fallback bool
	}{
		{"uniform", uniform, false},
		{"ties", ties, false},
		{"zeros, +Inf, subnormals", special, false},
		{"a negative value", withBits(math.Float32bits(-0.5)), true},
		{"-0", withBits(0x80000000), true},
		{"NaN", withBits(0x7fc00000), true},
	} {
		for _, n := range sizes {
			v := tc.make(n)
			orig := slices.Clone(v)
			var want float32
			if tc.fallback {
				want = kthSmallest(slices.Clone(v), n/2)
			} else {
				s := slices.Clone(v)
				slices.Sort(s)
				want = s[n/2]
			}
			for _, workers := range []int{1, 2, 3} {
				got := medianFloat32(v, workers)
				if math.Float32bits(got) != math.Float32bits(want) {
					t.Errorf("%s, n=%d, workers %d: %v (bits %#x), want %v (bits %#x)", tc.name, n, workers, got, math.Float32bits(got), want, math.Float32bits(want))
				}
			}
			if !slices.Equal(v, orig) && !tc.fallback {
				t.Errorf("%s, n=%d: the values were changed", tc.name, n)
			}
		}
	}
}

// TestSeamSumsMatchOnePass checks seamSums (pairs found on bands of rows
// on the workers, added in band order) against one pass of
// adjacentDiffering adding each pair as it comes, the plain form: every
// sum and count equal bit for bit, on one worker and on three, on label
// maps taller than a band with contrasts over many orders of magnitude
// (float64 sums of values of one magnitude would hide the order).
func TestSeamSumsMatchOnePass(t *testing.T) {
	for _, tc := range []struct {
		name   string
		w, h   int
		labels int
	}{
		{"wide", 300, 200, 20},
		{"tall", 37, 700, 9},
		{"one row", 50, 1, 5},
		{"one label", 40, 150, 1},
	} {
		rng := rand.New(rand.NewPCG(15302, uint64(tc.w)))
		lab := make([]int32, tc.w*tc.h)
		for i := 0; i < len(lab); {
			l := int32(rng.IntN(tc.labels))
			n := 1 + rng.IntN(2*tc.w)
			for k := i; k < min(len(lab), i+n); k++ {
				lab[k] = l
			}
			i += n
		}
		con := make([]float64, len(lab))
		for i := range con {
			con[i] = rng.Float64() * math.Pow(10, -float64(rng.IntN(12)))
		}
		key := func(a, b int32) (uint64, bool) {
			if a == 0 || b == 0 {
				return 0, false
			}
			return pairKey(min(a, b), max(a, b)), true
		}
		wantSum, wantCnt := map[uint64]float64{}, map[uint64]float64{}
		adjacentDiffering(lab, tc.w, tc.h, func(i, j int) {
			if k, ok := key(lab[i], lab[j]); ok {
				wantSum[k] += con[i] + con[j]
				wantCnt[k] += 2
			}
		})
		for _, workers := range []int{1, 3} {
			sum, cnt := seamSums(lab, tc.w, tc.h, con, key, workers)
			if len(sum) != len(wantSum) || len(cnt) != len(wantCnt) {
				t.Fatalf("%s, %d workers: %d sums, %d counts, want %d", tc.name, workers, len(sum), len(cnt), len(wantSum))
			}
			for k, v := range wantSum {
				if math.Float64bits(sum[k]) != math.Float64bits(v) || cnt[k] != wantCnt[k] {
					t.Fatalf("%s, %d workers: pair %x sum %v count %v, want %v and %v", tc.name, workers, k, sum[k], cnt[k], v, wantCnt[k])
				}
			}
		}
	}
}

// TestEdgelessMatchesOnePass checks edgeless (the contrast of an
// object's pixels gathered only when its outline leaves the answer to
// it; the outline found on bands of rows on one or three workers)
// against the former single pass that gathered every object's
// contrast and asked edge: the same objects marked, on the scene of
// TestEdgelessDiffuse cut into more objects (quarters of the discs, the
// background pieces) at several contrast scales.
func TestEdgelessMatchesOnePass(t *testing.T) {
	const w, h = 200, 100
	lum, labels := noisyField(w, h, 4, func(x, y int) (v float64, l int32) {
		v, l = sharpAndBlurredDisc(x, y)
		if x%100 >= 50 && l > 0 {
			l += 2 // the discs' right halves: objects 3 and 4
		}
		if l == 0 && y >= 80 {
			l = 5 // a strip of background
		}
		return v, l
	})
	fine := affinity.EdgeEnergy(lum, w, h, affinity.ContourScale, 1)
	coarse := coarseEnergy(lum, w, h, 1)
	field := make([]float32, w*h)
	for i := range field {
		field[i] = 0.2
	}
	onePass := func(test *edgeTest) []bool {
		outline := make([]outlineEnergy, 6)
		for i, l := range labels {
			if l <= 0 {
				continue
			}
			outline[l].addPixel(test, i)
			if onOutline(labels, i, w, h) {
				outline[l].add(test, i)
			}
		}
		var drop []bool
		for l := 1; l <= 5; l++ {
			if len(outline[l].fine) > 0 && !test.edge(&outline[l]) {
				if drop == nil {
					drop = make([]bool, 6)
				}
				drop[l] = true
			}
		}
		return drop
	}
	marked := 0
	for _, scale := range []float64{0.25, 0.5, 1, 2} {
		con := contrastMap(lum, field, "", 1)
		for i := range con {
			con[i] *= scale
		}
		for _, test := range []*edgeTest{
			{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1)},
			{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1), coarse: coarse},
			{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1), coarse: coarse, con: con, source: sourceContrast("dark")},
		} {
			want := onePass(test)
			// edgeless scans 16 bands of rows on test.workers goroutines.
			for _, workers := range []int{1, 3} {
				test.workers = workers
				got := edgeless(labelmap.Map{Pix: labels, Width: w, Height: h}, 5, test)
				if !slices.Equal(got, want) {
					t.Fatalf("contrast x%v, coarse %v, con %v, %d workers: %v, want %v", scale, test.coarse != nil, test.con != nil, workers, got, want)
				}
			}
			if want != nil {
				marked++
			}
		}
	}
	if marked == 0 {
		t.Fatal("no case marks an object: the comparison sees only empty answers")
	}
}

// TestWithoutCrumbsWorkers: the pieces measured in blocks on several
// goroutines give the labels of one goroutine, on a field of square
// pieces of random sizes and contrasts in two groups (some of them
// crumbs, some not).
func TestWithoutCrumbsWorkers(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 7))
	const w, h = 300, 200
	labels := make([]int32, w*h)
	group := make([]int32, w*h)
	sm := make([]float32, w*h)
	n := int32(0)
	// Cells of 20 x 20 pixels: fewer pieces than one for every
	// crumbPixels pixels, so the blocks run on several goroutines.
	for y0 := 0; y0+20 <= h; y0 += 20 {
		for x0 := 0; x0+20 <= w; x0 += 20 {
			n++
			s := 1 + rng.IntN(19)
			g, v := int32(rng.IntN(2)), float32(rng.Float64()*2)
			for y := y0; y < y0+s; y++ {
				for x := x0; x < x0+s; x++ {
					labels[y*w+x], group[y*w+x], sm[y*w+x] = n, g, v
				}
			}
		}
	}
	median := []float32{1, 1}
	one, n1 := withoutCrumbs(slices.Clone(labels), int(n), group, func(i int) float32 { return sm[i] }, median, 1)
	if n1 == int(n) || n1 == 0 {
		t.Fatalf("%d of %d pieces kept: the field should hold crumbs and pieces", n1, n)
	}
	for _, workers := range []int{2, 3, 0} {
		got, m := withoutCrumbs(slices.Clone(labels), int(n), group, func(i int) float32 { return sm[i] }, median, workers)
		if m != n1 || !slices.Equal(got, one) {
			t.Fatalf("workers %d: %d pieces, want %d (labels equal %v)", workers, m, n1, slices.Equal(got, one))
		}
	}
}
