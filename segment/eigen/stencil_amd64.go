//go:build !purego

package eigen

import "golang.org/x/sys/cpu"

// stencilAVX reports whether the stencil product's interior rows run in
// the AVX kernels of stencil_amd64.s (256-bit packed float64 multiplies
// and adds, no fused multiply-add: the same roundings as the Go loop).
var stencilAVX = cpu.X86.HasAVX

// stencilRows6, stencilRows4 and stencilRows2 compute, for rows
// consecutive rows starting at the pointers, y[c] = x[c] - s·Σ_f ws[f]·t[lm[f]+c]
// for 6, 4 or 2 columns c; stride is the block width m (the distance
// between rows in t, x and y), k the number of offsets (ws advances by k
// a row, s by one). Every t[lm[f]+c] read must lie inside the block.
//
//go:noescape
func stencilRows6(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func stencilRows4(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func stencilRows2(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)
