//go:build !purego

package imageio

import "golang.org/x/sys/cpu"

// usePaethAVX2 reports whether paethAVX2 (paeth_amd64.s) runs the Paeth
// candidate of pngFilter: the predictor, the filtered bytes and the sum
// of their absolute values are exactly the Go loop's (integer arithmetic;
// TestPaethAVX2MatchesGo), sixteen bytes at a time.
var usePaethAVX2 = cpu.X86.HasAVX2

// paethAVX2 writes out[i] = cur[i] - paeth(a[i], b[i], c[i]) for i =
// 0..n-1, n a positive multiple of 16 (a: the bytes bpp to the left, b:
// above, c: above and to the left; PNG specification, section 9.4: of a,
// b, c the one nearest a + b - c, ties to a, then b) and returns the sum
// of |out[i]| read as int8.
//
//go:noescape
func paethAVX2(cur, a, b, c, out *byte, n int) int
