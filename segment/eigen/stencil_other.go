//go:build !amd64 || purego

package eigen

// stencilAVX is false off amd64 (or with the purego tag): the stencil
// product runs in Go alone.
var stencilAVX = false

func stencilRows6(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func stencilRows4(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func stencilRows2(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}
