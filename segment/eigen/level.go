package eigen

import (
	"math"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// level is one graph of the hierarchy in CSR form, or the input pixel
// graph in stencil form (sg set, rowPtr, col and wt nil; see
// stencilOp). Unlike affinity.Graph it may hold diagonal entries (self
// loops): a coarse node keeps the weight of the edges inside its
// aggregate, so that the Galerkin identity Pᵀ (D - W) P = D_c - W_c holds
// exactly. Degrees are summed from the stored float32 weights in float64,
// so L z0 = 0 up to rounding at every level.
type level struct {
	n      int
	rowPtr []int
	col    []int32
	wt     []float32
	sg     *stencilOp // the stencil form, or nil
	stored int        // stored entries (len(col) in CSR form)
	deg    []float64  // d_i = Σ_j w_ij (self loop included)
	jac    []float64  // ω/L_ii, L_ii = 1 - w_ii/d_i, ω = jacobiOmega (the multigrid's Jacobi steps)
	s      []float64  // d_i^-1/2
	z0     []float64  // D^1/2 1 / ‖D^1/2 1‖, the exact null vector of L
	agg    []int32    // fine node -> node of the next coarser level
	pz     []float64  // sqrt(d_i / d_c[agg[i]]): the nonzero of row i of Pz
	memPtr []int      // members of coarse node a: mem[memPtr[a]:memPtr[a+1]], ascending
	mem    []int32
	chunks []int // fixed row chunk boundaries (independent of workers)
}

// chunkNNZ is the target number of stored entries per row chunk. Chunks
// depend on the graph alone, never on the worker count, so chunked
// reductions add partial sums in the same order for any number of workers.
const chunkNNZ = 1 << 15

func newLevel(n int, rowPtr []int, col []int32, wt []float32) *level {
	return newLevelIn(nil, n, rowPtr, col, wt)
}

// newLevelIn is newLevel with its arrays from pl's arenas (nil:
// allocated).
func newLevelIn(pl *pool, n int, rowPtr []int, col []int32, wt []float32) *level {
	lv := &level{n: n, rowPtr: rowPtr, col: col, wt: wt, stored: len(col)}
	lv.fill(pl, rowPtr)
	return lv
}

// newStencilLevel is the level of the input pixel graph g in stencil
// form: no compressed rows are built. Degrees, chunks and every product
// come out bit for bit as on newLevel of g.CSR().
func newStencilLevel(g *affinity.StencilGraph, workers int) *level {
	n := g.Nodes()
	lv := &level{n: n, sg: newStencilOp(g), stored: g.NNZ()}
	// Row lengths, as the compressed rows' pointers, for the chunks (a
	// temporary array of 8 bytes a node), and the degrees: each row on
	// its own, in parallel over fixed blocks of rows.
	rowPtr := make([]int, n+1)
	lv.deg = make([]float64, n)
	k := lv.sg.k
	const rowsPerBlock = 4096
	parallel.For((n+rowsPerBlock-1)/rowsPerBlock, workers, func(b int) {
		for i := b * rowsPerBlock; i < min((b+1)*rowsPerBlock, n); i++ {
			c := 0
			var d float64
			// The absent pairs add 0, which leaves the sum as over the
			// stored entries.
			for _, v := range lv.sg.wt[i*k : i*k+k] {
				if v != 0 {
					c++
				}
				d += float64(v)
			}
			rowPtr[i+1] = c
			lv.deg[i] = d
		}
	})
	for i := 0; i < n; i++ {
		rowPtr[i+1] += rowPtr[i]
	}
	lv.fill(nil, rowPtr)
	return lv
}

// nnz is the number of stored entries.
func (lv *level) nnz() int { return lv.stored }

// row returns the columns and weights of row i in ascending column order:
// slices of the compressed rows, or in stencil form cb and wb refilled.
func (lv *level) row(i int, cb []int32, wb []float32) ([]int32, []float32) {
	if lv.sg != nil {
		return lv.sg.g.Row(i, cb[:0], wb[:0])
	}
	return lv.col[lv.rowPtr[i]:lv.rowPtr[i+1]], lv.wt[lv.rowPtr[i]:lv.rowPtr[i+1]]
}

// rowBound is an upper bound of the length of row i.
func (lv *level) rowBound(i int) int {
	if lv.sg != nil {
		return lv.sg.k
	}
	return lv.rowPtr[i+1] - lv.rowPtr[i]
}

// fill computes the degrees (in stencil form newStencilLevel has summed
// them), the diagonal of L, D^-1/2, z0 and the row chunks; rowPtr gives
// the row lengths. Its arrays come from pl's arenas (nil: allocated).
func (lv *level) fill(pl *pool, rowPtr []int) {
	n := lv.n
	if lv.sg == nil {
		lv.deg = pl.floats(n)
	}
	lv.s = pl.floats(n)
	lv.z0 = pl.floats(n)
	lv.jac = pl.floats(n)
	var sum float64
	for i := 0; i < n; i++ {
		var d, self float64
		if lv.sg != nil {
			d = lv.deg[i] // newStencilLevel's sums; no self loops
		} else {
			for p := lv.rowPtr[i]; p < lv.rowPtr[i+1]; p++ {
				d += float64(lv.wt[p])
				if int(lv.col[p]) == i {
					self += float64(lv.wt[p])
				}
			}
		}
		lv.deg[i] = d
		lv.s[i] = 1 / math.Sqrt(d)
		sum += d
		// L_ii = 1 - w_ii/d_i, kept away from 0 for aggregates nearly cut
		// off from the rest; the multigrid's smoothing scales by ω/L_ii,
		// divided once here rather than at every step.
		lv.jac[i] = jacobiOmega / max(1-self/d, 1e-3)
	}
	inv := 1 / math.Sqrt(sum)
	for i, d := range lv.deg {
		lv.z0[i] = math.Sqrt(d) * inv
	}
	nc := 0
	for i := 0; i < n; nc++ {
		i = chunkEnd(rowPtr, n, i)
	}
	lv.chunks = pl.ints(nc + 1)
	for i, c := 0, 1; i < n; c++ {
		i = chunkEnd(rowPtr, n, i)
		lv.chunks[c] = i
	}
}

// chunkEnd is the end of the row chunk that starts at row i: rows up to
// chunkNNZ stored entries and at most 4096 rows.
func chunkEnd(rowPtr []int, n, i int) int {
	start := rowPtr[i]
	j := i + 1
	for j < n && rowPtr[j]-start < chunkNNZ && j-i < 4096 {
		j++
	}
	return j
}

// nchunks is the number of fixed row chunks.
func (lv *level) nchunks() int { return len(lv.chunks) - 1 }

// block is an n×m matrix stored row-major: row i is v[i*m : i*m+m]. The
// sparse product streams each matrix row once for all m columns.
type block struct {
	n, m int
	v    []float64
}

func newBlock(n, m int) *block { return &block{n: n, m: m, v: make([]float64, n*m)} }

func (b *block) row(i int) []float64 { return b.v[i*b.m : i*b.m+b.m] }

// applyL sets y = L x = x - D^-1/2 W D^-1/2 x for a block x. tmp must have
// the shape of x; it receives D^-1/2 x. Rows are independent, so the
// result does not depend on the worker count. When one goroutine would
// run the chunks (serial) the rows are taken in one call, with no
// closure made: the re-cut's many small solves run on one worker.
func (lv *level) applyL(y, x, tmp *block, workers int) {
	nc := lv.nchunks()
	if serial(nc, workers) {
		lv.scaleRows(tmp, x, 0, lv.n)
		if lv.sg != nil {
			lv.sg.mulRows(lv.sg.scaled(x.m), lv.s, y, x, tmp, 0, lv.n)
			return
		}
		lv.mulRows(y, x, tmp, 0, lv.n)
		return
	}
	hy, hx, ht := heapBlock(y), heapBlock(x), heapBlock(tmp)
	parallel.For(nc, workers, func(c int) {
		lv.scaleRows(ht, hx, lv.chunks[c], lv.chunks[c+1])
	})
	if lv.sg != nil {
		lm := lv.sg.scaled(x.m)
		parallel.For(nc, workers, func(c int) {
			lv.sg.mulRows(lm, lv.s, hy, hx, ht, lv.chunks[c], lv.chunks[c+1])
		})
		return
	}
	parallel.For(nc, workers, func(c int) {
		lv.mulRows(hy, hx, ht, lv.chunks[c], lv.chunks[c+1])
	})
}

// serial reports whether parallel.For would run nc chunks on the calling
// goroutine alone (parallel.Goroutines at most 1): the callers then loop
// themselves, since a closure handed to parallel.For is allocated on the
// heap at every call.
func serial(nc, workers int) bool { return parallel.Goroutines(nc, workers) <= 1 }

// scaleRows sets rows r0..r1-1 of tmp to D^-1/2 x.
func (lv *level) scaleRows(tmp, x *block, r0, r1 int) {
	m := x.m
	for i := r0; i < r1; i++ {
		si := lv.s[i]
		xr, tr := x.v[i*m:i*m+m], tmp.v[i*m:i*m+m]
		for j := range tr {
			tr[j] = si * xr[j]
		}
	}
}

// mulRows computes rows r0..r1-1 of y = x - S W S x given tmp = S x.
// Columns are processed up to six at a time with the accumulators in
// registers, so each stored entry (column index and weight) is loaded once
// per group; every column's sum runs over the row's entries in order, so
// the grouping does not change the result. On the coins pixel graph the
// six-wide pass took a quarter less time than four- and two-wide passes.
func (lv *level) mulRows(y, x, tmp *block, r0, r1 int) {
	if useAVX && r0 < r1 && len(lv.col) > 0 {
		lv.mulRowsAVX(y, x, tmp, r0, r1)
		return
	}
	m := x.m
	t := tmp.v
	for i := r0; i < r1; i++ {
		cols := lv.col[lv.rowPtr[i]:lv.rowPtr[i+1]]
		wts := lv.wt[lv.rowPtr[i]:lv.rowPtr[i+1]]
		wts = wts[:len(cols)]
		si := lv.s[i]
		yr := y.v[i*m : i*m+m]
		xr := x.v[i*m : i*m+m]
		for c0 := 0; c0 < m; {
			switch columnGroup(m - c0) {
			case 6:
				var a0, a1, a2, a3, a4, a5 float64
				for p, j := range cols {
					w := float64(wts[p])
					q := t[int(j)*m+c0 : int(j)*m+c0+6 : int(j)*m+c0+6]
					a0 += w * q[0]
					a1 += w * q[1]
					a2 += w * q[2]
					a3 += w * q[3]
					a4 += w * q[4]
					a5 += w * q[5]
				}
				yr[c0] = xr[c0] - si*a0
				yr[c0+1] = xr[c0+1] - si*a1
				yr[c0+2] = xr[c0+2] - si*a2
				yr[c0+3] = xr[c0+3] - si*a3
				yr[c0+4] = xr[c0+4] - si*a4
				yr[c0+5] = xr[c0+5] - si*a5
				c0 += 6
			case 5:
				var a0, a1, a2, a3, a4 float64
				for p, j := range cols {
					w := float64(wts[p])
					q := t[int(j)*m+c0 : int(j)*m+c0+5 : int(j)*m+c0+5]
					a0 += w * q[0]
					a1 += w * q[1]
					a2 += w * q[2]
					a3 += w * q[3]
					a4 += w * q[4]
				}
				yr[c0] = xr[c0] - si*a0
				yr[c0+1] = xr[c0+1] - si*a1
				yr[c0+2] = xr[c0+2] - si*a2
				yr[c0+3] = xr[c0+3] - si*a3
				yr[c0+4] = xr[c0+4] - si*a4
				c0 += 5
			case 3:
				var a0, a1, a2 float64
				for p, j := range cols {
					w := float64(wts[p])
					q := t[int(j)*m+c0 : int(j)*m+c0+3 : int(j)*m+c0+3]
					a0 += w * q[0]
					a1 += w * q[1]
					a2 += w * q[2]
				}
				yr[c0] = xr[c0] - si*a0
				yr[c0+1] = xr[c0+1] - si*a1
				yr[c0+2] = xr[c0+2] - si*a2
				c0 += 3
			case 2:
				var a0, a1 float64
				for p, j := range cols {
					w := float64(wts[p])
					q := t[int(j)*m+c0 : int(j)*m+c0+2 : int(j)*m+c0+2]
					a0 += w * q[0]
					a1 += w * q[1]
				}
				yr[c0] = xr[c0] - si*a0
				yr[c0+1] = xr[c0+1] - si*a1
				c0 += 2
			default:
				yr[c0] = xr[c0] - si*oneColumn(cols, wts, t, m, c0)
				c0++
			}
		}
	}
}

// oneColumn is the sum over a row's entries (columns cols, weights wts)
// of the weight times column c0 of the m-column block t: two partial sums
// (even and odd entries) keep the additions from waiting on each other.
func oneColumn(cols []int32, wts []float32, t []float64, m, c0 int) float64 {
	var a0, a1 float64
	p := 0
	for ; p+2 <= len(cols); p += 2 {
		a0 += float64(wts[p]) * t[int(cols[p])*m+c0]
		a1 += float64(wts[p+1]) * t[int(cols[p+1])*m+c0]
	}
	if p < len(cols) {
		a0 += float64(wts[p]) * t[int(cols[p])*m+c0]
	}
	return a0 + a1
}

// columnGroup is the width of the next group of columns a product takes
// at once when rest columns remain: 6 while at least 6 remain, then 5,
// 3 (for 3 or 4), 2 and 1. The Go loops and the AVX kernels of both
// layouts (compressed rows, stencil) group by it, so their sums are the
// same bit for bit.
func columnGroup(rest int) int {
	switch {
	case rest >= 6:
		return 6
	case rest == 5:
		return 5
	case rest >= 3:
		return 3
	case rest == 2:
		return 2
	}
	return 1
}

// mulRowsAVX is mulRows with the kernels of stencil_amd64.s, the columns
// grouped as mulRows groups them (6, 5, 3, 2 and 1 columns; the single
// column's kernel keeps oneColumn's even and odd sums), so the result is
// mulRows' bit for bit.
func (lv *level) mulRowsAVX(y, x, tmp *block, r0, r1 int) {
	m := x.m
	rows := r1 - r0
	kern := func(f func(*float64, *int, *int32, *float32, *float64, *float64, *float64, int, int), c int) {
		b := r0*m + c
		f(&tmp.v[c], &lv.rowPtr[r0], &lv.col[0], &lv.wt[0], &lv.s[r0], &x.v[b], &y.v[b], m, rows)
	}
	for c0 := 0; c0 < m; {
		switch columnGroup(m - c0) {
		case 6:
			kern(csrRows6, c0)
			c0 += 6
		case 5:
			kern(csrRows5, c0)
			c0 += 5
		case 3:
			kern(csrRows3, c0)
			c0 += 3
		case 2:
			kern(csrRows2, c0)
			c0 += 2
		default:
			kern(csrRows1, c0)
			c0++
		}
	}
}
