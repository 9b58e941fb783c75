//go:build !purego

package imageio

import "golang.org/x/sys/cpu"

// useFilterAVX2 reports whether the kernels of filter_amd64.s run the Up,
// Sub, None and Average candidates of pngFilter: the filtered bytes and
// the sums of their absolute values are exactly the Go loops' (integer
// arithmetic modulo 256; TestFilterKernelsMatchGo), thirty-two bytes at
// a time.
var useFilterAVX2 = cpu.X86.HasAVX2

// subAbsAVX2 writes out[i] = x[i] - y[i] (modulo 256) for i = 0..n-1, n a
// positive multiple of 32, and returns the sum of |out[i]| read as int8.
//
//go:noescape
func subAbsAVX2(x, y, out *byte, n int) int

// absSumAVX2 returns the sum of |x[i]| read as int8 for i = 0..n-1, n a
// positive multiple of 32.
//
//go:noescape
func absSumAVX2(x *byte, n int) int

// avgAbsAVX2 writes out[i] = cur[i] - floor((left[i] + above[i])/2)
// (modulo 256) for i = 0..n-1, n a positive multiple of 32, and returns
// the sum of |out[i]| read as int8.
//
//go:noescape
func avgAbsAVX2(cur, left, above, out *byte, n int) int

// grayBytesAVX2 writes dst[i] = round8(255 * unit(float64(src[i]))) for
// i = 0..n-1, n a positive multiple of 8: the untinted gray of the
// overlay (TestGrayBytesAVX2MatchesGo).
//
//go:noescape
func grayBytesAVX2(src *float32, dst *byte, n int)
