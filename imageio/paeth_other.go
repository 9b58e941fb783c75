//go:build !amd64 || purego

package imageio

// usePaethAVX2 is false off amd64 (or with the purego tag): the Paeth
// candidate of pngFilter runs in Go alone and paethAVX2 is never called.
var usePaethAVX2 = false

func paethAVX2(cur, a, b, c, out *byte, n int) int {
	panic("imageio: no AVX2 kernel on this platform")
}
