package eigen

import (
	"math"

	"github.com/cleave-seg/cleave/segment/internal/unionfind"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// coarsen builds the next coarser level by heavy-edge matching and the
// Galerkin product W_c = Pᵀ W P (Cour, Benezit and Shi 2005 use such
// multiscale graphs; heavy-edge matching is common practice in multilevel
// graph partitioning). P is the n×n_c aggregation matrix with P_ia = 1
// when node i belongs to aggregate a. Because Pᵀ D P = D_c when self loops
// are kept, the interpolation z = D^1/2 P D_c^-1/2 z_c has orthonormal
// columns and L_c = Pzᵀ L Pz: coarse eigenvalues are upper bounds of the
// fine ones (Cauchy interlacing). Returns nil when matching stalls.
func coarsen(lv *level, workers int) *level { return coarsenIn(lv, workers, nil) }

// coarsenIn is coarsen with the arrays of small levels from pl's arenas
// (pool.ints and the like; nil: allocated).
func coarsenIn(lv *level, workers int, pl *pool) *level {
	n := lv.n
	const unmatched = -1
	mate := pl.int32s(n)
	for i := range mate {
		mate[i] = unmatched
	}
	// Visit nodes in index order; pair each free node with the free
	// neighbour of largest normalized weight w_ij/sqrt(d_i d_j), ties to
	// the earlier stored entry. The largest weight wmax is kept by a
	// comparison, not the builtin max, whose NaN and signed-zero rules
	// cost branches (the weights are positive and finite): the matching
	// loop's wmax lines were 200 of 11,700 ms of a profile of the
	// 116,736-node command.
	var cb []int32
	var wb []float32
	for i := 0; i < n; i++ {
		if mate[i] != unmatched {
			continue
		}
		best, bw, wmax := -1, -1.0, 0.0
		si := lv.s[i]
		if sg := lv.sg; sg != nil {
			// The stencil's slots in order: its neighbours in ascending
			// order, as the compressed rows give them (a slot holding 0
			// is no edge, and every neighbour outside the image is 0).
			for f, v := range sg.wt[i*sg.k : i*sg.k+sg.k] {
				if v == 0 {
					continue
				}
				j := i + sg.lin[f]
				w := float64(v) * si * lv.s[j]
				if w > wmax {
					wmax = w
				}
				if mate[j] != unmatched {
					continue
				}
				if w > bw {
					best, bw = j, w
				}
			}
		} else {
			cols, wts := lv.row(i, cb, wb)
			for p, jj := range cols {
				j := int(jj)
				if j == i {
					continue
				}
				w := float64(wts[p]) * si * lv.s[j]
				if w > wmax {
					wmax = w
				}
				if mate[j] != unmatched {
					continue
				}
				if w > bw {
					best, bw = j, w
				}
			}
		}
		if best >= 0 && bw >= strongFraction*wmax {
			mate[i], mate[best] = int32(best), int32(i)
		} else {
			mate[i] = int32(i)
		}
	}
	// Representatives: a pair is led by its smaller node.
	parent := unionfind.Forest(pl.int32s(n))
	singles := 0
	for i := range parent {
		parent[i] = min(int32(i), mate[i])
		if int(mate[i]) == i {
			singles++
		}
	}
	if float64(n-(n-singles)/2) > 0.75*float64(n) {
		// Matching stalls on hubs (a star pairs its centre once): let
		// each single node join the aggregate of its heaviest neighbour.
		for i := 0; i < n; i++ {
			if int(mate[i]) != i {
				continue
			}
			best, bw := -1, -1.0
			cols, wts := lv.row(i, cb, wb)
			if lv.sg != nil {
				cb, wb = cols, wts
			}
			for p, jj := range cols {
				j := int(jj)
				if j == i {
					continue
				}
				if w := float64(wts[p]) * lv.s[j]; w > bw {
					best, bw = j, w
				}
			}
			if best >= 0 {
				if r := parent.Find(int32(best)); int(r) != i {
					parent[i] = r
				}
			}
		}
	}
	agg := pl.int32s(n)
	id := pl.int32s(n)
	for i := range id {
		id[i] = -1
	}
	nc := 0
	for i := 0; i < n; i++ {
		r := parent.Find(int32(i))
		if id[r] < 0 {
			id[r] = int32(nc)
			nc++
		}
		agg[i] = id[r]
	}
	if float64(nc) > 0.9*float64(n) {
		return nil
	}
	lv.agg = agg
	// Members of each aggregate in ascending node order.
	lv.memPtr = pl.ints(nc + 1)
	for _, a := range agg {
		lv.memPtr[a+1]++
	}
	for a := 0; a < nc; a++ {
		lv.memPtr[a+1] += lv.memPtr[a]
	}
	lv.mem = pl.int32s(n)
	fill := pl.ints(nc)
	copy(fill, lv.memPtr[:nc])
	for i, a := range agg {
		lv.mem[fill[a]] = int32(i)
		fill[a]++
	}

	// Galerkin product, rows in fixed chunks built independently.
	nch := (nc + rowsPerChunk - 1) / rowsPerChunk
	rowPtr := pl.ints(nc + 1)
	var c *level
	if serial(nch, workers) {
		// On the calling goroutine: one scratch, and the chunks' rows
		// from pl's arenas with room for the members' rows (a bound of
		// the coarse rows' entries), so that nothing grows.
		var outBuf [1]chunkOut
		outs := outBuf[:]
		if nch > 1 {
			outs = make([]chunkOut, nch)
		}
		sc := galerkinScratch{acc: pl.floats(nc), seen: pl.int32s(nc), cols: pl.int32s(nc)[:0]}
		for c := range outs {
			a0, a1 := c*rowsPerChunk, min((c+1)*rowsPerChunk, nc)
			bound := memberEntries(lv, a0, a1)
			co := chunkOut{cnt: pl.ints(a1 - a0)[:0], col: pl.int32s(bound)[:0], wt: pl.float32s(bound)[:0]}
			galerkinRows(lv, agg, a0, a1, &sc, &co)
			outs[c] = co
		}
		total := 0
		a := 0
		for _, co := range outs {
			for _, k := range co.cnt {
				total += k
				a++
				rowPtr[a] = total
			}
		}
		if nch == 1 {
			c = newLevelIn(pl, nc, rowPtr, outs[0].col, outs[0].wt)
		} else {
			col := make([]int32, total)
			wt := make([]float32, total)
			for ch, co := range outs {
				at := rowPtr[ch*rowsPerChunk]
				copy(col[at:], co.col)
				copy(wt[at:], co.wt)
			}
			c = newLevelIn(pl, nc, rowPtr, col, wt)
		}
	} else {
		// Dense accumulators over the coarse columns, one per running
		// goroutine (at most workers at a time), reused from chunk to
		// chunk: every row clears what it touched. One per chunk made
		// the allocations grow with the square of the size (1.2 GB of
		// garbage at a million nodes).
		free := make(chan *galerkinScratch, max(workers, 1))
		take := func() *galerkinScratch {
			select {
			case sc := <-free:
				return sc
			default:
				return &galerkinScratch{acc: make([]float64, nc), seen: make([]int32, nc)}
			}
		}
		give := func(sc *galerkinScratch) {
			select {
			case free <- sc:
			default:
			}
		}
		// Two passes: the coarse rows' lengths, then the rows written
		// in place into arrays of the exact size. The chunks' rows
		// were built in arrays of half their members' entries and then
		// copied: at 116,736 nodes about 37 MB of new memory besides
		// the 24 MB of the first level's rows (their pages zeroed by
		// the kernel on first touch), at a million nodes about nine
		// times as much.
		parallel.For(nch, workers, func(c int) {
			a0, a1 := c*rowsPerChunk, min((c+1)*rowsPerChunk, nc)
			sc := take()
			galerkinCounts(lv, agg, a0, a1, sc, rowPtr[a0+1:a1+1])
			give(sc)
		})
		for a := 0; a < nc; a++ {
			rowPtr[a+1] += rowPtr[a]
		}
		total := rowPtr[nc]
		col := make([]int32, total)
		wt := make([]float32, total)
		parallel.For(nch, workers, func(c int) {
			a0, a1 := c*rowsPerChunk, min((c+1)*rowsPerChunk, nc)
			p0, p1 := rowPtr[a0], rowPtr[a1]
			sc := take()
			co := chunkOut{cnt: sc.cnt[:0], col: col[p0:p0:p1], wt: wt[p0:p0:p1]}
			galerkinRows(lv, agg, a0, a1, sc, &co)
			if len(co.col) != p1-p0 || cap(co.col) != p1-p0 {
				panic("eigen: internal error: the Galerkin rows' lengths differ between the passes")
			}
			sc.cnt = co.cnt[:0]
			give(sc)
		})
		c = newLevelIn(pl, nc, rowPtr, col, wt)
	}
	lv.pz = pl.floats(n)
	for i, a := range agg {
		lv.pz[i] = math.Sqrt(lv.deg[i] / c.deg[a])
	}
	return c
}

// rowsPerChunk is the number of coarse rows of a chunk of the Galerkin
// product.
const rowsPerChunk = 2048

// chunkOut is the coarse rows a0..a1-1 of a chunk of the Galerkin
// product: their lengths and their entries in order.
type chunkOut struct {
	cnt []int
	col []int32
	wt  []float32
}

// galerkinScratch is a dense accumulator over the coarse columns (acc),
// the marks of the columns a row touched (seen, 0 or 1) and their list
// in order of first appearance (cols); every row clears what it touched.
type galerkinScratch struct {
	acc  []float64
	seen []int32
	cols []int32
	cnt  []int // the row lengths of a chunk (the parallel path's second pass)
}

// memberEntries is the number of stored entries of the rows of the
// members of coarse nodes a0..a1-1 (an upper bound of their coarse
// rows' entries).
func memberEntries(lv *level, a0, a1 int) int {
	bound := 0
	for _, u := range lv.mem[lv.memPtr[a0]:lv.memPtr[a1]] {
		bound += lv.rowBound(int(u))
	}
	return bound
}

// galerkinRows appends to co the coarse rows a0..a1-1 of W_c = Pᵀ W P:
// each the sum of its members' rows, the columns mapped by agg, in order
// of first appearance (the members in ascending order, each row's
// entries in order).
func galerkinRows(lv *level, agg []int32, a0, a1 int, sc *galerkinScratch, co *chunkOut) {
	acc, seen, cols := sc.acc, sc.seen, sc.cols[:cap(sc.cols)]
	var cb []int32
	var wb []float32
	for a := a0; a < a1; a++ {
		mem := lv.mem[lv.memPtr[a]:lv.memPtr[a+1]]
		// Every entry is written to cols and kept (nc advanced) only at
		// its column's first appearance, without a branch on that test
		// (the order of first appearance, so the rows, are as before;
		// the first level of the coins pixel graph at 116,736 nodes took
		// about half the CPU time of the branching loop); cols must have
		// room for all the members' entries.
		need := 0
		for _, u := range mem {
			need += lv.rowBound(int(u))
		}
		if len(cols) < need {
			cols = make([]int32, 2*need)
		}
		nc := 0
		for _, u := range mem {
			if sg := lv.sg; sg != nil {
				// The stencil's slots in order, as in matching.
				lin := sg.lin[:sg.k]
				for f, v := range sg.wt[int(u)*sg.k : int(u)*sg.k+sg.k] {
					if v == 0 {
						continue
					}
					b := agg[int(u)+lin[f]]
					cols[nc] = b
					nc += int(1 - seen[b])
					seen[b] = 1
					acc[b] += float64(v)
				}
				continue
			}
			rc, rw := lv.row(int(u), cb, wb)
			rw = rw[:len(rc)]
			for p, j := range rc {
				b := agg[j]
				cols[nc] = b
				nc += int(1 - seen[b])
				seen[b] = 1
				acc[b] += float64(rw[p])
			}
		}
		for _, b := range cols[:nc] {
			co.col = append(co.col, b)
			co.wt = append(co.wt, float32(acc[b]))
			acc[b], seen[b] = 0, 0
		}
		co.cnt = append(co.cnt, nc)
	}
	sc.cols = cols[:0]
}

// galerkinCounts sets cnt[a-a0] to the number of entries of coarse row a
// of W_c = Pᵀ W P for a = a0..a1-1: the distinct coarse columns of its
// members' entries, counted as galerkinRows lists them (sc's marks are
// left clear).
func galerkinCounts(lv *level, agg []int32, a0, a1 int, sc *galerkinScratch, cnt []int) {
	seen, cols := sc.seen, sc.cols[:cap(sc.cols)]
	var cb []int32
	var wb []float32
	for a := a0; a < a1; a++ {
		mem := lv.mem[lv.memPtr[a]:lv.memPtr[a+1]]
		need := 0
		for _, u := range mem {
			need += lv.rowBound(int(u))
		}
		if len(cols) < need {
			cols = make([]int32, 2*need)
		}
		nc := 0
		for _, u := range mem {
			if sg := lv.sg; sg != nil {
				lin := sg.lin[:sg.k]
				for f, v := range sg.wt[int(u)*sg.k : int(u)*sg.k+sg.k] {
					if v == 0 {
						continue
					}
					b := agg[int(u)+lin[f]]
					cols[nc] = b
					nc += int(1 - seen[b])
					seen[b] = 1
				}
				continue
			}
			rc, _ := lv.row(int(u), cb, wb)
			for _, j := range rc {
				b := agg[j]
				cols[nc] = b
				nc += int(1 - seen[b])
				seen[b] = 1
			}
		}
		for _, b := range cols[:nc] {
			seen[b] = 0
		}
		cnt[a-a0] = nc
	}
	sc.cols = cols[:0]
}

// prolong interpolates a coarse block to the fine level: z_i =
// sqrt(d_i / d_c[a]) z_c[a] for i in aggregate a, i.e. y = D^-1/2 z is
// constant on aggregates (Shi and Malik's generalized eigenvectors are
// interpolated piecewise constant), and z keeps unit norm.
func prolong(fine, coarse *level, zc *block, workers int, pl *pool) *block {
	out := pl.get(fine.n, zc.m)
	clear(out.v)
	prolongAdd(fine, coarse, zc, out, 1, workers)
	return out
}

// strongFraction is the smallest normalized weight, relative to the
// heaviest edge of a node, that matching may use: pairing a node with a
// weakly coupled neighbour (across a region boundary) makes the coarse
// eigenvalues poor upper bounds. The "strong connection" test is common
// practice in algebraic multigrid; 0.3 was measured best on the coins
// pixel graph.
const strongFraction = 0.3

// coarsenTwice applies coarsen twice and folds the two aggregations into
// one (double pairwise aggregation, Notay 2010): P = P1 P2 is again an
// aggregation matrix, and the second level's W_c = P2ᵀ P1ᵀ W P1 P2 is the
// Galerkin operator of the folded aggregation. Returns the first coarse
// level alone when the second matching stalls, nil when the first does.
func coarsenTwice(lv *level, workers int, pl *pool) *level {
	c1 := coarsenIn(lv, workers, pl)
	if c1 == nil {
		return nil
	}
	c2 := coarsenIn(c1, workers, pl)
	if c2 == nil {
		return c1
	}
	nc := c2.n
	for i, a := range lv.agg {
		lv.agg[i] = c1.agg[a]
	}
	lv.memPtr = pl.ints(nc + 1)
	for _, a := range lv.agg {
		lv.memPtr[a+1]++
	}
	for a := 0; a < nc; a++ {
		lv.memPtr[a+1] += lv.memPtr[a]
	}
	fill := pl.ints(nc)
	copy(fill, lv.memPtr[:nc])
	for i, a := range lv.agg {
		lv.mem[fill[a]] = int32(i)
		fill[a]++
	}
	for i, a := range lv.agg {
		lv.pz[i] = math.Sqrt(lv.deg[i] / c2.deg[a])
	}
	return c2
}
