package eigen

import "github.com/cleave-seg/cleave/affinity"

// stencilOp is the product of the input pixel graph in stencil form
// (affinity.StencilGraph): the neighbours of node i are i + lin_f for the
// K offsets f in the order of (dy, dx), lin_f = dy_f·w + dx_f, and their
// weights are the contiguous run wt[i·K : i·K+K]. No column index is
// loaded: a product reads 4 bytes an entry instead of 8. A slot whose
// neighbour lies outside the image holds 0 (StencilGraph's invariant),
// so the offsets need no test except that i + lin_f stay inside 0..n-1
// (only near the first and last image rows): a neighbour past the left
// or right edge lands on some node of another image row, and adds 0·t.
type stencilOp struct {
	g   *affinity.StencilGraph
	n   int
	k   int   // offsets
	lin []int // index differences, in (dy, dx) order
	wt  []float32
	// Rows lo..n-1-hi have every neighbour index i + lin_f in range.
	lo, hi int
	// mono reports that lin increases with f (an image wider than the
	// stencil): the pairs of a row in range are then the run of offsets
	// f0..f1-1 (span).
	mono bool
}

func newStencilOp(g *affinity.StencilGraph) *stencilOp {
	n := g.Nodes()
	w, _ := g.Size()
	dx, dy := g.Offsets()
	op := &stencilOp{g: g, n: n, k: len(dx), wt: g.Weights(), lin: make([]int, len(dx))}
	for f := range dx {
		op.lin[f] = dy[f]*w + dx[f]
		op.lo, op.hi = max(op.lo, -op.lin[f]), max(op.hi, op.lin[f])
	}
	op.mono = true
	for f := 1; f < len(op.lin); f++ {
		op.mono = op.mono && op.lin[f] > op.lin[f-1]
	}
	return op
}

// span returns the offsets f0..f1-1 whose neighbour index i + lin_f lies
// in 0..n-1, for a stencil whose lin increases (mono): those filter
// keeps, in the same order.
func (op *stencilOp) span(i int) (f0, f1 int) {
	f0, f1 = 0, len(op.lin)
	for f0 < f1 && i+op.lin[f0] < 0 {
		f0++
	}
	for f1 > f0 && i+op.lin[f1-1] >= op.n {
		f1--
	}
	return f0, f1
}

// scaled returns the index differences multiplied by m, the distance
// between the rows of a block of m columns.
func (op *stencilOp) scaled(m int) []int {
	lm := make([]int, op.k)
	for f, d := range op.lin {
		lm[f] = d * m
	}
	return lm
}

// inRange reports whether every neighbour index i + lin_f of row i lies
// in 0..n-1 (all rows but those near the first and last image rows).
func (op *stencilOp) inRange(i int) bool { return i >= op.lo && i+op.hi < op.n }

// filter appends to fl and ws the scaled differences (lm) and weights
// of the pairs of row i whose neighbour index lies in 0..n-1, in stencil
// order. (Where the stencil is as wide as the image, lin is not
// monotone in the offset order, so these need not be contiguous.)
func (op *stencilOp) filter(i int, lm, fl []int, ws []float32) ([]int, []float32) {
	row := op.wt[i*op.k : i*op.k+op.k]
	for f, d := range op.lin {
		if j := i + d; j >= 0 && j < op.n {
			fl = append(fl, lm[f])
			ws = append(ws, row[f])
		}
	}
	return fl, ws
}

// mulRows computes rows r0..r1-1 of y = x - S W S x given tmp = S x (s:
// the diagonal of S = D^-1/2), as level.mulRows does on compressed rows
// and with the same result bit for bit: every column's sum runs over the
// row's neighbours in ascending order, and the pairs with no edge add
// 0·t = 0, which leaves a sum unchanged. The single-column pass splits
// the sum by the parity of the stored entries, as level.mulRows does,
// so there the absent pairs are skipped.
//
// lm is scaled(m). Only the rows near the first and last image rows
// allocate (their filtered pairs), so a product makes almost no garbage
// (buffers per chunk, about 2,500 chunks at a million nodes, made the
// heap grow between collections during the solve).
func (op *stencilOp) mulRows(lm []int, s []float64, y, x, tmp *block, r0, r1 int) {
	if useAVX && op.k > 0 {
		// Rows lo..n-1-hi need no filtering: AVX kernels there, on
		// runs of rows; the others row by row on their filtered pairs.
		if a, b := max(r0, op.lo), min(r1, op.n-op.hi); a < b {
			op.edgeRowsAVX(lm, s, y, x, tmp, r0, a)
			op.mulRowsAVX(lm, s, y, x, tmp, a, b)
			op.edgeRowsAVX(lm, s, y, x, tmp, b, r1)
			return
		}
		op.edgeRowsAVX(lm, s, y, x, tmp, r0, r1)
		return
	}
	op.mulRowsGo(lm, s, y, x, tmp, r0, r1)
}

// edgeRowsAVX is mulRows on rows r0..r1-1 one row at a time, each with
// the kernels of stencil_amd64.s on the pairs mulRowsGo takes (all of
// them for a row in range; else the run of offsets in range, span, or
// where lin does not increase the pairs filter keeps): the pairs and
// their order are mulRowsGo's, so the result is too, bit for bit
// (TestStencilAVXMatchesGo; TestStencilProductMatchesCSR on images as
// narrow as the stencil). The rows near the first and last image
// rows took about six times as long a row in the Go loop as in the
// kernels (a CPU profile of the whole command at 116,736 nodes).
func (op *stencilOp) edgeRowsAVX(lm []int, s []float64, y, x, tmp *block, r0, r1 int) {
	m, k := x.m, op.k
	var fl []int
	var fw []float32
	for i := r0; i < r1; i++ {
		lin, ws := lm, op.wt[i*k:i*k+k]
		if !op.inRange(i) {
			if op.mono {
				f0, f1 := op.span(i)
				lin, ws = lm[f0:f1], ws[f0:f1]
			} else {
				fl, fw = op.filter(i, lm, fl[:0], fw[:0])
				lin, ws = fl, fw
			}
		}
		if len(lin) == 0 {
			// No pair: y = x - s·0, as the Go loop leaves it.
			op.mulRowsGo(lm, s, y, x, tmp, i, i+1)
			continue
		}
		stencilGroups(m, func(f stencilKernel, c int) {
			b := i*m + c
			f(&tmp.v[b], &lin[0], len(lin), &ws[0], &s[i], &x.v[b], &y.v[b], m, 1)
		}, func(c int) { op.single(lin, ws, s[i], y, x, tmp, i, c) })
	}
}

// stencilKernel is the signature of the stencil product's kernels
// (stencilRows6, 5, 3 and 2).
type stencilKernel = func(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)

// stencilGroups runs the m columns of a block in the groups columnGroup
// makes (6, 5, 3 and 2 columns through kern with their kernel, a single
// column through single), in column order.
func stencilGroups(m int, kern func(f stencilKernel, c int), single func(c int)) {
	for c0 := 0; c0 < m; {
		switch columnGroup(m - c0) {
		case 6:
			kern(stencilRows6, c0)
			c0 += 6
		case 5:
			kern(stencilRows5, c0)
			c0 += 5
		case 3:
			kern(stencilRows3, c0)
			c0 += 3
		case 2:
			kern(stencilRows2, c0)
			c0 += 2
		default:
			single(c0)
			c0++
		}
	}
}

// mulRowsAVX is mulRows on rows r0..r1-1, all in range (inRange), with
// the kernels of stencil_amd64.s (groups of 6, 5, 3 and 2 columns). The
// columns are grouped as mulRowsGo groups them, so that the same columns
// take the single-column pass split by parity. Each kernel's lane does
// the Go loop's operations in its order, so the result is mulRowsGo's
// bit for bit (TestStencilProductMatchesCSR, TestStencilAVXMatchesGo).
func (op *stencilOp) mulRowsAVX(lm []int, s []float64, y, x, tmp *block, r0, r1 int) {
	m, k := x.m, op.k
	rows := r1 - r0
	stencilGroups(m, func(f stencilKernel, c int) {
		b := r0*m + c
		f(&tmp.v[b], &lm[0], k, &op.wt[r0*k], &s[r0], &x.v[b], &y.v[b], m, rows)
	}, func(c int) {
		for i := r0; i < r1; i++ {
			op.single(lm, op.wt[i*k:i*k+k], s[i], y, x, tmp, i, c)
		}
	})
}

// single is the single-column pass of mulRowsGo for column c of row i
// (lin and ws the row's scaled differences and weights): two partial
// sums over the stored entries taken alternately, as level.mulRows.
func (op *stencilOp) single(lin []int, ws []float32, si float64, y, x, tmp *block, i, c int) {
	m := x.m
	t := tmp.v
	bi := i*m + c
	ws = ws[:len(lin)]
	// Pairs of stored entries while both weights are nonzero (the
	// entries then alternate between the sums as below), then one
	// entry at a time from the first pair holding a zero.
	var a0, a1 float64
	f := 0
	for ; f+1 < len(lin); f += 2 {
		w0, w1 := ws[f], ws[f+1]
		if w0 == 0 || w1 == 0 {
			break
		}
		a0 += float64(w0) * t[bi+lin[f]]
		a1 += float64(w1) * t[bi+lin[f+1]]
	}
	par := 0
	for ; f < len(lin); f++ {
		w := ws[f]
		if w == 0 {
			continue
		}
		if v := float64(w) * t[bi+lin[f]]; par == 0 {
			a0 += v
		} else {
			a1 += v
		}
		par ^= 1
	}
	y.v[bi] = x.v[bi] - si*(a0+a1)
}

// mulRowsGo is mulRows in Go alone.
func (op *stencilOp) mulRowsGo(lm []int, s []float64, y, x, tmp *block, r0, r1 int) {
	m := x.m
	t := tmp.v
	k := op.k
	var fl []int
	var fw []float32
	for i := r0; i < r1; i++ {
		lin, ws := lm, op.wt[i*k:i*k+k]
		if !op.inRange(i) {
			fl, fw = op.filter(i, lm, fl[:0], fw[:0])
			lin, ws = fl, fw
		}
		ws = ws[:len(lin)]
		si := s[i]
		yr := y.v[i*m : i*m+m]
		xr := x.v[i*m : i*m+m]
		for c0 := 0; c0 < m; {
			bi := i*m + c0
			switch columnGroup(m - c0) {
			case 6:
				var a0, a1, a2, a3, a4, a5 float64
				for f, d := range lin {
					w := float64(ws[f])
					j := bi + d
					q := t[j : j+6 : j+6]
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
				for f, d := range lin {
					w := float64(ws[f])
					j := bi + d
					q := t[j : j+5 : j+5]
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
				for f, d := range lin {
					w := float64(ws[f])
					j := bi + d
					q := t[j : j+3 : j+3]
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
				for f, d := range lin {
					w := float64(ws[f])
					j := bi + d
					q := t[j : j+2 : j+2]
					a0 += w * q[0]
					a1 += w * q[1]
				}
				yr[c0] = xr[c0] - si*a0
				yr[c0+1] = xr[c0+1] - si*a1
				c0 += 2
			default:
				op.single(lin, ws, si, y, x, tmp, i, c0)
				c0++
			}
		}
	}
}
