package eigen

// coarsen builds the next coarser level by heavy-edge matching and the
// Galerkin product W_c = Pᵀ W P (Cour, Benezit and Shi 2005 use such
// multiscale graphs; heavy-edge matching is common practice in multilevel
// graph partitioning). P is the n×n_c aggregation matrix with P_ia = 1
// when node i belongs to aggregate a. Because Pᵀ D P = D_c when self loops
// are kept, the interpolation z = D^1/2 P D_c^-1/2 z_c has orthonormal
// columns and L_c = Pzᵀ L Pz: coarse eigenvalues are upper bounds of the
// fine ones (Cauchy interlacing). Returns nil when matching stalls.
func coarsen(lv *level, workers int) *level {
	n := lv.n
	const unmatched = -1
	mate := make([]int32, n)
	for i := range mate {
		mate[i] = unmatched
	}
	// Visit nodes in index order; pair each free node with the free
	// neighbour of largest normalized weight w_ij/sqrt(d_i d_j), ties to
	// the earlier stored entry.
	for i := 0; i < n; i++ {
		if mate[i] != unmatched {
			continue
		}
		best, bw, wmax := -1, -1.0, 0.0
		si := lv.s[i]
		for p := lv.rowPtr[i]; p < lv.rowPtr[i+1]; p++ {
			j := int(lv.col[p])
			if j == i {
				continue
			}
			w := float64(lv.wt[p]) * si * lv.s[j]
			wmax = max(wmax, w)
			if mate[j] != unmatched {
				continue
			}
			if w > bw {
				best, bw = j, w
			}
		}
		if best >= 0 && bw >= strongFraction*wmax {
			mate[i], mate[best] = int32(best), int32(i)
		} else {
			mate[i] = int32(i)
		}
	}
	agg := make([]int32, n)
	var first []int32 // first member of each aggregate
	for i := 0; i < n; i++ {
		j := int(mate[i])
		if j < i {
			agg[i] = agg[j]
			continue
		}
		agg[i] = int32(len(first))
		first = append(first, int32(i))
	}
	nc := len(first)
	if float64(nc) > 0.9*float64(n) {
		return nil
	}
	lv.agg = agg
	lv.pairs = make([]int32, 2*nc)
	for a, i := range first {
		lv.pairs[2*a] = i
		lv.pairs[2*a+1] = -1
		if j := mate[i]; j != i {
			lv.pairs[2*a+1] = j
		}
	}

	// Galerkin product, rows in fixed chunks built independently.
	const rowsPerChunk = 2048
	nch := (nc + rowsPerChunk - 1) / rowsPerChunk
	type chunkOut struct {
		cnt []int
		col []int32
		wt  []float32
	}
	outs := make([]chunkOut, nch)
	parallel(nch, workers, func(c int) {
		a0, a1 := c*rowsPerChunk, min((c+1)*rowsPerChunk, nc)
		mark := make([]int32, nc)
		for i := range mark {
			mark[i] = -1
		}
		var acc []float64
		var cols []int32
		co := chunkOut{cnt: make([]int, 0, a1-a0)}
		for a := a0; a < a1; a++ {
			cols = cols[:0]
			acc = acc[:0]
			i := int(first[a])
			members := [2]int{i, int(mate[i])}
			nm := 2
			if members[1] == i {
				nm = 1
			}
			for _, u := range members[:nm] {
				for p := lv.rowPtr[u]; p < lv.rowPtr[u+1]; p++ {
					b := agg[lv.col[p]]
					if mark[b] < 0 {
						mark[b] = int32(len(cols))
						cols = append(cols, b)
						acc = append(acc, 0)
					}
					acc[mark[b]] += float64(lv.wt[p])
				}
			}
			for t, b := range cols {
				mark[b] = -1
				co.col = append(co.col, b)
				co.wt = append(co.wt, float32(acc[t]))
			}
			co.cnt = append(co.cnt, len(cols))
		}
		outs[c] = co
	})
	rowPtr := make([]int, nc+1)
	total := 0
	a := 0
	for _, co := range outs {
		for _, k := range co.cnt {
			total += k
			a++
			rowPtr[a] = total
		}
	}
	col := make([]int32, 0, total)
	wt := make([]float32, 0, total)
	for _, co := range outs {
		col = append(col, co.col...)
		wt = append(wt, co.wt...)
	}
	return newLevel(nc, rowPtr, col, wt)
}

// prolong interpolates a coarse block to the fine level: z_i =
// sqrt(d_i / d_c[a]) z_c[a] for i in aggregate a, i.e. y = D^-1/2 z is
// constant on aggregates (Shi and Malik's generalized eigenvectors are
// interpolated piecewise constant), and z keeps unit norm.
func prolong(fine, coarse *level, zc *block, workers int) *block {
	out := newBlock(fine.n, zc.m)
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
