//go:build !purego

package eigen

import "golang.org/x/sys/cpu"

// useAVX reports whether the AVX kernels of stencil_amd64.s and
// blockops_amd64.s run (the stencil product's interior rows, the groups
// of four rows of gramMulti, the rows of combineMulti and subMul): 256-bit
// packed float64 multiplies and adds, each lane doing the Go loop's
// operations in its order (no fused multiply-add), so the results are
// the Go code's bit for bit; they only run faster.
var useAVX = cpu.X86.HasAVX

// stencilRows6, stencilRows5, stencilRows3 and stencilRows2 compute, for rows
// consecutive rows starting at the pointers, y[c] = x[c] - s·Σ_f ws[f]·t[lm[f]+c]
// for 6, 5, 3 or 2 columns c; stride is the block width m (the distance
// between rows in t, x and y), k the number of offsets (ws advances by k
// a row, s by one). Every t[lm[f]+c] read must lie inside the block.
//
//go:noescape
func stencilRows6(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func stencilRows5(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func stencilRows3(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func stencilRows2(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)

// gramRows4 is the AVX kernel of gramMulti (blockops_amd64.s): for
// groups groups of four consecutive rows of a (width ma) and b (width
// mb), dst[p·gs + q] += a0[p]·b0[q] + a1[p]·b1[q] + a2[p]·b2[q] + a3[p]·b3[q],
// the Go loop's operations in its order. It runs where useAVX is set.
//
//go:noescape
func gramRows4(dst *float64, gs int, a *float64, ma int, b *float64, mb int, groups int)

// csrRows6, csrRows5, csrRows3 and csrRows2 are the kernels of the compressed-row
// product (level.mulRowsAVX; stencil_amd64.s): for rows rows from the
// pointers, y[c] = x[c] - s·Σ_p wt[p]·t[col[p]·stride + c] over p =
// rowPtr[i]..rowPtr[i+1]-1, for 6, 5, 3 or 2 columns c.
//
//go:noescape
func csrRows6(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func csrRows5(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func csrRows3(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)

//go:noescape
func csrRows2(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)

// csrRows1 is the single column of the compressed-row product
// (stencil_amd64.s): for rows rows from the pointers, y = x - s·(a0 + a1)
// with a0 the sum of wt[p]·t[col[p]·stride] over the row's even entries p
// (counted from the row's first) and a1 over its odd ones, each in order:
// oneColumn's operations, bit for bit.
//
//go:noescape
func csrRows1(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)

// combineRows is the AVX kernel of dotRows with the coefficients
// untransposed, on consecutive rows (blockops_amd64.s): for rows rows r,
// with dst and ini (when not nil) advanced by r·mc values and s by
// r·sstride, dst[q] = a_q + Σ_p s[p]·c[p·mc + q] for q = 0..mc-1 (ns
// terms p, in order), subtracted from dst[q] instead when sub is not 0;
// a_q = ini[q] when ini is not nil (the stored sums of a call over the
// inputs before), else +0.
//
//go:noescape
func combineRows(dst *float64, mc int, s *float64, ns int, sstride int, c *float64, sub int, ini *float64, rows int)

// csr32Rows is the float32 kernel of the preconditioner's products on
// compressed rows (stencil32_amd64.s, single.go's csr32): for rows rows r
// (rowPtr[r]..rowPtr[r+1] the places of row r in col and wt),
// acc[r·8 + c] = (a0 + a1) + (a2 + a3) with a_q the sum of
// wt[p]·t[col[p]·m + c] over the row's entries at places q modulo 4 from
// its first, in order, in float32: csr32's Go loop bit for bit.
//
//go:noescape
func csr32Rows(t *float32, rowPtr *int, col *int32, wt *float32, m int, acc *float32, rows int)

// csr32Rows1 is csr32Rows with one sum a lane over the row's entries in
// order (csr32 with partial unset).
//
//go:noescape
func csr32Rows1(t *float32, rowPtr *int, col *int32, wt *float32, m int, acc *float32, rows int)

// stencil32RowsY is the float32 kernel of the preconditioner's product on
// the stencil form (stencil32_amd64.s, single.go): for rows consecutive
// rows (t advanced by m values a row, ws by k, s by one, x and y by m),
// acc[c] = Σ_f ws[f]·t[lm[f] + c] over f = 0..k-1 in order in float32
// for the eight lanes c, and y[c] = x[c] - s·float64(acc[c]) for the
// lanes whose mask is set: stencil32Go's sums and stencilOp.mulRows32's
// Go loop bit for bit. k must be at least 1.
//
//go:noescape
func stencil32RowsY(t *float32, lm *int, k int, ws *float32, m int, s *float64, x *float64, y *float64, mask *int64, rows int)

// csr32RowsY is csr32Rows with each row's result written as y[c] = x[c] -
// s·float64(sum) for the lanes c whose mask is set (x and y advanced by
// m a row, s by one; stencil32_amd64.s): level.mulRows32's Go loop on
// csr32's partial sums bit for bit.
//
//go:noescape
func csr32RowsY(t *float32, rowPtr *int, col *int32, wt *float32, m int, s *float64, x *float64, y *float64, mask *int64, rows int)
