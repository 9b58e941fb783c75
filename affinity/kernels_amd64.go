//go:build !purego

package affinity

import "golang.org/x/sys/cpu"

// useAVX2 reports whether the AVX2 kernels run: SLIC's single-plane
// assignment rows (slicRowAVX2, slic_amd64.s), the object-scale
// estimate's blurs and Laplacian rows (symTapsAVX2, normLapAVX2,
// scale_amd64.s), the Gaussian jet's passes and the edge energy's rows
// (jetHAVX2, jetVAVX2, edgeRowAVX2, contour_amd64.s). Each lane does the Go loop's operations in its order,
// with no fused multiply-add, so every result is the Go code's bit for
// bit (kernels_test.go); with the purego tag or off amd64 the Go loops
// run alone (kernels_other.go).
var useAVX2 = cpu.X86.HasAVX2

// slicRowAVX2 is the AVX2 kernel of slicState.assign on one plane
// (slic_amd64.s): the floats D² and the stored distances' bits are
// compared as 32-bit integers, as the Go loop does; for
// x = 0..n-1 (n >= 1),
//
//	D = (f[x] - fc)² + dx2[x] + dy2,
//	if bits(D) < dist[x] { dist[x] = bits(D); lab[x] = label },
//
// eight pixels at a time, the last n mod 8 with masked loads and stores
// that touch nothing past n.
//
//go:noescape
func slicRowAVX2(f *float32, dx2 *float32, dist *uint32, lab *int32, n int, fc float32, dy2 float32, label int32)

// symTapsAVX2 is the AVX2 kernel of symTaps (scale_amd64.s) for n >= 8
// outputs: out[x] for x = 0..n-1 from the 2r+1 rows src[0..2r] (r >= 1)
// and the half kernel k[0..r], each lane doing symTaps' operations in
// its order (no fused multiply-add), eight outputs at a time, the last
// eight ending at n (they may overlap the ones before and are computed
// again to the same values; out must not overlap a source row).
//
//go:noescape
func symTapsAVX2(out *float32, src *[]float32, k *float32, r int, n int)

// normLapAVX2 is the AVX2 kernel of one row of normLaplacian
// (scale_amd64.s) for n >= 8 outputs: pad holds the row with two
// reflected pixels on each side (n+4 values), u2, u1, d1, d2 the rows two
// and one above and one and two below; each lane does the Go loop's
// operations in its order, eight outputs at a time, the last eight ending
// at n (computed again to the same values where they overlap; out must
// not overlap an input).
//
//go:noescape
func normLapAVX2(out *float32, pad *float32, u2 *float32, u1 *float32, d1 *float32, d2 *float32, tf float32, n int)

// jetHAVX2 is the AVX2 kernel of gaussianJet's horizontal pass
// (contour_amd64.s) for n >= 4 outputs at line[0..n-1], which reads
// line[-r..n-1+r]; coef holds g0(k), g1(k), g2(k) for k = 0..r (the kernels'
// taps at offset k), r >= 1. Each lane does the Go loop's operations in
// its order.
//
//go:noescape
func jetHAVX2(line *float32, coef *float64, r int, o0 *float32, o1 *float32, o2 *float32, n int)

// jetVAVX2 is the AVX2 kernel of gaussianJet's vertical pass for n >= 4
// pixels: a, b, d the centre's horizontally filtered rows, tbl the six
// rows (a, b, d above, then below) of each k = 1..r, coef as for jetHAVX2.
//
//go:noescape
func jetVAVX2(a *float32, b *float32, d *float32, tbl **float32, coef *float64, r int, ix *float64, iy *float64, ixx *float64, iyy *float64, ixy *float64, n int)

// edgeRowAVX2 is the AVX2 kernel of EdgeEnergy's row (contour_amd64.s)
// for n >= 4 pixels: from the jet's rows, out = float32(sqrt(ss·(ix² +
// iy²) + lam²)) with lam = s2·(|m| + sqrt(d² + ixy²)), m and d half the
// sum and the difference of ixx and iyy, the Go loop's operations in its
// order; s2 and ss are σ² (the same product twice in the Go loop).
//
//go:noescape
func edgeRowAVX2(ix *float64, iy *float64, ixx *float64, iyy *float64, ixy *float64, out *float32, s2 float64, ss float64, n int)
