package affinity

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Closed forms of the scale-normalized Gaussian derivatives (Lindeberg
// 1998): smoothing leaves a ramp a·x and a parabola c·x² with slope a and
// curvature 2c (the Gaussian is normalized and symmetric; its second
// moment adds a constant only), so at the centre of an image far from the
// border E = σ·a on the ramp, E = σ²·2c at the parabola's vertex, and the
// ridge strength is σ²·2c there (positive: a dark line's profile curves
// upward).
func TestEdgeEnergyClosedForms(t *testing.T) {
	const w, h, sigma = 61, 61, 1.5
	cx, cy := 30, 30
	ramp := make([]float32, w*h)
	para := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			dx := float64(x - cx)
			ramp[y*w+x] = float32(0.01 * dx)
			para[y*w+x] = float32(0.002 * dx * dx)
		}
	}
	i := cy*w + cx
	neg := make([]float32, w*h)
	for k, v := range para {
		neg[k] = -v
	}
	dark, bright := RidgeStrengths(para, w, h, sigma, 2)
	negDark, negBright := RidgeStrengths(neg, w, h, sigma, 1)
	cases := []struct {
		name string
		got  float32
		want float64
	}{
		{"ramp energy", EdgeEnergy(ramp, w, h, sigma, 2)[i], sigma * 0.01},
		{"parabola energy", EdgeEnergy(para, w, h, sigma, 1)[i], sigma * sigma * 2 * 0.002},
		// A valley I = a x² (a dark line) has Hessian eigenvalues 2a and 0:
		// dark strength σ²·2a, bright strength 0; negated, the reverse.
		{"valley, dark strength", dark[i], sigma * sigma * 2 * 0.002},
		{"ridge, bright strength", negBright[i], sigma * sigma * 2 * 0.002},
	}
	for _, c := range cases {
		if math.Abs(float64(c.got)-c.want) > 5e-3*c.want { // sampled kernels cut at 4σ
			t.Errorf("%s: %v, want %v", c.name, c.got, c.want)
		}
	}
	for name, v := range map[string]float32{"valley, bright strength": bright[i], "ridge, dark strength": negDark[i]} {
		if math.Abs(float64(v)) > 1e-6 {
			t.Errorf("%s: %v, want 0", name, v)
		}
	}
	// Flat image: no energy anywhere (the second-derivative kernel sums
	// to zero, the first is odd).
	flat := make([]float32, w*h)
	for k := range flat {
		flat[k] = 0.5
	}
	for k, v := range EdgeEnergy(flat, w, h, sigma, 2) {
		if math.Abs(float64(v)) > 1e-6 {
			t.Fatalf("flat image: E[%d] = %v, want 0", k, v)
		}
	}
}

// A thin dark line between two alike halves: the intervening-contour
// factor parts the regions on either side and leaves regions on the same
// side joined (Leung and Malik 1998, the cue's defining property).
func TestRegionGraphContourCue(t *testing.T) {
	const w, h = 40, 20
	f := make([]float32, w*h)
	lab := make([]int32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			f[y*w+x] = 0.8
			if x == 19 || x == 20 {
				f[y*w+x] = 0.2
			}
			lab[y*w+x] = int32(x / 10) // four columns of regions
		}
	}
	r := Summarize([][]float32{f}, labelmap.Map{Pix: lab, Width: w, Height: h}, 4)
	adj := Adjacency(labelmap.Map{Pix: lab, Width: w, Height: h}, 4, 2)
	e := EdgeEnergy(f, w, h, ContourScale, 1)
	plain, err := RegionGraph(r, adj, w, h, RegionParams{SigmaI: 1, SigmaX: 100})
	if err != nil {
		t.Fatal(err)
	}
	sc := AutoSigmaContour(e, w, h, r, adj)
	cued, err := RegionGraph(r, adj, w, h, RegionParams{SigmaI: 1, SigmaX: 100, Contour: e, SigmaC: sc})
	if err != nil {
		t.Fatal(err)
	}
	weight := func(g *Graph, i, j int) float64 {
		for q := g.RowPtr[i]; q < g.RowPtr[i+1]; q++ {
			if int(g.Col[q]) == j {
				return float64(g.Weight[q])
			}
		}
		return 0
	}
	// Regions 1 and 2 hold the line between them; 0-1 and 2-3 do not.
	across := weight(cued, 1, 2) / weight(plain, 1, 2)
	same := weight(cued, 0, 1) / weight(plain, 0, 1)
	if !(across < 0.05*same) {
		t.Errorf("contour factor across the line %v, on one side %v: want the first far below", across, same)
	}
	if _, err := RegionGraph(r, adj, w, h, RegionParams{SigmaI: 1, SigmaX: 1, Contour: e}); err == nil {
		t.Error("contour without sigma-c: no error")
	}
}

// jetPlanes is the Gaussian jet of gaussianJet computed the direct way,
// three whole horizontally filtered planes and then every tap of the
// vertical filters pixel by pixel, unfolded (the form gaussianJet had
// before it was streamed), as the reference of TestGaussianJetStreamed;
// both take their taps from jetKernels.
func jetPlanes(plane []float32, w, h int, sigma float64) (out [5][]float64) {
	r, g0, g1, g2 := jetKernels(sigma)
	var rows [3][]float32
	for f, kern := range [3][]float64{g0, g1, g2} {
		rows[f] = make([]float32, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				rows[f][y*w+x] = float32(clampedTaps(kern, plane[y*w:(y+1)*w], x, r))
			}
		}
	}
	for f := range out {
		out[f] = make([]float64, w*h)
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var ix, iy, ixx, iyy, ixy float64
			for k := -r; k <= r; k++ {
				j := min(max(y+k, 0), h-1)*w + x
				a, b, d := float64(rows[0][j]), float64(rows[1][j]), float64(rows[2][j])
				ix += g0[k+r] * b
				iy += g1[k+r] * a
				ixx += g0[k+r] * d
				iyy += g2[k+r] * a
				ixy += g1[k+r] * b
			}
			i := y*w + x
			out[0][i], out[1][i], out[2][i], out[3][i], out[4][i] = ix, iy, ixx, iyy, ixy
		}
	}
	return out
}

// The streamed, folded jet (ring of filtered rows per band, taps at ±k
// paired) equals the direct two-pass filter up to rounding, on images
// shorter and narrower than the kernel, on band boundaries and across
// several bands, for 1 and 3 workers, and is the same for both worker
// counts bit for bit. The bound: the horizontal pass rounds to float32
// (relative 6e-8) and a folded sum may round differently, so each
// derivative may move by a few float32 steps of the largest derivative
// magnitude; 1e-6 of that is several times the observed spread.
func TestGaussianJetStreamed(t *testing.T) {
	for _, c := range []struct {
		w, h  int
		sigma float64
	}{
		{5, 3, 1.5}, {1, 40, 1.5}, {37, 1, 1.5}, {64, jetBandRows, 1.5},
		{33, jetBandRows + 1, 1.5}, {50, 2*jetBandRows + 7, 3}, {21, 300, 0.7},
	} {
		f := blobImage(uint64(c.w*1000+c.h), c.w, c.h, 0.05)[0]
		want := jetPlanes(f, c.w, c.h, c.sigma)
		var first [5][]float64
		for _, workers := range []int{1, 3} {
			var got [5][]float64
			for k := range got {
				got[k] = make([]float64, c.w*c.h)
			}
			gaussianJet(f, c.w, c.h, c.sigma, workers, func(y int, ix, iy, ixx, iyy, ixy []float64) {
				for k, row := range [5][]float64{ix, iy, ixx, iyy, ixy} {
					copy(got[k][y*c.w:(y+1)*c.w], row)
				}
			})
			var top float64 // largest derivative magnitude of any plane
			for k := range want {
				for _, v := range want[k] {
					top = max(top, math.Abs(v))
				}
			}
			for k := range got {
				for i := range got[k] {
					if math.Abs(got[k][i]-want[k][i]) > 1e-6*top {
						t.Fatalf("%dx%d σ %v, %d workers: derivative %d at pixel %d: %v, direct filter %v", c.w, c.h, c.sigma, workers, k, i, got[k][i], want[k][i])
					}
					if first[k] != nil && got[k][i] != first[k][i] {
						t.Fatalf("%dx%d σ %v: derivative %d at pixel %d: %v with %d workers, %v with 1", c.w, c.h, c.sigma, k, i, got[k][i], workers, first[k][i])
					}
				}
			}
			first = got
		}
	}
}

// TestRoundIndexMatchesRound checks roundIndex against
// int(math.Round(v)) on halves and their neighbours up to 5000, random
// values, negative values and values beyond 2^53.
func TestRoundIndexMatchesRound(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 27))
	var vs []float64
	for q := -20; q <= 10000; q++ {
		v := float64(q) / 2
		vs = append(vs, v, math.Nextafter(v, -1e9), math.Nextafter(v, 1e9))
	}
	for range 100000 {
		vs = append(vs, rng.Float64()*4096)
	}
	vs = append(vs, 1<<53, 1<<53+2, 1e17, -1e17, math.Copysign(0, -1))
	for _, v := range vs {
		if got, want := roundIndex(v), int(math.Round(v)); got != want {
			t.Fatalf("roundIndex(%v) = %d, math.Round gives %d", v, got, want)
		}
	}
}

// TestInterveningContourOnce checks the intervening contour computed once
// for the superpixel path: InterveningContour gives the same values on
// 1, 2 and 7 workers, with both copies of every edge equal and each the
// largest energy on the centroids' segment (segmentMax); SigmaContourOf
// leaves its input as it is and gives AutoSigmaContour's width; and
// RegionGraph with the values handed in (RegionParams.ContourIC) gives
// the weights it computes without them, bit for bit. On SLIC superpixels
// of a noisy image of discs (more than one parallel block of rows).
func TestInterveningContourOnce(t *testing.T) {
	const w, h = 256, 192
	rng := rand.New(rand.NewPCG(15032, 1))
	f := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.2 + 0.05*rng.NormFloat64()
			if dx, dy := x%40-20, y%40-20; dx*dx+dy*dy < 150 {
				v += 0.5
			}
			f[y*w+x] = float32(v)
		}
	}
	sp, n, err := SLIC([][]float32{f}, w, h, SLICParams{Count: 1500, Compactness: 20}, 2)
	if err != nil {
		t.Fatal(err)
	}
	r := Summarize([][]float32{f}, sp, n)
	adj := Adjacency(sp, n, 2)
	if adj.N <= contourRows {
		t.Fatalf("%d regions: the test needs more than one block of %d", adj.N, contourRows)
	}
	e := EdgeEnergy(f, w, h, ContourScale, 2)
	ic := InterveningContour(e, w, h, r, adj, 1)
	for _, workers := range []int{2, 7} {
		if got := InterveningContour(e, w, h, r, adj, workers); !slices.Equal(got, ic) {
			t.Errorf("%d workers: values differ from one worker's", workers)
		}
	}
	for i := 0; i < adj.N; i++ {
		for q := adj.RowPtr[i]; q < adj.RowPtr[i+1]; q++ {
			a, b := i, int(adj.Col[q])
			if b < a {
				a, b = b, a // the upper copy's segment, from the lower index
			}
			if want := segmentMax(e, w, h, r.CX[a], r.CY[a], r.CX[b], r.CY[b]); ic[q] != want {
				t.Fatalf("edge %d-%d: %v, segment maximum %v", i, adj.Col[q], ic[q], want)
			}
		}
	}
	kept := slices.Clone(ic)
	sc := SigmaContourOf(ic)
	if !slices.Equal(ic, kept) {
		t.Error("SigmaContourOf changed its input")
	}
	if want := AutoSigmaContour(e, w, h, r, adj); sc != want {
		t.Errorf("SigmaContourOf %v, AutoSigmaContour %v", sc, want)
	}
	p := RegionParams{SigmaI: 0.2, SigmaX: 20, Contour: e, SigmaC: sc}
	plain, err := RegionGraph(r, adj, w, h, p)
	if err != nil {
		t.Fatal(err)
	}
	p.ContourIC = ic
	handed, err := RegionGraph(r, adj, w, h, p)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(plain.RowPtr, handed.RowPtr) || !slices.Equal(plain.Col, handed.Col) || !slices.Equal(plain.Weight, handed.Weight) {
		t.Error("RegionGraph with ContourIC differs from RegionGraph computing it")
	}
}
