package eigen

import "github.com/cleave-seg/cleave/segment/parallel"

// The preconditioner's products with the input graph in single precision
// (Options.SinglePrecond). The multigrid cycle of mg.go takes two
// products with the input graph per application (its residuals before
// the coarse correction and before the post-smoothing), two thirds of the
// input graph's products in a LOBPCG step. Those products only shape the
// search directions W = T R: Rayleigh-Ritz, the residuals and the
// returned pairs use the double-precision product (applyL), so a
// preconditioner that rounds to single precision changes the path, not
// the accuracy of the result (LOBPCG accepts any symmetric positive
// definite preconditioner, Knyazev 2001; one that varies by rounding
// slows it little, Knyazev 1998 and Notay 2000 on flexible
// preconditioning, from memory). The weights are float32 already; the
// vector S x is rounded to float32 and each column's sum of w_ij t_j
// runs in float32 in the stored entries' order (one sum a column, so the
// absent pairs of the stencil, which add 0·t = +0 or -0 to a sum that
// starts at +0, leave it as over the stored entries, as in the double
// product). Eight columns fit one AVX register of float32 lanes, which
// halves the bytes of t read and takes each weight without a conversion
// (stencil32_amd64.s).

// single32Lanes is the number of columns a float32 kernel call sums at
// once (one 256-bit register), and the padding of t past n·m values: a
// row's load of eight values may run past the block's last value.
const single32Lanes = 8

// applyL32 sets y = x - S W S x as applyL does, with S x rounded to
// float32 into t (at least n·m + single32Lanes values) and the sums of
// W's rows taken in float32 (see the comment above). Rows are
// independent and each row's sums run in a fixed order, so the result
// does not depend on the worker count, and the AVX kernel gives the Go
// loop's result bit for bit (TestApplyL32AVXMatchesGo); the stencil form
// gives the compressed rows' result bit for bit
// (TestSmallestStencilMatchesCSR with SinglePrecond).
func (lv *level) applyL32(y, x *block, t []float32, partial bool, workers int) {
	m := x.m
	t = t[:lv.n*m+single32Lanes]
	clear(t[lv.n*m:])
	nc := lv.nchunks()
	if serial(nc, workers) {
		lv.scaleRows32(t, x, 0, lv.n)
		lv.mulRows32(y, x, t, partial, 0, lv.n)
		return
	}
	hy, hx := heapBlock(y), heapBlock(x)
	parallel.For(nc, workers, func(c int) {
		lv.scaleRows32(t, hx, lv.chunks[c], lv.chunks[c+1])
	})
	parallel.For(nc, workers, func(c int) {
		lv.mulRows32(hy, hx, t, partial, lv.chunks[c], lv.chunks[c+1])
	})
}

// scaleRows32 sets rows r0..r1-1 of t (m values a row) to float32(S x).
func (lv *level) scaleRows32(t []float32, x *block, r0, r1 int) {
	m := x.m
	for i := r0; i < r1; i++ {
		si := lv.s[i]
		xr, tr := x.v[i*m:i*m+m], t[i*m:i*m+m]
		for j := range tr {
			tr[j] = float32(si * xr[j])
		}
	}
}

// mulRows32 computes rows r0..r1-1 of y = x - S W t (see applyL32);
// on compressed rows with partial set each sum in four partial sums
// (csr32; with AVX csr32RowsY, which writes y itself).
func (lv *level) mulRows32(y, x *block, t []float32, partial bool, r0, r1 int) {
	if lv.sg != nil {
		lv.sg.mulRows32(lv.sg.scaled(x.m), lv.s, y, x, t, r0, r1)
		return
	}
	m := x.m
	var acc [rows32Batch * single32Lanes]float32
	for c0 := 0; c0 < m; c0 += single32Lanes {
		mc := min(single32Lanes, m-c0)
		if useAVX && partial && r0 < r1 && len(lv.col) > 0 {
			// The kernel writes y itself (csr32RowsY).
			var mask [single32Lanes]int64
			for c := range mc {
				mask[c] = -1
			}
			b := r0*m + c0
			_ = x.v[r1*m-1]
			_ = y.v[r1*m-1]
			_ = lv.s[r1-1]
			csr32RowsY(&t[c0], &lv.rowPtr[r0], &lv.col[0], &lv.wt[0], m, &lv.s[r0], &x.v[b], &y.v[b], &mask[0], r1-r0)
			continue
		}
		for i := r0; i < r1; i += rows32Batch {
			rows := min(rows32Batch, r1-i)
			csr32(t, c0, lv.rowPtr[i:i+rows+1], lv.col, lv.wt, m, acc[:], partial)
			for r := 0; r < rows; r++ {
				si := lv.s[i+r]
				b := (i+r)*m + c0
				yr, xr := y.v[b:b+mc], x.v[b:b+mc]
				for c := range yr {
					yr[c] = xr[c] - si*float64(acc[r*single32Lanes+c])
				}
			}
		}
	}
}

// rows32Batch is the number of rows whose sums one call leaves in a
// stack buffer before they are written to y (csr32, stencil32Go).
const rows32Batch = 64

// mulRows32 is level.mulRows32 on the stencil form: the rows in range
// (inRange) in runs, the others on their pairs in range (span or filter,
// as mulRows takes them) one row at a time; with AVX in the kernel
// stencil32RowsY, which writes y itself, else the sums from stencil32Go
// and y from them in Go.
func (op *stencilOp) mulRows32(lm []int, s []float64, y, x *block, t []float32, r0, r1 int) {
	m, k := x.m, op.k
	var acc [rows32Batch * single32Lanes]float32
	var fl []int
	var fw []float32
	for c0 := 0; c0 < m; c0 += single32Lanes {
		mc := min(single32Lanes, m-c0)
		var mask [single32Lanes]int64
		for c := range mc {
			mask[c] = -1
		}
		// rowsOut writes rows i..i+rows-1 of y from the pairs lin, ws
		// (ws advancing by k a row).
		rowsOut := func(i, rows int, lin []int, ws []float32) {
			b := i*m + c0
			if useAVX && len(lin) > 0 {
				checkStencil32(t, b, lin, m, rows)
				_ = x.v[(i+rows)*m-1]
				_ = y.v[(i+rows)*m-1]
				stencil32RowsY(&t[b], &lin[0], len(lin), &ws[0], m, &s[i], &x.v[b], &y.v[b], &mask[0], rows)
				return
			}
			for rows > 0 {
				nr := min(rows, rows32Batch)
				stencil32Go(t, b, lin, len(lin), ws, m, acc[:], nr)
				for r := 0; r < nr; r++ {
					si := s[i+r]
					yr, xr := y.v[b+r*m:b+r*m+mc], x.v[b+r*m:b+r*m+mc]
					for c := range yr {
						yr[c] = xr[c] - si*float64(acc[r*single32Lanes+c])
					}
				}
				i, rows, b, ws = i+nr, rows-nr, b+nr*m, ws[min(nr*k, len(ws)):]
			}
		}
		for i := r0; i < r1; {
			if op.inRange(i) && op.k > 0 {
				rows := min(r1-i, op.n-op.hi-i)
				rowsOut(i, rows, lm, op.wt[i*k:(i+rows)*k])
				i += rows
				continue
			}
			lin, ws := lm, op.wt[i*k:i*k+k]
			if op.mono {
				f0, f1 := op.span(i)
				lin, ws = lm[f0:f1], ws[f0:f1]
			} else {
				fl, fw = op.filter(i, lm, fl[:0], fw[:0])
				lin, ws = fl, fw
			}
			rowsOut(i, 1, lin, ws)
			i++
		}
	}
}

// checkStencil32 checks that every load in t of a kernel call on rows
// rows from t[b] with the pairs lin lies in t (Go's bounds, once a call).
func checkStencil32(t []float32, b int, lin []int, m, rows int) {
	lo, hi := lin[0], lin[0]
	for _, d := range lin {
		lo, hi = min(lo, d), max(hi, d)
	}
	_ = t[b+lo]
	_ = t[b+(rows-1)*m+hi+single32Lanes-1]
}

// stencil32Go sets acc[r·8 + c] = Σ_f ws[r·k + f] · t[base + r·m + lin[f] + c]
// for rows rows r and the eight lanes c, each sum in float32 from +0 in
// the order of f (the operations of the AVX kernel stencil32RowsY).
func stencil32Go(t []float32, base int, lin []int, k int, ws []float32, m int, acc []float32, rows int) {
	for r := 0; r < rows; r++ {
		var a [single32Lanes]float32
		w := ws[r*k : r*k+k]
		for f, d := range lin {
			wf := w[f]
			j := base + r*m + d
			q := t[j : j+single32Lanes : j+single32Lanes]
			a[0] += wf * q[0]
			a[1] += wf * q[1]
			a[2] += wf * q[2]
			a[3] += wf * q[3]
			a[4] += wf * q[4]
			a[5] += wf * q[5]
			a[6] += wf * q[6]
			a[7] += wf * q[7]
		}
		copy(acc[r*single32Lanes:], a[:])
	}
}

// csr32 sets, for the rows r of rowPtr (len(rowPtr)-1 of them), acc[r·8
// + c] for the eight lanes c to the float32 sum from +0 of wt[p]·t[base +
// col[p]·m + c] over the row's entries p in order; with partial set to
// (a_0 + a_1) + (a_2 + a_3) instead, a_q that sum over the entries whose
// place p - rowPtr[r] is q modulo 4: four independent sums, so that a
// row's additions need not wait for each other (the kernel takes one
// row at a time). In the AVX kernels csr32Rows (partial) and csr32Rows1,
// else in Go. t holds the level's n rows of m values and single32Lanes
// more (applyL32), and every column is below n (a level's invariant), so
// every load lies in t.
func csr32(t []float32, base int, rowPtr []int, col []int32, wt []float32, m int, acc []float32, partial bool) {
	rows := len(rowPtr) - 1
	if rowPtr[rows] == rowPtr[0] {
		clear(acc[:rows*single32Lanes])
		return
	}
	if useAVX {
		if partial {
			csr32Rows(&t[base], &rowPtr[0], &col[0], &wt[0], m, &acc[0], rows)
		} else {
			csr32Rows1(&t[base], &rowPtr[0], &col[0], &wt[0], m, &acc[0], rows)
		}
		return
	}
	parts := 1
	if partial {
		parts = 4
	}
	for r := 0; r < rows; r++ {
		var a [4][single32Lanes]float32
		cols, wts := col[rowPtr[r]:rowPtr[r+1]], wt[rowPtr[r]:rowPtr[r+1]]
		wts = wts[:len(cols)]
		for p, j := range cols {
			w := wts[p]
			b := base + int(j)*m
			q := t[b : b+single32Lanes : b+single32Lanes]
			s := &a[p%parts]
			s[0] += w * q[0]
			s[1] += w * q[1]
			s[2] += w * q[2]
			s[3] += w * q[3]
			s[4] += w * q[4]
			s[5] += w * q[5]
			s[6] += w * q[6]
			s[7] += w * q[7]
		}
		out := acc[r*single32Lanes : r*single32Lanes+single32Lanes]
		if !partial {
			copy(out, a[0][:])
			continue
		}
		for c := range out {
			out[c] = (a[0][c] + a[1][c]) + (a[2][c] + a[3][c])
		}
	}
}
