package segment

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// A touching pair of discs with a dim seam, a single disc and a thin bar,
// bright on a dark field: the pair comes out as two objects, the disc and
// the bar as one each (the bar must not be cut across: it has no seam).
func TestRefineSplitsTouchingPair(t *testing.T) {
	const w, h = 240, 160
	rng := rand.New(rand.NewPCG(21, 22))
	f := make([]float32, w*h)
	type disc struct{ x, y, r float64 }
	pair := []disc{{60, 60, 16}, {88, 60, 16}}
	single := disc{170, 50, 14}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.1
			fx, fy := float64(x), float64(y)
			in := func(d disc) bool { return (fx-d.x)*(fx-d.x)+(fy-d.y)*(fy-d.y) <= d.r*d.r }
			if in(pair[0]) || in(pair[1]) {
				v = 0.8
				if math.Abs(fx-74) < 2 { // the seam at the midline
					v = 0.45
				}
			}
			if in(single) {
				v = 0.8
			}
			if x >= 40 && x < 200 && y >= 120 && y < 124 { // a 4-pixel bar
				v = 0.7
			}
			f[y*w+x] = float32(v + 0.02*rng.NormFloat64())
		}
	}
	p := defaultParams()
	p.Classes, p.Background, p.Workers = 2, "dark", 2
	res, err := Run(context.Background(), Input{Width: w, Height: h, Planes: [][]float32{f}, Luminance: f}, p)
	if err != nil {
		t.Fatal(err)
	}
	at := func(x, y int) int32 { return res.Labels.Pix[y*w+x] }
	if res.NumObjects != 4 {
		t.Errorf("%d objects, want 4 (pair split in two, disc, bar)", res.NumObjects)
	}
	if a, b := at(55, 60), at(93, 60); a == 0 || b == 0 || a == b {
		t.Errorf("pair: labels %d and %d, want two different objects", a, b)
	}
	if a, b := at(50, 121), at(190, 121); a == 0 || a != b {
		t.Errorf("bar: labels %d and %d at its ends, want one object", a, b)
	}
	if len(res.ObjectNcuts) != 1 {
		t.Errorf("object splits %v, want exactly one", res.ObjectNcuts)
	}
}

// Solidity of simple shapes against their closed forms: a filled
// rectangle is its own hull (1); an L of three unit squares has hull area
// 3.5 (the square 2x2 minus the half square cut off by the hull's
// diagonal), so 3/3.5.
func TestSolidity(t *testing.T) {
	const w = 10
	rect := []int{}
	for y := 2; y < 5; y++ {
		for x := 3; x < 7; x++ {
			rect = append(rect, y*w+x)
		}
	}
	if s := solidity(rect, w); math.Abs(s-1) > 1e-12 {
		t.Errorf("rectangle: %v, want 1", s)
	}
	l := []int{0*w + 0, 1*w + 0, 1*w + 1}
	if s := solidity(l, w); math.Abs(s-3/3.5) > 1e-12 {
		t.Errorf("L tromino: %v, want %v", s, 3/3.5)
	}
}

// TestElongation checks the inertia ratio against closed forms: a bar of
// L x W pixels has coordinate variances (L²-1)/12 and (W²-1)/12 (the
// discrete uniform distribution), so the ratio is (L²-1)/(W²-1) exactly;
// a digitized disc is close to 1 and two touching discs of radius r
// close to 5 (variances 1.25 r² and r²/4, continuous).
func TestElongation(t *testing.T) {
	const w = 200
	bar := func(x0, y0, l, wd int) []int {
		var px []int
		for y := y0; y < y0+wd; y++ {
			for x := x0; x < x0+l; x++ {
				px = append(px, y*w+x)
			}
		}
		return px
	}
	disc := func(cx, cy, r float64) []int {
		var px []int
		for y := 0; y < 100; y++ {
			for x := 0; x < w; x++ {
				if math.Hypot(float64(x)-cx, float64(y)-cy) <= r {
					px = append(px, y*w+x)
				}
			}
		}
		return px
	}
	cases := []struct {
		name     string
		px       []int
		want, rt float64
	}{
		{"bar 60x3", bar(10, 10, 60, 3), (60*60 - 1) / (3*3 - 1.0), 1e-9},
		{"bar 9x9", bar(10, 10, 9, 9), 1, 1e-9},
		{"disc r=20", disc(50, 50, 20), 1, 0.02},
		{"two discs r=20", append(disc(50, 50, 20), disc(90.5, 50, 20)...), 5, 0.05},
	}
	for _, c := range cases {
		if got := elongation(c.px, w); math.Abs(got-c.want) > c.rt*c.want {
			t.Errorf("%s: elongation %.6g, want %.6g", c.name, got, c.want)
		}
	}
	if got := elongation(bar(0, 0, 10, 1), w); !math.IsInf(got, 1) {
		t.Errorf("one-pixel line: %v, want +Inf", got)
	}
}

// TestRefineLimit: the waist Ncut of similar shapes scales as 1/size
// (cut length ∝ r, association ∝ r²), i.e. as 1/sqrt(area), so the limit
// does too below refineArea: a quarter of the area doubles it.
func TestRefineLimit(t *testing.T) {
	for _, c := range []struct {
		area int
		want float64
	}{{refineArea * 4, 0.03}, {refineArea, 0.03}, {refineArea / 4, 0.06}, {refineArea / 16, 0.12}} {
		if got := refineLimit(0.03, c.area); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("area %d: limit %v, want %v", c.area, got, c.want)
		}
	}
}

// The neck split cuts two overlapping discs apart but leaves a bar whose
// width swells and narrows along its length (a vessel, a scratch): its
// necks are deep, but every piece would be far longer than wide
// (neckAspect). Shapes are built by hand; the expected outcome is the
// definition of the rule.
func TestNeckPiecesBarVersusDiscs(t *testing.T) {
	run := func(mask []bool, cw, ch int) int {
		var nodes []int
		for c, m := range mask {
			if m {
				nodes = append(nodes, c)
			}
		}
		feat := make([]float32, cw*ch)
		g, err := affinity.PixelGraph([][]float32{feat}, cw, ch, affinity.PixelParams{Radius: 1, SigmaI: 1, SigmaX: 1}, 1)
		if err != nil {
			t.Fatal(err)
		}
		_, regions, _ := neckPieces(g.Subgraph(nodes), &objectCrop{feat: feat, cw: cw, ch: ch, nodes: nodes}, feat, make([]int32, len(nodes)), 1, nil, 20)
		return regions
	}
	discs, cw, ch := discRow(14, 20, 2)
	if n := run(discs, cw, ch); n != 2 {
		t.Errorf("two discs of radius 14, centres 20 apart: %d pieces, want 2", n)
	}
	// A bar 120 pixels long whose half-width runs between 2 and 5 pixels.
	bw, bh := 130, 16
	bar := make([]bool, bw*bh)
	for x := 5; x < 125; x++ {
		half := 3.5 + 1.5*math.Cos(2*math.Pi*float64(x)/30)
		for y := 0; y < bh; y++ {
			if math.Abs(float64(y)+0.5-8) < half {
				bar[y*bw+x] = true
			}
		}
	}
	if d := neckDepth(distanceInside(bar, bw, bh), bw, bh); d < refineNeckAlone {
		t.Fatalf("the bar's necks (depth %.3f) are too shallow to test the aspect bound", d)
	}
	if n := run(bar, bw, bh); n != 1 {
		t.Errorf("a bar of varying width: %d pieces, want 1", n)
	}
}

// An object above refineMaxNodes pixels is cut on a coarsened grid
// (refineCoarse): two touching discs of radius 60 px (together about
// 22,200 px, so a step of 3) with a dim seam between them still come
// apart along the seam, and every pixel of each disc away from the seam
// lands in that disc's piece. The same pair at half the size (below the
// cap, cut at full resolution) splits the same way.
func TestRefineCoarseSplitsLargePair(t *testing.T) {
	for _, r := range []float64{60, 30} {
		w, h := int(6*r), int(3*r)
		cx0, cx1, cy := 1.6*r, 3.4*r, 1.5*r // centres 1.8 r apart: a waist
		rng := rand.New(rand.NewPCG(5, uint64(r)))
		con := make([]float64, w*h)
		labels := make([]int32, w*h)
		side := make([]int, w*h) // 1 or 2 for pixels of one disc away from the seam
		seam := (cx0 + cx1) / 2
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				fx, fy := float64(x), float64(y)
				d0 := math.Hypot(fx-cx0, fy-cy) <= r
				d1 := math.Hypot(fx-cx1, fy-cy) <= r
				if !d0 && !d1 {
					continue
				}
				i := y*w + x
				labels[i] = 1
				con[i] = 0.8 + 0.02*rng.NormFloat64()
				if math.Abs(fx-seam) < 2 {
					con[i] = 0.4 + 0.02*rng.NormFloat64()
				}
				switch {
				case fx < seam-4:
					side[i] = 1
				case fx > seam+4:
					side[i] = 2
				}
			}
		}
		area := 0
		for _, l := range labels {
			area += int(l)
		}
		if coarse := area > refineMaxNodes; coarse != (r == 60) {
			t.Fatalf("r %g: area %d, cap %d: the test no longer covers the path it names", r, area, refineMaxNodes)
		}
		ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 30, true, 0, 2, 1)
		if err != nil {
			t.Fatal(err)
		}
		if ref.n != 2 {
			t.Errorf("r %g: %d objects, want 2", r, ref.n)
			continue
		}
		pieceOf := map[int]int32{}
		for i, s := range side {
			if s == 0 {
				continue
			}
			l := ref.labels[i]
			if p, ok := pieceOf[s]; ok && p != l {
				t.Errorf("r %g: disc %d is in pieces %d and %d", r, s, p, l)
				break
			}
			pieceOf[s] = l
		}
		if pieceOf[1] == pieceOf[2] {
			t.Errorf("r %g: both discs in piece %d", r, pieceOf[1])
		}
	}
}

// Rods and shallow necks: a capsule of even contrast (a rod-shaped cell)
// has no neck but digitization dips (neckNoise) and stays one object; two
// overlapping discs whose neck is about as shallow (radius 8, centres
// 1.2 R apart: 8 (1 - sqrt(1 - 0.36)) = 1.6 px in the plane, less once
// digitized) are split when their contrasts differ (refineStep) and kept
// whole when they are alike and touch with no seam, since nothing then
// tells them from one lobed object; with necks off (Params.SeamsOnly) a
// deep neck no longer splits a pair of equal discs, alone or with the
// dip in contrast that blur gives a narrow neck. Expected
// outcomes are the rules' definitions; shapes are drawn here.
func TestRefineRodsAndShallowNecks(t *testing.T) {
	draw := func(w, h int, inside func(x, y float64) (bool, float64)) ([]float64, []int32) {
		rng := rand.New(rand.NewPCG(3, 9))
		con := make([]float64, w*h)
		labels := make([]int32, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				if in, c := inside(float64(x), float64(y)); in {
					labels[y*w+x] = 1
					con[y*w+x] = c + 0.01*rng.NormFloat64()
				}
			}
		}
		return con, labels
	}
	run := func(name string, w, h int, necks bool, want int, inside func(x, y float64) (bool, float64)) {
		t.Helper()
		con, labels := draw(w, h, inside)
		ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 20, necks, 0, 1, 1)
		if err != nil {
			t.Fatal(err)
		}
		if ref.n != want {
			t.Errorf("%s: %d objects, want %d", name, ref.n, want)
		}
	}
	for _, th := range []float64{0, 0.3, 0.7, 1.2} {
		dx, dy := math.Cos(th), math.Sin(th)
		run(fmt.Sprintf("rod at angle %.1f", th), 80, 80, true, 1, func(x, y float64) (bool, float64) {
			px, py := x-40.3, y-39.6
			s := math.Max(-17, math.Min(17, px*dx+py*dy))
			return math.Hypot(px-s*dx, py-s*dy) <= 5.5, 1
		})
	}
	pair := func(c0, c1 float64, sep float64) func(x, y float64) (bool, float64) {
		return func(x, y float64) (bool, float64) {
			switch {
			case math.Hypot(x-20, y-20) <= 8 && x < 20+sep/2:
				return true, c0
			case math.Hypot(x-20-sep, y-20) <= 8:
				return true, c1
			case math.Hypot(x-20, y-20) <= 8:
				return true, c0
			}
			return false, 0
		}
	}
	run("shallow neck, contrasts 1 and 0.6", 50, 40, true, 2, pair(1, 0.6, 9.6))
	run("shallow neck, equal contrasts", 50, 40, true, 1, pair(1, 1, 9.6))
	run("deep neck, equal contrasts", 50, 40, true, 2, pair(1, 1, 15))
	run("deep neck, equal contrasts, necks off", 50, 40, false, 1, pair(1, 1, 15))
	// The blur of a narrow neck dims it: a dip in contrast at the neck
	// is a seam to the cut, which splits there with necks on and not
	// with necks off.
	dimmed := func(x, y float64) (bool, float64) {
		in, c := pair(1, 1, 15)(x, y)
		if d := math.Abs(x - 27.5); d < 3 {
			c *= 0.6 + 0.4*d/3
		}
		return in, c
	}
	run("deep neck dimmed by blur", 50, 40, true, 2, dimmed)
	run("deep neck dimmed by blur, necks off", 50, 40, false, 1, dimmed)
}

// cutConcavity on shapes with a known answer (plane geometry): two
// overlapping discs of radius R whose centres are sep apart, cut along
// the line through their crossing points, have both ends of the cut at a
// convexity defect of R - sqrt(R² - (sep/2)²) below the hull's tangent
// line; digitization moves outline and hull by up to a pixel. A
// digitized ellipse or capsule cut across its middle has no concavity
// (below neckNoise at both ends), so concaveCut refuses it.
func TestCutConcavity(t *testing.T) {
	split := func(mask []bool, cw int, cut float64) ([]int, []int, []bool) {
		var nodes, part []int
		var inA []bool
		for c, m := range mask {
			if m {
				part = append(part, len(nodes))
				nodes = append(nodes, c)
				inA = append(inA, float64(c%cw)+0.5 < cut)
			}
		}
		return nodes, part, inA
	}
	for _, tc := range []struct{ R, sep float64 }{{12, 18}, {15, 24}, {10, 17}} {
		mask, cw, ch := discRow(tc.R, tc.sep, 2)
		nodes, part, inA := split(mask, cw, 3+tc.R+tc.sep/2)
		want := tc.R - math.Sqrt(tc.R*tc.R-tc.sep*tc.sep/4)
		shallow, deep := cutConcavity(nodes, cw, ch, part, inA)
		if math.Abs(shallow-want) > 1 || math.Abs(deep-want) > 1 {
			t.Errorf("discs R %.0f, centres %.0f apart: ends %.2f and %.2f px deep, want %.2f ± 1", tc.R, tc.sep, shallow, deep, want)
		}
		if !concaveCut(nodes, cw, ch, part, inA) {
			t.Errorf("discs R %.0f, centres %.0f apart: concaveCut false", tc.R, tc.sep)
		}
	}
	convex := map[string]func(x, y float64) bool{
		"ellipse 20 x 12":  func(x, y float64) bool { return math.Pow((x-30)/20, 2)+math.Pow((y-20)/12, 2) <= 1 },
		"capsule radius 6": func(x, y float64) bool { return math.Hypot(math.Max(0, math.Abs(x-30)-16), y-20) <= 6 },
		"tilted ellipse": func(x, y float64) bool {
			u, v := 0.8*(x-30)+0.6*(y-20), -0.6*(x-30)+0.8*(y-20)
			return math.Pow(u/22, 2)+math.Pow(v/9, 2) <= 1
		},
	}
	for name, in := range convex {
		cw, ch := 60, 40
		mask := make([]bool, cw*ch)
		for c := range mask {
			mask[c] = in(float64(c%cw)+0.5, float64(c/cw)+0.5)
		}
		nodes, part, inA := split(mask, cw, 30.2)
		shallow, deep := cutConcavity(nodes, cw, ch, part, inA)
		if deep > neckNoise || concaveCut(nodes, cw, ch, part, inA) {
			t.Errorf("%s cut across: ends %.2f and %.2f px deep, want both at most %.0f", name, shallow, deep, neckNoise)
		}
	}
}

// Two bright discs inside a dim halo that joins them into one convex
// capsule (the glow around touching nuclei) have a deep neck in their
// half-maximum core (coreDistance) though the capsule's outline has none:
// for discs of radius R whose centres are sep apart the core's relative
// neck depth is 1 - sqrt(1 - (sep/2R)²) (plane geometry, as in
// TestNeckDepthDiscs). A single bright capsule in the same halo has none.
// Refining splits the pair and keeps the single capsule whole.
func TestCoreDistanceHaloedPair(t *testing.T) {
	const w, h, R, sep = 80, 50, 10.0, 17.0
	halo := func(x, y float64) bool { // the hull of both discs, 4 px wider
		return math.Hypot(math.Max(0, math.Abs(x-40)-sep/2), y-25) <= R+4
	}
	pair := func(x, y float64) bool {
		return math.Hypot(x-40+sep/2, y-25) <= R || math.Hypot(x-40-sep/2, y-25) <= R
	}
	capsule := func(x, y float64) bool { return math.Hypot(math.Max(0, math.Abs(x-40)-sep/2), y-25) <= R }
	for _, tc := range []struct {
		name    string
		bright  func(x, y float64) bool
		depth   float64 // the core's relative neck depth, 0 for none
		objects int
	}{
		{"two discs radius 10, centres 17 apart", pair, 1 - math.Sqrt(1-math.Pow(sep/(2*R), 2)), 2},
		{"one capsule radius 10", capsule, 0, 1},
	} {
		rng := rand.New(rand.NewPCG(7, 11))
		con := make([]float64, w*h)
		labels := make([]int32, w*h)
		mask := make([]bool, w*h)
		feat := make([]float32, w*h)
		for c := range con {
			x, y := float64(c%w)+0.5, float64(c/w)+0.5
			switch {
			case tc.bright(x, y):
				con[c] = 1
			case halo(x, y):
				con[c] = 0.3
			default:
				continue
			}
			con[c] += 0.01 * rng.NormFloat64()
			labels[c], mask[c], feat[c] = 1, true, float32(con[c])
		}
		d := distanceInside(mask, w, h)
		if outline := neckDepth(d, w, h); outline > 0.01 {
			t.Fatalf("%s: the halo's outline has a neck %.3f deep; the test needs a convex one", tc.name, outline)
		}
		core := deepestNeck(coreDistance(boxMean3(boxMean3(feat, w, h), w, h), mask, d, w, h), w, h, neckNoise)
		// Digitization and the 5x5 smoothing move peak and saddle by
		// about a pixel.
		if math.Abs(core.depth-tc.depth) > 1.5/R {
			t.Errorf("%s: core neck %.3f deep (%.2f px), want %.3f ± %.3f", tc.name, core.depth, core.drop, tc.depth, 1.5/R)
		}
		if tc.depth > 0 && (core.peakA%w < 40) == (core.peakB%w < 40) {
			t.Errorf("%s: the core's neck separates pixels %d and %d, not the two discs", tc.name, core.peakA, core.peakB)
		}
		ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 20, true, 0, 1, 1)
		if err != nil {
			t.Fatal(err)
		}
		if ref.n != tc.objects {
			t.Errorf("%s: %d objects, want %d", tc.name, ref.n, tc.objects)
		}
	}
}

// cropNoise recovers the standard deviation of white Gaussian noise added
// to a disc of constant contrast (the median absolute deviation of the
// 3x3 residual, scaled as its doc states); with about 1,100 interior
// pixels the estimate's sampling error is a few per cent. A dip of a
// fifth of the contrast along a cut is a seam (objectCrop.seam). A cut
// across a uniform bar 10 px wide is taken for a seam by noise alone in
// at most about seamSigmas' one-sided rate (2.3 %; 5 % allowed over 400
// draws), where the 2 % test alone would take it about a quarter of the
// time (the seam's mean has a standard error of σ/√10 = 0.032 at σ = 0.1).
func TestCropNoiseAndSeam(t *testing.T) {
	const cw, ch, R = 48, 48, 20.0
	for _, sigma := range []float64{0.02, 0.05, 0.1} {
		rng := rand.New(rand.NewPCG(5, uint64(sigma*1000)))
		feat := make([]float32, cw*ch)
		var nodes []int
		for c := range feat {
			x, y := float64(c%cw)+0.5, float64(c/cw)+0.5
			if math.Hypot(x-24, y-24) <= R {
				nodes = append(nodes, c)
				feat[c] = float32(1 + sigma*rng.NormFloat64())
			}
		}
		got := cropNoise(feat, boxMean3(feat, cw, ch), nodes, cw, ch)
		if math.Abs(got-sigma) > 0.1*sigma {
			t.Errorf("noise %.2f: estimated %.4f, want within 10%%", sigma, got)
		}
		o := &objectCrop{feat: feat, cw: cw, ch: ch, nodes: nodes, noise: got}
		// The disc's plateau is 1, so its plateau SNR is 1/σ (the
		// median of noisy values at or above half of it is 1 within a
		// few thousandths; the noise estimate within 10%).
		sorted := make([]float32, len(nodes))
		for k, c := range nodes {
			sorted[k] = feat[c]
		}
		slices.Sort(sorted)
		if snr := plateauSNR(sorted, o.noise); math.Abs(snr*sigma-1) > 0.12 {
			t.Errorf("noise %.2f: plateau SNR %.1f, want %.1f within 12%%", sigma, snr, 1/sigma)
		}
		part := make([]int, len(nodes))
		inA := make([]bool, len(nodes))
		for k, c := range nodes {
			part[k] = k
			inA[k] = c%cw < 24
			if x := c % cw; x == 23 || x == 24 {
				feat[c] *= 0.8
			}
		}
		if !o.seam(part, inA) {
			t.Errorf("noise %.2f: a dip of 20%% along the cut not taken for a seam", sigma)
		}
	}
	// The bar: 60 x 10 px of contrast 1, cut across its middle.
	const bw, bh, sigma, draws = 64, 14, 0.1, 400
	rng := rand.New(rand.NewPCG(9, 10))
	var nodes []int
	for c := 0; c < bw*bh; c++ {
		if x, y := c%bw, c/bw; x >= 2 && x < 62 && y >= 2 && y < 12 {
			nodes = append(nodes, c)
		}
	}
	part := make([]int, len(nodes))
	inA := make([]bool, len(nodes))
	for k, c := range nodes {
		part[k], inA[k] = k, c%bw < 32
	}
	seams := 0
	for range draws {
		feat := make([]float32, bw*bh)
		for _, c := range nodes {
			feat[c] = float32(1 + sigma*rng.NormFloat64())
		}
		o := &objectCrop{feat: feat, cw: bw, ch: bh, nodes: nodes, noise: cropNoise(feat, boxMean3(feat, bw, bh), nodes, bw, bh)}
		if o.seam(part, inA) {
			seams++
		}
	}
	if seams > draws/20 {
		t.Errorf("a cut across a uniform bar taken for a seam in %d of %d noise draws, want at most %d", seams, draws, draws/20)
	}
}

// Three discs of radius 10 whose centres stand on an equilateral
// triangle of side 13, of contrasts 1, 0.75 and 0.55 (touching nuclei
// stained unequally, saturated so no seam dims where they meet): the
// distance map of the union peaks at the clump's centre, so its outline
// has no neck, and the cut between the discs runs along no dip in
// contrast, so only the outline's dents where two discs meet,
// R - sqrt(R² - (13/2)²) = 2.4 px deep (plane geometry), tell that the
// clump is several objects. With shape cues on, a cut between those
// dents is accepted (concaveCut) and the clump comes apart; with them
// off it stays whole.
func TestRefineSplitsConcaveClump(t *testing.T) {
	const w, h, R, side = 60, 60, 10.0, 13.0
	contrast := [3]float64{1, 0.75, 0.55}
	var centres [3][2]float64
	for k := range centres {
		a := 2*math.Pi*float64(k)/3 + 0.2
		centres[k] = [2]float64{30.3 + side/math.Sqrt(3)*math.Cos(a), 29.6 + side/math.Sqrt(3)*math.Sin(a)}
	}
	rng := rand.New(rand.NewPCG(5, 8))
	con := make([]float64, w*h)
	labels := make([]int32, w*h)
	mask := make([]bool, w*h)
	for c := range con {
		x, y := float64(c%w), float64(c/w)
		// Where discs overlap, the nearest centre's contrast.
		best := -1
		for k, p := range centres {
			if d := math.Hypot(x-p[0], y-p[1]); d <= R && (best < 0 || d < math.Hypot(x-centres[best][0], y-centres[best][1])) {
				best = k
			}
		}
		if best >= 0 {
			con[c], labels[c], mask[c] = contrast[best]+0.02*rng.NormFloat64(), 1, true
		}
	}
	if d := neckDepth(distanceInside(mask, w, h), w, h); d >= refineNeck {
		t.Fatalf("the clump's outline has a neck %.3f deep; the test needs none (below %.2f)", d, refineNeck)
	}
	for _, tc := range []struct {
		necks   bool
		atLeast int
		atMost  int
	}{{true, 2, 3}, {false, 1, 1}} {
		ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 20, tc.necks, 0, 1, 1)
		if err != nil {
			t.Fatal(err)
		}
		if ref.n < tc.atLeast || ref.n > tc.atMost {
			t.Errorf("necks %v: %d objects, want %d-%d", tc.necks, ref.n, tc.atLeast, tc.atMost)
		}
	}
}

// sliverSplit: a side under crumbFraction (1/8) of the other is a sliver.
func TestSliverSplit(t *testing.T) {
	side := func(a, b int) []bool {
		in := make([]bool, a+b)
		for i := range a {
			in[i] = true
		}
		return in
	}
	for _, c := range []struct {
		a, b int
		want bool
	}{{10, 100, true}, {12, 100, true}, {13, 100, false}, {50, 50, false}, {100, 12, true}, {0, 5, true}} {
		if got := sliverSplit(side(c.a, c.b)); got != c.want {
			t.Errorf("sides %d and %d: sliver %v, want %v", c.a, c.b, got, c.want)
		}
	}
}

// coarseStep: objects up to refineMaxNodes are re-cut at full resolution;
// above, the step is the least integer s with area/s² <=
// refineCoarseNodes (the definition; values worked by hand).
func TestCoarseStep(t *testing.T) {
	for _, c := range []struct{ area, want int }{
		{1, 1},
		{refineMaxNodes, 1},
		{refineMaxNodes + 1, 3}, // 10,001 / 4 = 2,500.25; / 9 = 1,111
		{4 * refineCoarseNodes * 4, 4},
		{4*refineCoarseNodes*4 + 1, 5},
		{90615, 7},    // scikit-image's camera.png, its largest object: 90,615 / 49 = 1,849; / 36 = 2,517
		{1 << 24, 82}, // 16,777,216 / 6,724 = 2,495; / 6,561 = 2,557
	} {
		s := coarseStep(c.area)
		if s != c.want {
			t.Errorf("coarseStep(%d) = %d, want %d", c.area, s, c.want)
		}
		if s > 1 && c.area > refineCoarseNodes*s*s {
			t.Errorf("area %d at step %d leaves %d nodes, above refineCoarseNodes", c.area, s, c.area/(s*s))
		}
		if s > 1 && c.area <= refineCoarseNodes*(s-1)*(s-1) && s > 2 {
			t.Errorf("area %d: step %d, but %d already leaves at most refineCoarseNodes", c.area, s, s-1)
		}
	}
}

// The bisection's work budget (cutOptions.budget, refineWork): on a
// string of 12 cliques of 10 nodes joined in a row by weak edges, the
// unbounded bisection finds all 12 (common practice: weakly joined
// cliques are the textbook case of the normalized cut, Shi and Malik
// 2000); with a budget the nodes of all solved parts stay within it,
// fewer cliques are parted the smaller it is, and the largest parts are
// split first, so every region is a union of whole cliques.
func TestBisectBudget(t *testing.T) {
	const k, m = 12, 10
	var e []affinity.Edge
	for c := 0; c < k; c++ {
		for i := 0; i < m; i++ {
			for j := i + 1; j < m; j++ {
				e = append(e, affinity.Edge{I: c*m + i, J: c*m + j, W: 1})
			}
		}
		if c > 0 {
			e = append(e, affinity.Edge{I: c*m - 1, J: c * m, W: 0.01})
		}
	}
	g := mustGraph(t, k*m, e)
	n := k * m
	prev := k + 1
	for _, c := range []struct {
		budget   int
		regionsA int // at least
		regionsB int // at most
	}{
		{0, k, k},
		{8 * n, 2, k},
		{4 * n, 2, k},
		{2 * n, 2, k},
		{n, 1, 2}, // the whole graph only: one split
	} {
		res, err := bisect(context.Background(), g, nil, cutParams{maxNcut: 0.2, minArea: 1, workers: 1, seed: 1}, cutOptions{noSpectrum: true, budget: c.budget})
		if err != nil {
			t.Fatal(err)
		}
		if c.budget > 0 && res.solved > c.budget {
			t.Errorf("budget %d: %d nodes solved", c.budget, res.solved)
		}
		if res.regions < c.regionsA || res.regions > c.regionsB || res.regions > prev {
			t.Errorf("budget %d: %d regions, want %d to %d and at most the %d of a larger budget", c.budget, res.regions, c.regionsA, c.regionsB, prev)
		}
		if c.budget == 0 && res.solved <= 4*n {
			t.Errorf("unbounded: %d nodes solved, the budgets below would not bind", res.solved)
		}
		prev = res.regions
		for c0 := 0; c0 < k; c0++ {
			for i := 1; i < m; i++ {
				if res.region[c0*m+i] != res.region[c0*m] {
					t.Errorf("budget %d: clique %d parted", c.budget, c0)
				}
			}
		}
	}
}

// beyondDigitization (refineOne applies it to solid bars,
// barElongation): digitized solid bars (the bricks of a wall, rods)
// have only the dips of their ridge, at most neckNoise deep, whatever
// their width and angle, while two discs of radius 12 whose centres are
// 1.6 R apart have a neck of 12 (1 - sqrt(1 - 0.64)) = 4.8 px (plane
// geometry) and a relative depth of 0.35 once digitized, far beyond. Without the floor
// some of the bars count as necked (a dip of 0.45 px on the narrow bar is
// a relative depth of 0.08).
func TestBeyondDigitization(t *testing.T) {
	unfloored := 0
	for _, c := range []struct {
		name   string
		w, h   int
		inside func(x, y float64) bool
		want   bool
	}{
		{"bar 35 x 120 at 0.2 rad", 160, 160, bar(80.3, 79.6, 0.2, 60, 17.5), false},
		{"bar 35 x 120 at 1.3 rad", 160, 160, bar(80.3, 79.6, 1.3, 60, 17.5), false},
		{"bar 30 x 100 at 0.7 rad", 160, 160, bar(80.1, 80.4, 0.7, 50, 15), false},
		{"bar 11 x 60 at 0.4 rad", 100, 100, bar(50.2, 49.7, 0.4, 30, 5.5), false},
		{"two discs of radius 12, 1.6 R apart", 70, 40, func(x, y float64) bool {
			return math.Hypot(x-20, y-20) <= 12 || math.Hypot(x-39.2, y-20) <= 12
		}, true},
	} {
		mask := make([]bool, c.w*c.h)
		smooth := make([]float32, c.w*c.h)
		for y := 0; y < c.h; y++ {
			for x := 0; x < c.w; x++ {
				if c.inside(float64(x), float64(y)) {
					mask[y*c.w+x] = true
					smooth[y*c.w+x] = 1
				}
			}
		}
		d := distanceInside(mask, c.w, c.h)
		if !c.want && deepestNeck(d, c.w, c.h, 0).depth >= refineNeck {
			unfloored++ // necked by refineNeck alone
		}
		shape := &objectShape{mask: mask, smooth: smooth, cw: c.w, ch: c.h, dist: d}
		if got := shape.beyondDigitization(); got != c.want {
			t.Errorf("%s: beyondDigitization %v, want %v (deepest neck %+v)", c.name, got, c.want, deepestNeck(d, c.w, c.h, 0))
		}
	}
	if unfloored == 0 {
		t.Error("no bar has a relative neck depth of refineNeck without the floor: the test no longer shows what the floor does")
	}
}

// TestSingleElongated: singleElongated takes as one object a short rod
// whose outline digitization dents by a pixel on one side (elongation
// about 6, 6 px deep) and solid bars however thin, but not two touching
// discs (a neck deeper than a pixel), nor two specks of radius 3 px 7
// px apart (elongation 6.1, a neck within digitization, but under
// fineRadius deep), nor a disc (elongation 1). The
// elongations are second moments (pairElongation); the cases are ours.
func TestSingleElongated(t *testing.T) {
	capsule := func(cx, cy, half, r float64) func(x, y float64) bool {
		return func(x, y float64) bool {
			px, py := x-cx, y-cy
			s := math.Max(-half, math.Min(half, px))
			return math.Hypot(px-s, py) <= r
		}
	}
	dented := func(in func(x, y float64) bool, cx, cy, r float64) func(x, y float64) bool {
		return func(x, y float64) bool {
			return in(x, y) && !(math.Abs(x-cx) < 3 && y-cy > r-1)
		}
	}
	for _, c := range []struct {
		name   string
		w, h   int
		inside func(x, y float64) bool
		want   bool
	}{
		{"short rod dented by a pixel", 60, 40, dented(capsule(30.2, 19.7, 9, 6), 30.2, 19.7, 6), true},
		{"solid bar 11 x 60", 100, 100, bar(50.2, 49.7, 0.4, 30, 5.5), true},
		{"solid bar 7 x 60 along x", 100, 100, bar(50.2, 49.7, 0, 30, 3.5), true},
		{"two touching discs of radius 8", 60, 40, func(x, y float64) bool {
			return math.Hypot(x-20, y-20) <= 8 || math.Hypot(x-36, y-20) <= 8
		}, false},
		{"two specks of radius 3, 7 px apart", 40, 20, func(x, y float64) bool {
			return math.Hypot(x-15.2, y-9.7) <= 3 || math.Hypot(x-22.2, y-9.7) <= 3
		}, false},
		{"disc of radius 10", 40, 40, func(x, y float64) bool { return math.Hypot(x-20.2, y-19.7) <= 10 }, false},
	} {
		mask := make([]bool, c.w*c.h)
		smooth := make([]float32, c.w*c.h)
		var px []int
		for y := 0; y < c.h; y++ {
			for x := 0; x < c.w; x++ {
				if c.inside(float64(x), float64(y)) {
					mask[y*c.w+x] = true
					smooth[y*c.w+x] = 1
					px = append(px, y*c.w+x)
				}
			}
		}
		shape := &objectShape{mask: mask, smooth: smooth, cw: c.w, ch: c.h, dist: distanceInside(mask, c.w, c.h)}
		solid, elong := solidity(px, c.w) > refineSolidity, elongation(px, c.w)
		if got := shape.singleElongated(solid, elong); got != c.want {
			t.Errorf("%s (solid %v, elongation %.2f): singleElongated %v, want %v", c.name, solid, elong, got, c.want)
		}
	}
}

// bar is a rectangle of half-length l and half-width r centred on
// (cx, cy) at angle th.
func bar(cx, cy, th, l, r float64) func(x, y float64) bool {
	dx, dy := math.Cos(th), math.Sin(th)
	return func(x, y float64) bool {
		px, py := x-cx, y-cy
		return math.Abs(px*dx+py*dy) <= l && math.Abs(-px*dy+py*dx) <= r
	}
}

// Small spots pressed together (puncta of radius 3 px, blurred, joined
// by their halos) are split at the dip between their maxima
// (peakPieces); a single spot, and a short thin rod whose contrast
// ripples by 5 % along it, stay whole. The spots are drawn here as
// Gaussians of σ = 1.5 px (a disc of radius 3 blurred); the expected
// counts are the rule's definition.
func TestRefineSmallSpots(t *testing.T) {
	type spot struct{ x, y, peak float64 }
	run := func(name string, want int, value func(x, y float64) float64) {
		t.Helper()
		const w, h = 40, 30
		rng := rand.New(rand.NewPCG(8, 13))
		con := make([]float64, w*h)
		labels := make([]int32, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				if v := value(float64(x), float64(y)); v > 0.3 {
					labels[y*w+x] = 1
					con[y*w+x] = v + 0.02*rng.NormFloat64()
				}
			}
		}
		ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 5, true, 0, 1, 1)
		if err != nil {
			t.Fatal(err)
		}
		if ref.n != want {
			t.Errorf("%s: %d objects, want %d", name, ref.n, want)
		}
	}
	spots := func(s ...spot) func(x, y float64) float64 {
		return func(x, y float64) float64 {
			v := 0.0
			for _, p := range s {
				v += p.peak * math.Exp(-((x-p.x)*(x-p.x)+(y-p.y)*(y-p.y))/(2*1.5*1.5))
			}
			return v
		}
	}
	run("two equal spots 5 px apart", 2, spots(spot{17, 15, 1}, spot{22, 15, 1}))
	run("bright and dim spot 5.5 px apart", 2, spots(spot{17, 15, 1}, spot{22.5, 15, 0.6}))
	run("three spots in a row", 3, spots(spot{12, 15, 1}, spot{17.5, 15, 0.8}, spot{23, 15, 1}))
	run("one spot", 1, spots(spot{20, 15, 1}))
	run("thin rod rippling 5 %", 1, func(x, y float64) float64 {
		if x < 8 || x > 32 || math.Abs(y-15) > 2.5 {
			return 0
		}
		return 0.8 * (1 + 0.05*math.Sin(x))
	})
}

// A split through a neck of the half-maximum core (coreEvident) of a
// uniform disc of radius 12 cut straight down its middle: the sides are
// alike (no step in contrast) and the cut ends on the convex outline (no
// concavity), so only the neck's depth can carry it. A core neck 1.5 px
// deep is within what the noisy half-maximum outline wanders
// (concaveNoise) and is refused; one 2.5 px deep is taken. Darkening one
// side by half (a step in contrast, differ) carries even a shallow neck.
func TestCoreEvidentFloor(t *testing.T) {
	const cw, ch, R = 30, 30, 12.0
	rng := rand.New(rand.NewPCG(3, 4))
	var nodes []int
	for c := 0; c < cw*ch; c++ {
		if math.Hypot(float64(c%cw)-14.5, float64(c/cw)-14.5) <= R {
			nodes = append(nodes, c)
		}
	}
	feat := make([]float32, cw*ch)
	for _, c := range nodes {
		feat[c] = float32(1 + 0.05*rng.NormFloat64())
	}
	o := &objectCrop{feat: feat, cw: cw, ch: ch, nodes: nodes, noise: 0.05}
	part := make([]int, len(nodes))
	inA := make([]bool, len(nodes))
	for k, c := range nodes {
		part[k], inA[k] = k, c%cw < 15
	}
	for _, tc := range []struct {
		drop float64
		want bool
	}{{0.5, false}, {1.5, false}, {2.5, true}} {
		if got := o.coreEvident(tc.drop, part, inA); got != tc.want {
			t.Errorf("uniform disc, core neck %.1f px deep: evident %v, want %v", tc.drop, got, tc.want)
		}
	}
	for k, c := range nodes {
		if inA[k] {
			feat[c] *= 0.5
		}
	}
	if !o.coreEvident(0.5, part, inA) {
		t.Error("disc with one half at half the contrast, core neck 0.5 px deep: not evident, want evident (a step in contrast)")
	}
}

// The cap on the re-cut's work (refineBudget: refineWork n, at most
// refineMaxWork) still pays for the first two levels of a cluster of
// four up to refineMaxNodes. Four 44 x 44 px blocks of contrast 1 in a
// square, parted by a dim cross 3 px wide (contrast 0.6, wider than the
// graph's reach), make a pixel graph of 8,281 nodes as the re-cut builds it (refineRadius,
// refineSigmaI, refineSigmaX): weakly joined parts, the textbook case of
// the normalized cut (Shi and Malik 2000); sides of at least half a
// block keep the blocks themselves whole. Within the budget the
// bisection parts all four blocks (the root and both halves, 2n nodes
// solved); with half the cap it parts only two, so the test would see a
// cap too small for a cluster of four.
func TestRefineFourCluster(t *testing.T) {
	const b, sw = 44, 3 // block side, cross width (beyond the graph's reach)
	w := 2*b + sw
	feat := make([]float32, w*w)
	block := make([]int, w*w) // 0 on the cross, 1-4 in the blocks
	var nodes []int
	for y := 0; y < w; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			nodes = append(nodes, i)
			if x >= b && x < b+sw || y >= b && y < b+sw {
				feat[i] = 0.6
				continue
			}
			feat[i] = 1
			block[i] = 1 + x/(b+sw) + 2*(y/(b+sw))
		}
	}
	g, err := affinity.PixelSubgraph([][]float32{feat}, w, w, nodes, affinity.PixelParams{Radius: refineRadius, SigmaI: refineSigmaI, SigmaX: refineSigmaX})
	if err != nil {
		t.Fatal(err)
	}
	if 4*g.N <= refineMaxWork || g.N > refineMaxNodes {
		t.Fatalf("%d nodes: the cap does not bind or the object would be coarsened; the test no longer covers its case", g.N)
	}
	for _, c := range []struct {
		budget, want int
	}{
		{refineBudget(g.N), 4},
		{refineMaxWork / 2, 2},
	} {
		res, err := bisect(context.Background(), g, nil, cutParams{maxNcut: RefineMaxNcut, minArea: b * b / 2, workers: 1, seed: 1}, cutOptions{noSpectrum: true, budget: c.budget})
		if err != nil {
			t.Fatal(err)
		}
		if res.solved > c.budget {
			t.Errorf("budget %d: %d nodes solved", c.budget, res.solved)
		}
		// Count the blocks' regions; every block must lie in one region.
		regionOf := map[int]int32{}
		seen := map[int32]bool{}
		for i, k := range block {
			if k == 0 {
				continue
			}
			r, ok := regionOf[k]
			if !ok {
				regionOf[k] = res.region[i]
				seen[res.region[i]] = true
			} else if r != res.region[i] {
				t.Fatalf("budget %d: block %d parted", c.budget, k)
			}
		}
		t.Logf("budget %d: %d regions, %d solved, splits %v", c.budget, res.regions, res.solved, res.splitNcuts)
		if len(seen) != c.want {
			t.Errorf("budget %d: the four blocks in %d regions, want %d", c.budget, len(seen), c.want)
		}
	}
}

// TestRefineKeepsLines: a crack (a random walk of 60 2-px steps whose
// heading turns by a normal 0.35 rad a step, 1.5 px about its path, with
// a contrast that changes along it, as a crack's under grain does) is one
// object to the re-cut. Its turns dent the outline and its width varies
// with digitization: without the line rule (isLine) the re-cut cut it
// into 8 pieces. A pair of discs of radius 8 is no line.
func TestRefineKeepsLines(t *testing.T) {
	const w, h = 200, 200
	rng := rand.New(rand.NewPCG(5, 5))
	con := make([]float64, w*h)
	labels := make([]int32, w*h)
	x, y, head := 100.0, 100.0, 0.3
	for step := 0; step < 60; step++ {
		head += 0.35 * rng.NormFloat64()
		x, y = x+2*math.Cos(head), y+2*math.Sin(head)
		c := 0.6 + 0.4*math.Sin(float64(step)/5)
		for py := int(y) - 3; py <= int(y)+3; py++ {
			for px := int(x) - 3; px <= int(x)+3; px++ {
				if px >= 0 && px < w && py >= 0 && py < h && math.Hypot(float64(px)-x, float64(py)-y) <= 1.5 {
					labels[py*w+px] = 1
					con[py*w+px] = c + 0.02*rng.NormFloat64()
				}
			}
		}
	}
	mask := make([]bool, w*h)
	area := 0
	for i, l := range labels {
		mask[i] = l == 1
		if l == 1 {
			area++
		}
	}
	if p := slices.Max(distanceInside(mask, w, h)); !isLine(area, p) {
		t.Fatalf("the crack (area %d, peak distance %.2f) is not a line to isLine", area, p)
	}
	ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 20, true, 0, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	if ref.n != 1 {
		t.Errorf("crack: %d objects, want 1", ref.n)
	}
	if isLine(402, 8) { // two discs of radius 8: area 2π·64
		t.Error("two discs of radius 8 count as a line")
	}
}

// TestPartMapsAsAfresh checks the memo of part distance maps (partMaps)
// against computing them each time: for parts of two touching discs
// (the whole, each half, and the left half less a node, three parts with
// the same first node) the entry's map, box and deepest neck are those of
// partDistance and deepestNeck, a part asked for again is the same
// entry, and neckPieces splits the discs the same way with the memo as
// without it.
func TestPartMapsAsAfresh(t *testing.T) {
	mask, cw, ch := discRow(14, 20, 2)
	var nodes []int
	for c, m := range mask {
		if m {
			nodes = append(nodes, c)
		}
	}
	var all, left, right []int
	for k, c := range nodes {
		all = append(all, k)
		if c%cw < cw/2 {
			left = append(left, k)
		} else {
			right = append(right, k)
		}
	}
	parts := [][]int{all, left, right, left[:len(left)-1]}
	m := newPartMaps(nodes, cw)
	for round := 0; round < 2; round++ {
		var seen []*partMap
		for i, part := range parts {
			e := m.get(part)
			d, b := partDistance(cropOf(nodes, part), cw)
			if !slices.Equal(e.d, d) || e.b != b {
				t.Fatalf("part %d: memo map or box %v differs from partDistance's %v", i, e.b, b)
			}
			if nk := deepestNeck(d, b.w, b.h, 0); e.neck() != nk {
				t.Errorf("part %d: memo neck %+v, deepestNeck %+v", i, e.neck(), nk)
			}
			for j, o := range seen {
				if o == e {
					t.Errorf("parts %d and %d share one entry", j, i)
				}
			}
			seen = append(seen, e)
		}
		// The whole, the left half and the half less a node all start
		// at node 0.
		if n := len(m.byFirst[left[0]]); n != 3 {
			t.Errorf("round %d: %d entries under node 0, want 3 (no new entry when asked again)", round, n)
		}
	}
	feat := make([]float32, cw*ch)
	g, err := affinity.PixelGraph([][]float32{feat}, cw, ch, affinity.PixelParams{Radius: 1, SigmaI: 1, SigmaX: 1}, 1)
	if err != nil {
		t.Fatal(err)
	}
	sub := g.Subgraph(nodes)
	run := func(parts *partMaps) ([]int32, int) {
		o := &objectCrop{feat: feat, cw: cw, ch: ch, nodes: nodes, parts: parts}
		region, regions, _ := neckPieces(sub, o, feat, make([]int32, len(nodes)), 1, nil, 20)
		return region, regions
	}
	r0, n0 := run(nil)
	r1, n1 := run(newPartMaps(nodes, cw))
	if n0 != 2 || n1 != n0 || !slices.Equal(r0, r1) {
		t.Errorf("neckPieces: %d regions without the memo, %d with it (want 2, the same map)", n0, n1)
	}
}
