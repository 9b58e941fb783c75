//go:build !amd64 || purego

package imageio

// usePaethAVX2 is false off amd64 (or with the purego tag): the Paeth
// candidate of pngFilter runs in Go alone and paethAVX2 is never called.
var usePaethAVX2 = false

func paethAVX2(cur, a, b, c, out *byte, n int) int {
	panic("imageio: no AVX2 kernel on this platform")
}

// useFilterAVX2 is false off amd64 (or with the purego tag): the Up,
// Sub, None and Average candidates of pngFilter run in Go alone.
var useFilterAVX2 = false

func subAbsAVX2(x, y, out *byte, n int) int {
	panic("imageio: no AVX2 kernel on this platform")
}

func absSumAVX2(x *byte, n int) int { panic("imageio: no AVX2 kernel on this platform") }

func avgAbsAVX2(cur, left, above, out *byte, n int) int {
	panic("imageio: no AVX2 kernel on this platform")
}

func grayBytesAVX2(src *float32, dst *byte, n int) { panic("imageio: no AVX2 kernel on this platform") }
