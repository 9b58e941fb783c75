package affinity

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// ContourScale is the scale σ (pixels) of the derivative-of-Gaussian
// filters behind EdgeEnergy: thin boundaries of 1 to 3 pixels between
// packed objects and blurred steps at object borders respond at this
// scale (a matched-filter choice for lines of width about 2σ/√3 ... 2σ;
// Lindeberg 1998 gives the width-scale relation for ridges).
const ContourScale = 1.5

// EdgeEnergy returns the oriented edge energy of a plane at scale σ:
//
//	E = sqrt( (σ‖∇G_σ * I‖)² + (σ² λ)² ),
//
// where λ is the eigenvalue of larger magnitude of the Hessian of G_σ * I.
// The first term is the response of the odd-symmetric (first-derivative)
// filter at its best orientation, the second that of the even-symmetric
// (second-derivative) filter across a line, both steered in closed form
// (Freeman and Adelson 1991, The design and use of steerable filters,
// IEEE TPAMI 13(9)); their quadrature-like combination responds to step
// edges and to thin lines alike, the oriented energy of Malik, Belongie,
// Leung and Shi (2001, Contour and texture analysis for image
// segmentation, IJCV 43(1)) with the even filter's Hilbert partner
// replaced by the first derivative. The σ and σ² factors are Lindeberg's
// scale normalization, which makes E comparable to intensity steps.
// Borders replicate the edge pixels. Rows are processed in fixed chunks,
// so the result does not depend on workers. Where useAVX2 is set the
// rows of E are computed by edgeRowAVX2, the same operations in the same
// order.
func EdgeEnergy(plane []float32, w, h int, sigma float64, workers int) []float32 {
	e := make([]float32, w*h)
	s2 := sigma * sigma
	gaussianJet(plane, w, h, sigma, workers, func(y int, ix, iy, ixx, iyy, ixy []float64) {
		out := e[y*w : (y+1)*w]
		if useAVX2 && w >= 4 {
			edgeRowAVX2(&ix[0], &iy[0], &ixx[0], &iyy[0], &ixy[0], &out[0], s2, sigma*sigma, w)
			return
		}
		for x := range out {
			// Eigenvalue of larger magnitude of [[ixx ixy] [ixy iyy]]:
			// m ± q with q >= 0, so |λ| = |m| + q. The values are far
			// from overflow, so the roots need no scaling (math.Hypot).
			m, d := (ixx[x]+iyy[x])/2, (ixx[x]-iyy[x])/2
			q := math.Sqrt(d*d + ixy[x]*ixy[x])
			lam := s2 * (math.Abs(m) + q)
			grad2 := ix[x]*ix[x] + iy[x]*iy[x]
			out[x] = float32(math.Sqrt(sigma*sigma*grad2 + lam*lam))
		}
	})
	return e
}

// RidgeStrengths returns the scale-normalized ridge strengths of a plane
// at scale σ for dark and for bright lines, from one pass: σ² λ₁, large
// and positive across a dark line (the intensity curves upward across
// it), and -σ² λ₂, large and positive across a bright one, λ₁ >= λ₂ the
// eigenvalues of the Hessian of G_σ * I (Lindeberg 1998, ridge detection
// with scale normalization; the bright strength is the dark strength of
// the negated plane, whose Hessian -H has larger eigenvalue -λ₂). Rows
// are processed in fixed chunks, so the result does not depend on
// workers.
func RidgeStrengths(plane []float32, w, h int, sigma float64, workers int) (dark, bright []float32) {
	dark, bright = make([]float32, w*h), make([]float32, w*h)
	s2 := sigma * sigma
	gaussianJet(plane, w, h, sigma, workers, func(y int, _, _, ixx, iyy, ixy []float64) {
		for x := y * w; x < (y+1)*w; x++ {
			j := x - y*w
			m, d := (ixx[j]+iyy[j])/2, (ixx[j]-iyy[j])/2
			q := math.Sqrt(d*d + ixy[j]*ixy[j])
			dark[x] = float32(s2 * (m + q))
			bright[x] = float32(-s2 * (m - q))
		}
	})
	return dark, bright
}

// jetKernels returns the radius r = ceil(4σ) and the sampled kernels of
// gaussianJet, each of 2r+1 taps from -r to r: the Gaussian g0 normalized
// to sum 1, its first derivative g1 scaled to give slope 1 on a ramp,
// and its second derivative g2 shifted to sum 0 (a flat image has no
// curvature).
func jetKernels(sigma float64) (r int, g0, g1, g2 []float64) {
	r = int(math.Ceil(4 * sigma))
	g0, g1, g2 = make([]float64, 2*r+1), make([]float64, 2*r+1), make([]float64, 2*r+1)
	var sum float64
	for k := -r; k <= r; k++ {
		x := float64(k)
		v := math.Exp(-x * x / (2 * sigma * sigma))
		g0[k+r] = v
		sum += v
	}
	s2 := sigma * sigma
	for k := -r; k <= r; k++ {
		x := float64(k)
		g0[k+r] /= sum
		g1[k+r] = -x / s2 * g0[k+r]           // d/dx G
		g2[k+r] = (x*x/s2 - 1) / s2 * g0[k+r] // d²/dx² G
	}
	// Make the sampled second derivative sum to zero (a flat image has no
	// curvature) and the first derivative give slope 1 on a ramp.
	var m2, m1 float64
	for k := -r; k <= r; k++ {
		m2 += g2[k+r]
		m1 += -float64(k) * g1[k+r]
	}
	for k := range g2 {
		g2[k] -= m2 * g0[k]
		g1[k] /= m1
	}
	return r, g0, g1, g2
}

// gaussianJet calls fn for every image row y with the first and second
// derivatives of G_σ * I along it (ix[x], iy[x], ixx[x], iyy[x], ixy[x]
// at pixel (x, y); separable sampled Gaussian derivatives, edge pixels
// replicated). The row slices are reused after fn returns. fn is called
// from several goroutines, each row once.
//
// The separable filter is streamed (the usual line-buffer scheme of
// separable convolution): each band of jetBandRows rows keeps only the
// 2r+1 horizontally filtered rows the vertical taps of one output row
// need, in a ring, so the work memory is O(workers·r·w) instead of three
// image-sized planes, and a band recomputes the 2r horizontal rows it
// shares with its neighbours. The taps at ±k of the even kernels g0, g2
// and of the odd g1 are folded into one product per pair of pixels,
// g(k)·(I(+k) ± I(-k)) (common practice for symmetric FIR filters),
// which halves the products; the sums then differ from the unfolded
// ones in rounding only. Where useAVX2 is set the interior of each
// horizontal pass (at least four pixels) and each vertical pass (rows of
// at least four pixels) go to jetHAVX2 and jetVAVX2, four pixels at a
// time with the same operations in the same order.
func gaussianJet(plane []float32, w, h int, sigma float64, workers int, fn func(y int, ix, iy, ixx, iyy, ixy []float64)) {
	r, g0, g1, g2 := jetKernels(sigma)
	// horizontal filters image row y with g0, g1 and g2 into out. g0 and
	// g2 are even and g1 is odd, so the taps at ±k are folded: one
	// product per pair of pixels, g(k)·(I(x+k) ± I(x-k)).
	lo, hi := min(r, w), max(w-r, min(r, w))
	edges := edgeColumns(lo, hi, w) // edge-replicated taps there
	// coef holds g0, g1, g2 at offset k = 0..r, the kernels' layout.
	coef := make([]float64, 0, 3*(r+1))
	for k := 0; k <= r; k++ {
		coef = append(coef, g0[r+k], g1[r+k], g2[r+k])
	}
	horizontal := func(y int, out *[3][]float32) {
		line := plane[y*w : (y+1)*w]
		o0, o1, o2 := out[0][:w], out[1][:w], out[2][:w]
		for _, x := range edges {
			o0[x] = float32(clampedTaps(g0, line, x, r))
			o1[x] = float32(clampedTaps(g1, line, x, r))
			o2[x] = float32(clampedTaps(g2, line, x, r))
		}
		if useAVX2 && r >= 1 && hi-lo >= 4 {
			jetHAVX2(&line[lo], &coef[0], r, &o0[lo], &o1[lo], &o2[lo], hi-lo)
			return
		}
		for x := lo; x < hi; x++ {
			c := float64(line[x])
			t0, t1, t2 := g0[r]*c, 0.0, g2[r]*c
			left, right := line[x-r:x], line[x+1:x+r+1]
			for k := 1; k <= r; k++ {
				a, b := float64(right[k-1]), float64(left[r-k])
				p, m := a+b, a-b
				t0 += g0[r+k] * p
				t1 += g1[r+k] * m
				t2 += g2[r+k] * p
			}
			o0[x], o1[x], o2[x] = float32(t0), float32(t1), float32(t2)
		}
	}
	workers = parallel.Workers(workers)
	ring := 2*r + 1
	type buffers struct {
		rows [][3][]float32 // ring of horizontally filtered rows; row y in slot y mod ring
		acc  [5][]float64
		tbl  []*float32 // the rows above and below of jetVAVX2
	}
	nb := (h + jetBandRows - 1) / jetBandRows
	pool := make(chan *buffers, max(1, min(workers, nb)))
	for range cap(pool) {
		b := &buffers{rows: make([][3][]float32, ring)}
		for i := range b.rows {
			for f := range b.rows[i] {
				b.rows[i][f] = make([]float32, w)
			}
		}
		for f := range b.acc {
			b.acc[f] = make([]float64, w)
		}
		b.tbl = make([]*float32, 6*r)
		pool <- b
	}
	parallel.For(nb, workers, func(c int) {
		buf := <-pool
		defer func() { pool <- buf }()
		y0, y1 := c*jetBandRows, min(h, (c+1)*jetBandRows)
		// Rows max(0, y0-r) .. min(h-1, y0+r-1) first, then one more
		// per output row.
		for yy := max(0, y0-r); yy < min(h, y0+r); yy++ {
			horizontal(yy, &buf.rows[yy%ring])
		}
		ix, iy, ixx, iyy, ixy := buf.acc[0], buf.acc[1], buf.acc[2], buf.acc[3], buf.acc[4]
		for y := y0; y < y1; y++ {
			if y+r < h {
				horizontal(y+r, &buf.rows[(y+r)%ring])
			}
			if useAVX2 && r >= 1 && w >= 4 {
				for k := 1; k <= r; k++ {
					up, dn := &buf.rows[max(y-k, 0)%ring], &buf.rows[min(y+k, h-1)%ring]
					t := buf.tbl[6*(k-1) : 6*k]
					t[0], t[1], t[2] = &up[0][0], &up[1][0], &up[2][0]
					t[3], t[4], t[5] = &dn[0][0], &dn[1][0], &dn[2][0]
				}
				src := &buf.rows[y%ring]
				jetVAVX2(&src[0][0], &src[1][0], &src[2][0], &buf.tbl[0], &coef[0], r, &ix[0], &iy[0], &ixx[0], &iyy[0], &ixy[0], w)
				fn(y, ix, iy, ixx, iyy, ixy)
				continue
			}
			// Centre row, then the rows at ±k folded as in horizontal.
			{
				src := &buf.rows[y%ring]
				a, b, d := src[0][:w], src[1][:w], src[2][:w]
				c0, c2 := g0[r], g2[r]
				for x := range ix {
					ix[x] = c0 * float64(b[x])
					iy[x] = 0
					ixx[x] = c0 * float64(d[x])
					iyy[x] = c2 * float64(a[x])
					ixy[x] = 0
				}
			}
			for k := 1; k <= r; k++ {
				up, dn := &buf.rows[max(y-k, 0)%ring], &buf.rows[min(y+k, h-1)%ring]
				au, bu, du := up[0][:w], up[1][:w], up[2][:w]
				ad, bd, dd := dn[0][:w], dn[1][:w], dn[2][:w]
				c0, c1, c2 := g0[r+k], g1[r+k], g2[r+k]
				for x := range ix {
					a1, a2 := float64(ad[x]), float64(au[x])
					b1, b2 := float64(bd[x]), float64(bu[x])
					ap := a1 + a2
					bp := b1 + b2
					ix[x] += c0 * bp
					iy[x] += c1 * (a1 - a2)
					ixx[x] += c0 * (float64(dd[x]) + float64(du[x]))
					iyy[x] += c2 * ap
					ixy[x] += c1 * (b1 - b2)
				}
			}
			fn(y, ix, iy, ixx, iyy, ixy)
		}
	})
}

// jetBandRows is the number of image rows in one work chunk of
// gaussianJet: each chunk refilters 2r rows of its neighbours (9% more
// horizontal work at r = 6), and a 4096-row image gives 32 chunks.
const jetBandRows = 128

// edgeColumns lists the columns 0..lo-1 and hi..w-1, which need the
// edge-replicated taps.
func edgeColumns(lo, hi, w int) []int {
	c := make([]int, 0, lo+w-hi)
	for x := 0; x < lo; x++ {
		c = append(c, x)
	}
	for x := hi; x < w; x++ {
		c = append(c, x)
	}
	return c
}

// clampedTaps is Σ_k kern[k+r]·line[clamp(x+k)], k = -r..r, the image
// edge replicated.
func clampedTaps(kern []float64, line []float32, x, r int) float64 {
	w := len(line)
	var s float64
	for k := -r; k <= r; k++ {
		xx := min(max(x+k, 0), w-1)
		s += kern[k+r] * float64(line[xx])
	}
	return s
}

// InterveningContour returns, for every entry of adj (a region
// adjacency graph in CSR order), the largest edge energy on the straight
// segment between the two regions' centroids, sampled every half pixel:
// the intervening-contour cue of Leung and Malik (1998, Contour
// continuity in region based image segmentation, ECCV) on region
// centroids. Both copies of an edge hold the same value. The rows are
// shared among workers goroutines (below 1: GOMAXPROCS); every value is
// computed alone, so the result is the same for any worker count. The
// superpixel path computes it once for AutoSigmaContour's width and
// RegionGraph's weights (RegionParams.ContourIC).
func InterveningContour(energy []float32, w, h int, r *Regions, adj *Graph, workers int) []float32 {
	ic := make([]float32, len(adj.Col))
	parallel.Blocks(adj.N, contourRows, workers, func(_, lo, hi int) {
		for i := lo; i < hi; i++ {
			for q := adj.RowPtr[i]; q < adj.RowPtr[i+1]; q++ {
				if j := int(adj.Col[q]); j >= i {
					ic[q] = segmentMax(energy, w, h, r.CX[i], r.CY[i], r.CX[j], r.CY[j])
				}
			}
		}
	})
	// Mirror to the lower-triangle copies (rows are sorted), once every
	// upper one is set.
	parallel.Blocks(adj.N, contourRows, workers, func(_, lo, hi int) {
		for i := lo; i < hi; i++ {
			for q := adj.RowPtr[i]; q < adj.RowPtr[i+1]; q++ {
				if j := int(adj.Col[q]); j < i {
					row := adj.Col[adj.RowPtr[j]:adj.RowPtr[j+1]]
					k, _ := slices.BinarySearch(row, int32(i))
					ic[q] = ic[adj.RowPtr[j]+k]
				}
			}
		}
	})
	return ic
}

// contourRows is the number of adjacency rows (regions) in one parallel
// block of InterveningContour: a few thousand segments.
const contourRows = 512

// segmentMax is the largest energy on the segment from (ax, ay) to
// (bx, by), sampled every half pixel at the nearest pixel (clamped to
// the image).
func segmentMax(energy []float32, w, h int, ax, ay, bx, by float64) float32 {
	steps := int(math.Ceil(2*math.Hypot(bx-ax, by-ay))) + 1
	var m float32
	for s := 0; s <= steps; s++ {
		t := float64(s) / float64(steps)
		x := min(max(roundIndex(ax+t*(bx-ax)), 0), w-1)
		y := min(max(roundIndex(ay+t*(by-ay)), 0), h-1)
		m = max(m, energy[y*w+x])
	}
	return m
}

// roundIndex is int(math.Round(v)) (half away from zero) without its
// call for 0 <= v < 2^53: int(v) truncates, and v - trunc(v) is exact
// there; other values go to math.Round.
func roundIndex(v float64) int {
	if !(v >= 0 && v < 1<<53) {
		return int(math.Round(v))
	}
	t := int(v)
	if v-float64(t) >= 0.5 {
		t++
	}
	return t
}

// AutoSigmaContour sets the width σ_C of the intervening-contour factor
// from the image: twice the median intervening contour over adjacent
// regions. Most adjacent superpixels lie inside one object or in the
// background, so the median measures the energy that noise and texture
// leave between alike regions (local scaling after Zelnik-Manor and
// Perona 2004, as for σ_I); a pair across a boundary of several times
// that energy is then cut apart (factor exp(-4) at twice σ_C). It returns
// a positive value (at least 1e-3) for any input.
func AutoSigmaContour(energy []float32, w, h int, r *Regions, adj *Graph) float64 {
	return SigmaContourOf(InterveningContour(energy, w, h, r, adj, 1))
}

// SigmaContourOf is AutoSigmaContour from the intervening contour ic of
// the adjacency's entries (InterveningContour), which it leaves as it is.
func SigmaContourOf(ic []float32) float64 {
	if len(ic) == 0 {
		return minSigmaI
	}
	return max(2*float64(lowerMedian(slices.Clone(ic))), minSigmaI)
}
