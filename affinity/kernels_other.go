//go:build !amd64 || purego

package affinity

// useAVX2 is false off amd64 (or with the purego tag): SLIC, the
// object-scale estimate and the Gaussian jet run in Go alone, and the
// kernels below are never called.
var useAVX2 = false

func slicRowAVX2(f *float32, dx2 *float32, dist *uint32, lab *int32, n int, fc float32, dy2 float32, label int32) {
	panic("affinity: no AVX2 kernel on this platform")
}

func symTapsAVX2(out *float32, src *[]float32, k *float32, r int, n int) {
	panic("affinity: no AVX2 kernel on this platform")
}

func normLapAVX2(out *float32, pad *float32, u2 *float32, u1 *float32, d1 *float32, d2 *float32, tf float32, n int) {
	panic("affinity: no AVX2 kernel on this platform")
}

func jetHAVX2(line *float32, coef *float64, r int, o0 *float32, o1 *float32, o2 *float32, n int) {
	panic("affinity: no AVX2 kernel on this platform")
}

func jetVAVX2(a *float32, b *float32, d *float32, tbl **float32, coef *float64, r int, ix *float64, iy *float64, ixx *float64, iyy *float64, ixy *float64, n int) {
	panic("affinity: no AVX2 kernel on this platform")
}

func edgeRowAVX2(ix *float64, iy *float64, ixx *float64, iyy *float64, ixy *float64, out *float32, s2 float64, ss float64, n int) {
	panic("affinity: no AVX2 kernel on this platform")
}
