//go:build !amd64 || purego

package eigen

// useAVX is false off amd64 (or with the purego tag): the products and
// block operations run in Go alone, and the kernels below are never
// called.
var useAVX = false

func stencilRows6(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func stencilRows2(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func gramRows4(dst *float64, gs int, a *float64, ma int, b *float64, mb int, groups int) {
	panic("eigen: no AVX kernel on this platform")
}

func csrRows6(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func csrRows2(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func stencilRows5(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func stencilRows3(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func csrRows5(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func csrRows3(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func csrRows1(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func combineRows(dst *float64, mc int, s *float64, ns int, sstride int, c *float64, sub int, ini *float64, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func csr32Rows(t *float32, rowPtr *int, col *int32, wt *float32, m int, acc *float32, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func csr32Rows1(t *float32, rowPtr *int, col *int32, wt *float32, m int, acc *float32, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func stencil32RowsY(t *float32, lm *int, k int, ws *float32, m int, s *float64, x *float64, y *float64, mask *int64, rows int) {
	panic("eigen: no AVX kernel on this platform")
}

func csr32RowsY(t *float32, rowPtr *int, col *int32, wt *float32, m int, s *float64, x *float64, y *float64, mask *int64, rows int) {
	panic("eigen: no AVX kernel on this platform")
}
