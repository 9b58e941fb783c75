package affinity

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"github.com/cleave-seg/cleave/imageio/noise"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// ScaleEstimate is the answer of ObjectScale.
type ScaleEstimate struct {
	// Radius is the typical object radius in pixels, √2·Sigma; 0 when
	// Found is false.
	Radius float64
	// Sigma is the Gaussian scale (pixels) at which the typical object's
	// scale-normalized Laplacian peaks; 0 when Found is false.
	Sigma float64
	// Strength is the median, over the kept blobs, of the peak normalized
	// response divided by the standard deviation that pixel noise alone
	// gives at the same scale (a signal-to-noise ratio). 0 when no blob
	// stands out.
	Strength float64
	// Blobs is the number of scale-space extrema that entered the median.
	Blobs int
	// Noise is the estimated standard deviation of the pixel noise
	// (floored at 1e-3 of the intensity range), in intensity units.
	Noise float64
	// Found reports a confident scale: at least one blob kept and
	// Strength >= ScaleMinStrength.
	Found bool
}

// Thresholds of ObjectScale, in units of the noise standard deviation of
// the normalized response at the blob's own scale.
const (
	// scaleMinZ is the least signal-to-noise ratio of a scale-space extremum
	// taken as a blob candidate.
	scaleMinZ = 5
	// ScaleMinStrength is the least Strength for which ObjectScale reports
	// Found. The largest extrema of pure Gaussian noise on a 2048x2048
	// frame stay near 5-6 (the tail of the normal law over a few million
	// samples); 10 leaves a margin.
	ScaleMinStrength = 10
	// scaleRelKeep keeps candidates whose response is at least this
	// fraction of the strongest candidate's (like the relative threshold
	// of common blob detectors).
	scaleRelKeep = 0.2
)

// ObjectScale estimates the typical radius, in pixels, of the blob-like
// objects of a luminance plane lum (w*h values, row-major), bright on dark
// or dark on bright, by automatic scale selection with the
// scale-normalized Laplacian of Gaussian (Lindeberg 1998, "Feature
// detection with automatic scale selection", IJCV 30(2)):
//
//	R(x, y, σ) = σ² ∇²(G_σ * lum)(x, y)
//
// is computed for σ on the geometric ladder σ_k = 2^(k/4) pixels, k = 0, 1,
// ..., up to min(w, h)/8. Blobs are the points where |R| is larger than its
// 26 neighbours in space and scale (both signs, so bright and dark objects
// count). For a disc of radius r and contrast c,
// R(centre, σ) = -2c·u·e^(-u) with u = r²/(2σ²), which peaks at σ = r/√2
// with |R| = 2c/e (Lindeberg's closed form), hence Radius = √2·σ.
//
// Each blob's scale is refined by a parabola through the three |R| values
// around its extremum in log σ. Extrema whose Hessian is edge-like (ratio
// of principal curvatures above 10, Lowe 2004) are not blobs. A blob is a
// candidate when its response is at least 5 times the standard deviation that white pixel noise of
// standard deviation s produces in R at that scale, s/(σ√(2π)) (the
// integral of (σ²∇²G_σ)² over the plane is 1/(2πσ²)); s is the noise of
// the blob's cell of 32 x 32 pixels, estimated from the median absolute
// difference of adjacent pixels there, s = 1.4826·median/√2 (common
// practice; noise.Local). Photon noise grows with the signal: under a
// bright glow one image-wide s made noise there look like a field of small
// blobs, whose median Strength hid dim nuclei in the dark beside it.
// Strength is the median signal-to-noise ratio of the kept blobs, in
// units of the image-wide noise (noise.Pixel); Found is false (Radius 0)
// when nothing stands out: a flat image, pure noise, or an image smaller
// than 12 pixels on a side.
//
// Blob extrema nested inside a blob of at least twice their scale whose
// response is at least half theirs are dropped (texture inside an object,
// noise on its rim), so the estimate is the outermost scale of each
// object. Candidates weaker than 0.2 times the strongest are dropped, and
// σ is the |R|-weighted mean of log σ over the central half of the weight
// (for two equally strong populations of radii r₁ and r₂ this gives about
// √(r₁r₂)).
//
// Densely packed objects (grains touching along thin dark boundaries)
// have no background around them: a grain's own response comes only from
// its thin outline and is weak, while the junctions of the boundaries are
// strong small dark blobs. On such scenes the estimate follows the
// boundaries, not the grains: the radius comes out near 2 pixels with a
// Strength near the threshold (measured in the package tests). Callers
// that expect large objects should treat a radius of a few pixels with
// Strength below about 20 as "no object scale".
//
// Speed: the blurs are separable sampled Gaussians applied incrementally
// (each σ_k from σ_(k-1)), and the image is halved each time σ reaches 2
// pixels of the current level (so σ stays between 1 and 2.4 level pixels;
// the Laplacian is a fourth-order difference, accurate there), so the
// cost is a few passes over the full frame. Work is split over fixed bands of rows on at most
// workers goroutines (workers < 1: GOMAXPROCS); every value is computed the
// same way for any split, so the result is identical for any worker count.
//
// Non-finite values are replaced by the mean of the finite ones. It panics
// if len(lum) != w*h (programmer error).
func ObjectScale(lum []float32, w, h int, workers int) ScaleEstimate {
	if w < 0 || h < 0 || len(lum) != w*h {
		panic(fmt.Sprintf("affinity: ObjectScale on %d values for %dx%d", len(lum), w, h))
	}
	var none ScaleEstimate
	kMax := int(math.Floor(4 * math.Log2(float64(min(w, h))/8)))
	if kMax < 2 {
		return none
	}
	img, lo, hi := finiteCopy(lum, workers)
	if !(hi > lo) {
		return none
	}
	sd := max(noise.Pixel(img, w, h), 1e-3*(hi-lo))
	none.Noise = sd
	// Blobs are judged against the noise around them (photon noise
	// changes across a field under uneven light; noise.Local).
	local := noise.Local(img, w, h, 1e-3*(hi-lo), workers)

	// Level L holds the image blurred to σ_(4L) and subsampled by 2^L; it
	// computes σ_k for k = 4L..4L+5 and looks for extrema at 4L+1..4L+4
	// (level 0 starts from the raw image). The blur at σ_(4L+4), 2 level
	// pixels, subsampled, is the next level: 1 pixel of blur there.
	n := w * h
	tmp, blur := make([]float32, n), make([]float32, n)
	resp := [3][]float32{make([]float32, n), make([]float32, n), make([]float32, n)}
	nextBuf := make([]float32, ((w+1)/2)*((h+1)/2))
	var cands []blob
	lw, lh := w, h
	for level := 0; ; level++ {
		kFirst, kLast := 4*level, min(4*level+5, kMax)
		scale := math.Ldexp(1, -level) // level pixels per image pixel
		ln := lw * lh
		bl := blur[:ln]
		if level > 0 {
			copy(bl, nextBuf[:ln])
		}
		more := false
		var rsig [3]float64 // σ of resp[0..2], image pixels
		for k := kFirst; k <= kLast; k++ {
			sk := sigmaOf(k) * scale // σ_k in level pixels
			switch {
			case level == 0 && k == 0:
				gaussBlur(img, bl, tmp[:ln], lw, lh, sk, workers)
			case k > kFirst:
				prev := sigmaOf(k-1) * scale
				gaussBlur(bl, bl, tmp[:ln], lw, lh, math.Sqrt(sk*sk-prev*prev), workers)
			}
			resp[0], resp[1], resp[2] = resp[1], resp[2], resp[0]
			rsig[0], rsig[1], rsig[2] = rsig[1], rsig[2], sigmaOf(k)
			normLaplacian(bl, resp[2][:ln], lw, lh, sk*sk, workers)
			if k == 4*level+4 && kMax-1 >= 4*(level+1)+1 {
				halve(bl, lw, lh, nextBuf)
				more = true
			}
			if d := k - 1; d >= max(1, kFirst+1) && d <= min(4*level+4, kMax-1) {
				r3 := [3][]float32{resp[0][:ln], resp[1][:ln], resp[2][:ln]}
				cands = append(cands, scaleExtrema(r3, bl, rsig, d, lw, lh, level, local, sd, workers)...)
			}
		}
		if !more {
			break
		}
		lw, lh = (lw+1)/2, (lh+1)/2
	}
	return summarizeBlobs(cands, sd)
}

// blob is one scale-space extremum of |R|.
type blob struct {
	sigma float64 // refined scale, image pixels
	resp  float64 // refined |R|
	z     float64 // resp over the noise standard deviation at sigma
	x, y  float64 // position, image pixels
	dark  bool    // R > 0: a dark object on a brighter surround
}

// sigmaOf is the ladder σ_k = 2^(k/4), image pixels.
func sigmaOf(k int) float64 { return math.Exp2(float64(k) / 4) }

// noiseResp is the standard deviation of σ²∇²(G_σ * n) for white noise n
// of standard deviation s per pixel: s/(σ√(2π)).
func noiseResp(s, sigma float64) float64 { return s / (sigma * math.Sqrt(2*math.Pi)) }

// summarizeBlobs applies the relative threshold and takes the weighted
// median scale.
func summarizeBlobs(cands []blob, noise float64) ScaleEstimate {
	est := ScaleEstimate{Noise: noise}
	if len(cands) == 0 {
		return est
	}
	var top float64
	for _, b := range cands {
		top = max(top, b.resp)
	}
	kept := cands[:0]
	for _, b := range cands {
		if b.resp >= scaleRelKeep*top {
			kept = append(kept, b)
		}
	}
	kept = suppressInside(kept)
	slices.SortFunc(kept, func(a, b blob) int {
		if c := cmp.Compare(a.sigma, b.sigma); c != 0 {
			return c
		}
		return cmp.Compare(a.resp, b.resp)
	})
	sigma := trimmedLogMean(kept)
	zs := make([]float64, len(kept))
	for i, b := range kept {
		zs[i] = b.z
	}
	slices.Sort(zs)
	n := len(zs)
	est.Strength = zs[n/2]
	if n%2 == 0 {
		est.Strength = (zs[n/2-1] + zs[n/2]) / 2
	}
	est.Blobs = n
	if est.Strength >= ScaleMinStrength {
		est.Found = true
		est.Sigma = sigma
		est.Radius = math.Sqrt2 * sigma
	}
	return est
}

// scaleNestRatio: a blob hides a smaller one inside it when its response
// is at least this fraction of the smaller one's.
const scaleNestRatio = 0.5

// suppressInside drops every blob whose centre lies within the disc of a
// blob of at least twice its scale, |p - q| <= √2(σ_big + σ_small), whose
// response is at least half its own. What remains of a large object's rim
// (where an edge plus noise can make small extrema), its inner texture,
// and the junctions of the thin boundaries around packed grains then no
// longer count as objects of their own; blobs of similar size, even
// touching ones, all stay. The blobs are visited from the largest scale
// down (an object is the outermost blob); the accepted ones are listed in
// the cells of a uniform grid that their discs cover.
func suppressInside(bs []blob) []blob {
	slices.SortFunc(bs, func(a, b blob) int {
		if c := cmp.Compare(b.sigma, a.sigma); c != 0 {
			return c
		}
		if c := cmp.Compare(b.resp, a.resp); c != 0 {
			return c
		}
		if c := cmp.Compare(a.y, b.y); c != 0 {
			return c
		}
		return cmp.Compare(a.x, b.x)
	})
	const cell = 32.0
	grid := map[[2]int][]int32{}
	var out []blob
	for _, b := range bs {
		key := [2]int{int(math.Floor(b.x / cell)), int(math.Floor(b.y / cell))}
		inside := false
		for _, j := range grid[key] {
			a := out[j]
			if a.sigma < 2*b.sigma || a.resp < scaleNestRatio*b.resp {
				continue
			}
			if math.Hypot(a.x-b.x, a.y-b.y) <= math.Sqrt2*(a.sigma+b.sigma) {
				inside = true
				break
			}
		}
		if inside {
			continue
		}
		out = append(out, b)
		// list b in every cell its own suppression disc for blobs of up to
		// half its scale can reach: radius √2·1.5σ.
		rad := math.Sqrt2 * 1.5 * b.sigma
		x0, x1 := int(math.Floor((b.x-rad)/cell)), int(math.Floor((b.x+rad)/cell))
		y0, y1 := int(math.Floor((b.y-rad)/cell)), int(math.Floor((b.y+rad)/cell))
		for cy := y0; cy <= y1; cy++ {
			for cx := x0; cx <= x1; cx++ {
				k := [2]int{cx, cy}
				grid[k] = append(grid[k], int32(len(out)-1))
			}
		}
	}
	return out
}

// trimmedLogMean is the mean of log σ weighted by |R| over the central
// half of the weight (the interquartile mean, a robust middle that, unlike
// the plain median, lands between two equally strong populations).
func trimmedLogMean(bs []blob) float64 {
	slices.SortFunc(bs, func(a, b blob) int {
		if c := cmp.Compare(a.sigma, b.sigma); c != 0 {
			return c
		}
		return cmp.Compare(a.resp, b.resp)
	})
	var total float64
	for _, b := range bs {
		total += b.resp
	}
	lo, hi := total/4, 3*total/4
	var acc, sw, sl float64
	for _, b := range bs {
		// the part of this blob's weight that falls inside [lo, hi]
		in := min(acc+b.resp, hi) - max(acc, lo)
		if in > 0 {
			sw += in
			sl += in * math.Log(b.sigma)
		}
		acc += b.resp
	}
	if sw <= 0 {
		return bs[len(bs)/2].sigma
	}
	return math.Exp(sl / sw)
}

// finiteCopy returns v, or when it holds non-finite values a copy with
// them replaced by the mean of the finite ones, and the range of the finite
// values. The range and the count of non-finite values are taken in fixed
// blocks on workers goroutines (minima and maxima do not depend on the
// order); the mean, only when needed, in one pass in index order.
func finiteCopy(v []float32, workers int) (out []float32, lo, hi float64) {
	const block = 1 << 16
	nb := (len(v) + block - 1) / block
	los, his := make([]float64, nb), make([]float64, nb)
	bads := make([]int, nb)
	parallel.Blocks(len(v), block, workers, func(b, a, e int) {
		lo, hi, bad := math.Inf(1), math.Inf(-1), 0
		for _, x := range v[a:e] {
			if f := float64(x); !math.IsNaN(f) && !math.IsInf(f, 0) {
				lo, hi = min(lo, f), max(hi, f)
			} else {
				bad++
			}
		}
		los[b], his[b], bads[b] = lo, hi, bad
	})
	lo, hi = math.Inf(1), math.Inf(-1)
	bad := 0
	for b := range los {
		lo, hi, bad = min(lo, los[b]), max(hi, his[b]), bad+bads[b]
	}
	if bad == 0 {
		return v, lo, hi
	}
	var sum float64
	var n int
	for _, x := range v {
		if f := float64(x); !math.IsNaN(f) && !math.IsInf(f, 0) {
			sum += f
			n++
		}
	}
	out = slices.Clone(v)
	{
		mean := float32(0)
		if n > 0 {
			mean = float32(sum / float64(n))
		}
		for i, x := range out {
			if f := float64(x); math.IsNaN(f) || math.IsInf(f, 0) {
				out[i] = mean
			}
		}
	}
	return out, lo, hi
}

// mirror maps i into [0, n) by reflection about the edges (d c b a | a b c
// d), the "reflect" boundary of scipy.ndimage.
func mirror(i, n int) int {
	for i < 0 || i >= n {
		if i < 0 {
			i = -i - 1
		}
		if i >= n {
			i = 2*n - i - 1
		}
	}
	return i
}

// gaussKernel returns the half of a sampled Gaussian of standard deviation
// s (weights for offsets 0..r, r = ceil(3s)), normalized so the full
// kernel sums to 1.
func gaussKernel(s float64) []float32 {
	r := max(1, int(math.Ceil(3*s)))
	k := make([]float64, r+1)
	sum := 0.0
	for i := range k {
		k[i] = math.Exp(-float64(i*i) / (2 * s * s))
		if i == 0 {
			sum += k[i]
		} else {
			sum += 2 * k[i]
		}
	}
	out := make([]float32, r+1)
	for i := range k {
		out[i] = float32(k[i] / sum)
	}
	return out
}

// bandRows is the number of image rows in one work chunk of the band
// loops (parallel.Blocks) of scale.go and grain.go; fixed, so the bands
// depend on the image height only.
const bandRows = 32

// gaussBlur writes to dst the plane v blurred by a separable sampled
// Gaussian of standard deviation s pixels, edges reflected. dst may be v;
// tmp is scratch of the same size.
func gaussBlur(v, dst, tmp []float32, w, h int, s float64, workers int) {
	k := gaussKernel(s)
	r := len(k) - 1
	parallel.Blocks(h, bandRows, workers, func(_, y0, y1 int) {
		pad := make([]float32, w+2*r)
		src := make([][]float32, 2*r+1)
		for y := y0; y < y1; y++ {
			row := v[y*w : (y+1)*w]
			for j := 0; j < r; j++ {
				pad[j] = row[mirror(j-r, w)]
				pad[w+r+j] = row[mirror(w+j, w)]
			}
			copy(pad[r:], row)
			for j := range src {
				src[j] = pad[j : j+w]
			}
			symTaps(tmp[y*w:(y+1)*w], src, k)
		}
	})
	parallel.Blocks(h, bandRows, workers, func(_, y0, y1 int) {
		src := make([][]float32, 2*r+1)
		for y := y0; y < y1; y++ {
			for j := range src {
				yy := mirror(y-r+j, h)
				src[j] = tmp[yy*w : (yy+1)*w]
			}
			symTaps(dst[y*w:(y+1)*w], src, k)
		}
	})
}

// GaussianSmooth returns the plane v (w*h values, row-major) smoothed by
// a separable sampled Gaussian of standard deviation s pixels (taps to
// ceil(3s), normalized to sum 1), edges reflected (v[-1-i] = v[i], the
// "reflect" mode of scipy.ndimage), on at most workers goroutines. v is
// not written. It panics if len(v) != w*h (programmer error).
func GaussianSmooth(v []float32, w, h int, s float64, workers int) []float32 {
	if w < 0 || h < 0 || len(v) != w*h {
		panic(fmt.Sprintf("affinity: GaussianSmooth on %d values for %dx%d", len(v), w, h))
	}
	dst := make([]float32, len(v))
	if len(v) == 0 {
		return dst
	}
	gaussBlur(v, dst, make([]float32, len(v)), w, h, s, workers)
	return dst
}

// symTaps writes out[x] = k[0]·src[r][x] + Σ_j k[j]·(src[r-j][x] +
// src[r+j][x]), two taps per sweep so each output is loaded and stored
// fewer times; out must not overlap a row of src. Where useAVX2 is set
// (r >= 1, at least eight outputs) symTapsAVX2 does the same operations
// in the same order, eight outputs at a time in registers.
func symTaps(out []float32, src [][]float32, k []float32) {
	r := len(k) - 1
	n := len(out)
	if useAVX2 && r >= 1 && n >= 8 {
		for _, s := range src {
			_ = s[n-1] // every row holds the n sources the kernel reads
		}
		symTapsAVX2(&out[0], &src[0], &k[0], r, n)
		return
	}
	symTapsGo(out, src, k)
}

// symTapsGo is symTaps in Go.
func symTapsGo(out []float32, src [][]float32, k []float32) {
	r := len(k) - 1
	n := len(out)
	c := src[r][:n]
	j := 1
	if r >= 1 {
		k0, k1 := k[0], k[1]
		a, b := src[r-1][:n], src[r+1][:n]
		for x := range out {
			out[x] = k0*c[x] + k1*(a[x]+b[x])
		}
		j = 2
	} else {
		k0 := k[0]
		for x := range out {
			out[x] = k0 * c[x]
		}
	}
	for ; j+1 <= r; j += 2 {
		ka, kb := k[j], k[j+1]
		a1, b1 := src[r-j][:n], src[r+j][:n]
		a2, b2 := src[r-j-1][:n], src[r+j+1][:n]
		for x := range out {
			out[x] += ka*(a1[x]+b1[x]) + kb*(a2[x]+b2[x])
		}
	}
	if j == r {
		kj := k[j]
		a, b := src[r-j][:n], src[r+j][:n]
		for x := range out {
			out[x] += kj * (a[x] + b[x])
		}
	}
}

// normLaplacian writes t·∇²b to dst, edges reflected, with the
// fourth-order central difference for the second derivative,
// (-f₋₂ + 16f₋₁ - 30f₀ + 16f₁ - f₂)/12,
// along each axis (Fornberg 1988, "Generation of finite difference
// formulas on arbitrarily spaced grids", Math. Comp. 51). Its error at
// the frequencies of a blob of σ ≈ 1.2 pixels is well under 1%, where the
// five-point Laplacian is about 6% low, so the response does not jump
// where the pyramid changes level. t = σ² in level pixels makes the
// response independent of the level (σ²∇² is dimensionless). Where
// useAVX2 is set the rows of eight pixels or more go to normLapAVX2, the
// same operations in the same order.
func normLaplacian(b, dst []float32, w, h int, t float64, workers int) {
	tf := float32(t / 12)
	parallel.Blocks(h, bandRows, workers, func(_, y0, y1 int) {
		pad := make([]float32, w+4)
		for y := y0; y < y1; y++ {
			row := b[y*w : (y+1)*w]
			pad[0], pad[1] = row[mirror(-2, w)], row[mirror(-1, w)]
			pad[w+2], pad[w+3] = row[mirror(w, w)], row[mirror(w+1, w)]
			copy(pad[2:], row)
			ra, rb := mirror(y-2, h), mirror(y-1, h)
			rc, rd := mirror(y+1, h), mirror(y+2, h)
			u2, u1 := b[ra*w:(ra+1)*w], b[rb*w:(rb+1)*w]
			d1, d2 := b[rc*w:(rc+1)*w], b[rd*w:(rd+1)*w]
			out := dst[y*w : (y+1)*w]
			if useAVX2 && w >= 8 {
				normLapAVX2(&out[0], &pad[0], &u2[0], &u1[0], &d1[0], &d2[0], tf, w)
				continue
			}
			normLapRow(out, pad, u2, u1, d1, d2, tf)
		}
	})
}

// normLapRow is one row of normLaplacian in Go: pad is the row with two
// reflected pixels on each side, u2, u1, d1, d2 the rows two and one
// above and one and two below.
func normLapRow(out, pad, u2, u1, d1, d2 []float32, tf float32) {
	n := len(out)
	l2, l1, c, r1, r2 := pad[0:n], pad[1:1+n], pad[2:2+n], pad[3:3+n], pad[4:4+n]
	u2, u1, d1, d2 = u2[:n], u1[:n], d1[:n], d2[:n]
	for x := range out {
		out[x] = tf * (16*(l1[x]+r1[x]+u1[x]+d1[x]) - (l2[x] + r2[x] + u2[x] + d2[x]) - 60*c[x])
	}
}

// halve writes to out every second pixel of every second row of v (the
// plane is already blurred enough that this does not alias).
func halve(v []float32, w, h int, out []float32) {
	nw, nh := (w+1)/2, (h+1)/2
	for y := 0; y < nh; y++ {
		src := v[2*y*w : 2*y*w+w]
		dst := out[y*nw : (y+1)*nw]
		for x := range dst {
			dst[x] = src[2*x]
		}
	}
}

// scaleExtrema finds the pixels of resp[1] (scale index d) where |R| beats
// its 26 neighbours in space and scale and the signal-to-noise ratio is at
// least scaleMinZ against the noise of the pixel's cell in local, away
// from a one-pixel border. A blob's z is its response over the noise sd
// of the whole image (Strength, which the pre-smoothing reads as the
// image's signal-to-noise ratio, keeps its meaning). Ties are broken by raster order
// (strictly larger than earlier neighbours, at least as large as later
// ones). Bands are merged in order.
func scaleExtrema(resp [3][]float32, blur []float32, rsig [3]float64, d, w, h, level int, local *noise.Field, sd float64, workers int) []blob {
	if w < 3 || h < 3 {
		return nil
	}
	// The threshold on |R| for a noise level of 1, times each cell's
	// noise; the cell column of every level column, found once.
	unitThr := scaleMinZ * noiseResp(1, rsig[1])
	nb := (h + bandRows - 1) / bandRows
	out := make([][]blob, nb)
	lo, mid, hi := resp[0], resp[1], resp[2]
	unit := math.Ldexp(1, level) // image pixels per level pixel
	colOf := make([]int32, w)
	for x := range colOf {
		colOf[x] = int32(local.Col(int(float64(x) * unit)))
	}
	parallel.Blocks(h, bandRows, workers, func(c, y0, y1 int) {
		var found []blob
		thr := make([]float32, local.GW)
		for y := max(y0, 1); y < min(y1, h-1); y++ {
			row := mid[y*w : (y+1)*w]
			nrow := local.Row(int(float64(y) * unit))
			for k, s := range nrow {
				thr[k] = float32(unitThr * s)
			}
			for x := 1; x < w-1; x++ {
				v := abs32(row[x])
				if v < thr[colOf[x]] {
					continue
				}
				i := y*w + x
				if !isPeak(v, mid, i, w, true) || !isPeak(v, lo, i, w, false) || !isPeak(v, hi, i, w, false) {
					continue
				}
				if edgeLike(blur, i, w) {
					continue
				}
				a, b, cc := float64(abs32(lo[i])), float64(v), float64(abs32(hi[i]))
				off, val := 0.0, b
				if den := a - 2*b + cc; den < 0 {
					off = math.Max(-0.5, math.Min(0.5, 0.5*(a-cc)/den))
					val = b - 0.25*(a-cc)*off
				}
				s := math.Exp2((float64(d) + off) / 4)
				found = append(found, blob{sigma: s, resp: val, z: val / noiseResp(sd, s), x: float64(x) * unit, y: float64(y) * unit, dark: row[x] > 0})
			}
		}
		out[c] = found
	})
	var all []blob
	for _, f := range out {
		all = append(all, f...)
	}
	return all
}

// scaleEdgeRatio is the largest ratio of the two principal curvatures of
// a blob (Lowe 2004 takes 10).
const scaleEdgeRatio = 10

// edgeLike reports whether the Hessian of the blurred plane b at i has
// principal curvatures of opposite signs or a ratio above scaleEdgeRatio:
// tr²/det >= (ρ+1)²/ρ, the edge test of Lowe (2004), "Distinctive image
// features from scale-invariant keypoints", IJCV 60(2). Points on the rim
// of a large object are extrema of |R| along the rim but not blobs.
func edgeLike(b []float32, i, w int) bool {
	c := float64(b[i])
	lxx := float64(b[i-1]) + float64(b[i+1]) - 2*c
	lyy := float64(b[i-w]) + float64(b[i+w]) - 2*c
	lxy := (float64(b[i+w+1]) - float64(b[i+w-1]) - float64(b[i-w+1]) + float64(b[i-w-1])) / 4
	tr, det := lxx+lyy, lxx*lyy-lxy*lxy
	const rho = scaleEdgeRatio
	return det <= 0 || tr*tr*rho >= (rho+1)*(rho+1)*det
}

// abs32 clears the sign bit (no branch: the signs of a noisy response are
// random and a branch on them mispredicts half the time).
func abs32(v float32) float32 {
	return math.Float32frombits(math.Float32bits(v) &^ (1 << 31))
}

// isPeak reports whether v beats the 3x3 neighbourhood of i in p: strictly
// larger than the neighbours before i in raster order, at least as large as
// those after. self tells whether p is v's own plane (then i itself is
// skipped); on the other scales the centre must be strictly smaller.
func isPeak(v float32, p []float32, i, w int, self bool) bool {
	for _, o := range [...]int{-w - 1, -w, -w + 1, -1} {
		if abs32(p[i+o]) >= v {
			return false
		}
	}
	for _, o := range [...]int{1, w - 1, w, w + 1} {
		if abs32(p[i+o]) > v {
			return false
		}
	}
	if !self && abs32(p[i]) >= v {
		return false
	}
	return true
}
