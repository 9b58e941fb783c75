//go:build !purego

package affinity

import "golang.org/x/sys/cpu"

// useAVX2 reports whether slicRowAVX2 (slic_amd64.s) runs the
// single-plane assignment rows of SLIC: 256-bit packed float32 arithmetic
// doing the Go loop's operations in its order (a subtraction, a multiply,
// then two adds; no fused multiply-add) and the comparison of the bits of
// D² as 32-bit integers, so every label and distance is the Go loop's bit
// for bit (TestSLICRowAVX2MatchesGo).
var useAVX2 = cpu.X86.HasAVX2

// slicRowAVX2 is the AVX2 kernel of slicState.assign on one plane: for
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
