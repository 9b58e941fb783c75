package eigen

import "github.com/cleave-seg/cleave/segment/parallel"

// multigrid applies one cycle of an aggregation multigrid method (Golub
// and Van Loan, section 4.8 on multigrid; Galerkin coarse operators,
// damped Jacobi smoothing with ω = 0.7) for L x = b on the orthogonal
// complement of z0, as the LOBPCG preconditioner T ≈ L^+ (Knyazev 2001);
// its result may hold a multiple of z0, which LOBPCG removes.
// The coarse operator of level l+1 is Pzᵀ L_l Pz with Pz = D^1/2 P D_c^-1/2
// (see coarsen), so the restriction is Pzᵀ and the prolongation Pz.
// The top wDepth levels visit the next one twice (a W-cycle, only where
// the next level has at most wRatio of the nodes) with the
// coarse correction scaled by 1.5, the over-correction that unsmoothed
// aggregation needs (common practice in aggregation multigrid), and no
// post-smoothing; deeper levels use a symmetric V(1,1)-cycle. The
// coarsest level is solved exactly with the pseudo-inverse
// L_c^+ = Σ_{j>=1} u_j u_jᵀ / λ_j from its dense eigendecomposition.
type multigrid struct {
	levels  []*level // levels[0] is the finest level of this cycle
	workers int
	pinv    []float64 // dense pseudo-inverse of the coarsest L, row-major
	alpha   float64   // coarse-correction scale
	gamma   int       // coarse visits per level (2: W-cycle)
	post    int       // post-smoothing steps
	scratch []mgScratch
	depth0  int  // index of levels[0] in the full hierarchy
	wAll    bool // W-cycle on every level (dense graphs), not wDepth only
	// pool, when set, supplies the fine-size blocks of the top level of
	// the cycle (see apply) instead of scratch space held between calls.
	pool *pool
	// single takes the cycle's products on every level with applyL32
	// (Options.SinglePrecond), in t32 (see applyAt).
	single bool
	t32    []float32
}

// mgScratch holds the work blocks of one level, reused across cycles.
type mgScratch struct {
	x, r, tmp   []float64 // fine size
	rc, xc, res []float64 // coarse size
	// block headers of x, r and tmp, so that apply allocates none
	bx, br, btmp block
	bc           block // coarseSolve's result
}

// With wide set (graphs of at least longRows entries per row, coarsened
// four to one by coarsenTwice) every level is cycled as a W-cycle with
// one post-smoothing step: two coarse visits then cost half a fine
// product per level, and the post-smoothing removes the rough part of
// the unsmoothed aggregation's correction (see wideGraph).
//
// The pseudo-inverse is scratch of pl (pool.floats); each eigenvector is
// copied out of coarseVecs' column before its outer product is added, so
// the inner loop reads it contiguously (the same operations).
func newMultigrid(pl *pool, levels []*level, workers int, coarseVecs *block, coarseVals []float64, wide bool) *multigrid {
	nc := coarseVecs.n
	pinv := pl.floats(nc * nc)
	u := pl.floats(nc)
	for j, lam := range coarseVals {
		f := 1 / lam
		for a := range u {
			u[a] = coarseVecs.v[a*coarseVecs.m+j]
		}
		for a := 0; a < nc; a++ {
			ua := u[a] * f
			row := pinv[a*nc : a*nc+nc]
			row = row[:len(u)]
			for b, ub := range u {
				row[b] += ua * ub
			}
		}
	}
	post := 0
	if wide {
		post = 1
	}
	return &multigrid{levels: levels, workers: workers, pinv: pinv,
		alpha: 1.5, gamma: 2, post: post, wAll: wide,
		scratch: make([]mgScratch, len(levels))}
}

// sub returns the cycle restricted to levels[l:], sharing its buffers.
func (mg *multigrid) sub(l int) *multigrid {
	s := *mg
	s.levels = mg.levels[l:]
	s.scratch = mg.scratch[l:]
	s.depth0 = mg.depth0 + l
	return &s
}

// grow returns buf resliced to n values, or new storage when it is
// shorter: scratch of pl (pool.floats) when pl is set.
func grow(pl *pool, buf []float64, n int) []float64 {
	if cap(buf) < n {
		return pl.floats(n)
	}
	return buf[:n]
}

// apply returns x ≈ L^+ b for a block b on level l. The result lives in
// level l's scratch space and is valid until the next call on level l;
// at l = 0 with a pool it is a block of the pool that the caller owns,
// and the cycle's other fine-size blocks go back to the pool on return
// (at a million nodes the three scratch blocks of the input graph held
// 150 MB through the whole solve).
func (mg *multigrid) apply(l int, b *block) *block {
	lv := mg.levels[l]
	n, m := b.n, b.m
	if l == len(mg.levels)-1 {
		if l == 0 && mg.pool != nil {
			out := mg.pool.get(n, m)
			copy(out.v, mg.coarseSolve(b).v)
			return out
		}
		return mg.coarseSolve(b)
	}
	sc := &mg.scratch[l]
	next := mg.levels[l+1]
	var x, r, tmp *block
	if l == 0 && mg.pool != nil {
		x, r, tmp = mg.pool.get(n, m), mg.pool.get(n, m), mg.pool.get(n, m)
		defer mg.pool.put(r, tmp)
	} else {
		sc.x = grow(mg.pool, sc.x, n*m)
		sc.r = grow(mg.pool, sc.r, n*m)
		sc.tmp = grow(mg.pool, sc.tmp, n*m)
		sc.bx = block{n: n, m: m, v: sc.x}
		sc.br = block{n: n, m: m, v: sc.r}
		sc.btmp = block{n: n, m: m, v: sc.tmp}
		x, r, tmp = &sc.bx, &sc.br, &sc.btmp
	}
	sc.rc = grow(mg.pool, sc.rc, next.n*m)
	sc.xc = grow(mg.pool, sc.xc, next.n*m)
	sc.res = grow(mg.pool, sc.res, next.n*m)
	rc := &block{n: next.n, m: m, v: sc.rc}
	xc := &block{n: next.n, m: m, v: sc.xc}
	res := &block{n: next.n, m: m, v: sc.res}
	// Pre-smoothing from zero: x = ω D_L^-1 b.
	mg.rows(lv, jacobiFromZero, x, b)
	mg.residualAt(l, r, x, b, tmp)
	restrict(lv, next, r, rc, mg.workers)
	clear(xc.v)
	gamma, alpha, post := mg.gamma, mg.alpha, mg.post
	if (!mg.wAll && l+mg.depth0 >= wDepth) || float64(next.n) > wRatio*float64(lv.n) {
		gamma, alpha, post = 1, 1, 1
		if lv.nnz() >= longRows*lv.n {
			post = 0
		}
	}
	for g := 0; g < gamma; g++ {
		src := rc
		if g > 0 {
			if l+1 == len(mg.levels)-1 {
				break // the coarsest solve is exact
			}
			tc := block{n: next.n, m: m, v: tmp.v[:next.n*m]}
			mg.applyAt(l+1, res, xc, &tc)
			for t := range res.v {
				res.v[t] = rc.v[t] - res.v[t]
			}
			src = res
		}
		d := mg.apply(l+1, src)
		for t := range xc.v {
			xc.v[t] += d.v[t]
		}
	}
	prolongAdd(lv, next, xc, x, alpha, mg.workers)
	for s := 0; s < post; s++ {
		mg.residualAt(l, r, x, b, tmp)
		mg.rows(lv, jacobiAdd, x, r)
	}
	// No deflation here: Pz maps z0 of the coarse level to z0 of the fine
	// one and L z0 = 0, so null-vector components only pass upwards, and
	// LOBPCG deflates the preconditioned block itself.
	return x
}

// residualAt sets r = b - L x on the cycle's level l (tmp: scratch of
// x's shape), L x from applyAt.
func (mg *multigrid) residualAt(l int, r, x, b, tmp *block) {
	mg.applyAt(l, r, x, tmp)
	mg.rows(mg.levels[l], residualFrom, r, b)
}

// applyAt sets y = L x on the cycle's level l: with single set in
// single precision (applyL32 on the input graph, its sums in stored
// order; applyL32 in partial sums on the coarse levels, see
// csr32Rows), in the cycle's t32; else in double precision (applyL,
// tmp: scratch of x's shape).
func (mg *multigrid) applyAt(l int, y, x, tmp *block) {
	lv := mg.levels[l]
	if !mg.single {
		lv.applyL(y, x, tmp, mg.workers)
		return
	}
	if need := lv.n*x.m + single32Lanes; cap(mg.t32) < need {
		mg.t32 = make([]float32, need)
	}
	lv.applyL32(y, x, mg.t32, l+mg.depth0 > 0, mg.workers)
}

// The row operations of a cycle (mgRows): the pre-smoothing from zero x =
// ω D_L^-1 b, the residual r = b - L x (given L x in r) and the
// post-smoothing x += ω D_L^-1 r, ω = jacobiOmega.
const (
	jacobiFromZero = iota
	residualFrom
	jacobiAdd
)

// rows applies the row operation op (jacobiFromZero, residualFrom or
// jacobiAdd) to dst from src over lv's rows, on the calling goroutine
// when one goroutine would run the chunks (serial).
func (mg *multigrid) rows(lv *level, op int, dst, src *block) {
	if serial(lv.nchunks(), mg.workers) {
		mgRows(lv, op, dst, src, 0, lv.n)
		return
	}
	hd, hs := heapBlock(dst), heapBlock(src)
	parallel.For(lv.nchunks(), mg.workers, func(c int) {
		mgRows(lv, op, hd, hs, lv.chunks[c], lv.chunks[c+1])
	})
}

// mgRows is rows on rows r0..r1-1.
func mgRows(lv *level, op int, dst, src *block, r0, r1 int) {
	m := dst.m
	d, sv := dst.v[r0*m:r1*m], src.v[r0*m:r1*m]
	switch op {
	case jacobiFromZero:
		for i, f := range lv.jac[r0:r1] {
			dr, sr := d[i*m:i*m+m], sv[i*m:i*m+m]
			for q, v := range sr {
				dr[q] = f * v
			}
		}
	case residualFrom:
		for t, v := range sv {
			d[t] = v - d[t]
		}
	case jacobiAdd:
		for i, f := range lv.jac[r0:r1] {
			dr, sr := d[i*m:i*m+m], sv[i*m:i*m+m]
			for q, v := range sr {
				dr[q] += f * v
			}
		}
	}
}

// coarseSolve applies the pseudo-inverse of the coarsest L.
func (mg *multigrid) coarseSolve(b *block) *block {
	n, m := b.n, b.m
	sc := &mg.scratch[len(mg.levels)-1]
	sc.x = grow(mg.pool, sc.x, n*m)
	sc.bc = block{n: n, m: m, v: sc.x}
	x := &sc.bc
	clear(x.v)
	for a := 0; a < n; a++ {
		xa := x.v[a*m : a*m+m]
		for c, p := range mg.pinv[a*n : a*n+n] {
			bc := b.v[c*m : c*m+m]
			for q := range xa {
				xa[q] += p * bc[q]
			}
		}
	}
	return x
}

// restrict computes r_c = Pzᵀ r: r_c[a] = Σ_{i in a} sqrt(d_i/d_c[a]) r_i,
// the members of a taken in ascending order.
func restrict(fine, coarse *level, r, out *block, workers int) {
	if serial(coarse.nchunks(), workers) {
		restrictRows(fine, r, out, 0, coarse.n)
		return
	}
	hr, ho := heapBlock(r), heapBlock(out)
	parallel.For(coarse.nchunks(), workers, func(c int) {
		restrictRows(fine, hr, ho, coarse.chunks[c], coarse.chunks[c+1])
	})
}

// restrictRows is restrict on the coarse rows a0..a1-1.
func restrictRows(fine *level, r, out *block, a0, a1 int) {
	m := r.m
	for a := a0; a < a1; a++ {
		dst := out.v[a*m : a*m+m]
		clear(dst)
		for _, i := range fine.mem[fine.memPtr[a]:fine.memPtr[a+1]] {
			f := fine.pz[i]
			src := r.v[int(i)*m : int(i)*m+m]
			for q, v := range src {
				dst[q] += f * v
			}
		}
	}
}

// prolongAdd adds alpha · Pz zc to x: x_i += alpha sqrt(d_i/d_c[a]) zc[a]
// for i in aggregate a, i.e. y = D^-1/2 z is interpolated piecewise
// constant (Shi and Malik's generalized eigenvectors).
func prolongAdd(fine, coarse *level, zc, x *block, alpha float64, workers int) {
	if serial(fine.nchunks(), workers) {
		prolongRows(fine, zc, x, alpha, 0, fine.n)
		return
	}
	hz, hx := heapBlock(zc), heapBlock(x)
	parallel.For(fine.nchunks(), workers, func(c int) {
		prolongRows(fine, hz, hx, alpha, fine.chunks[c], fine.chunks[c+1])
	})
}

// prolongRows is prolongAdd on the fine rows r0..r1-1.
func prolongRows(fine *level, zc, x *block, alpha float64, r0, r1 int) {
	m := zc.m
	for i := r0; i < r1; i++ {
		a := int(fine.agg[i])
		f := alpha * fine.pz[i]
		src := zc.v[a*m : a*m+m]
		dst := x.v[i*m : i*m+m]
		for q, v := range src {
			dst[q] += f * v
		}
	}
}

// jacobiOmega is the damping ω of the multigrid's Jacobi steps.
const jacobiOmega = 0.7

// wDepth is the number of top levels cycled as a W-cycle (two coarse
// visits, no post-smoothing, over-correction 1.5); deeper levels use a
// symmetric V(1,1)-cycle without over-correction, which is a convergent
// inner solver. All-W cycles cost a fine product per level; all-V cycles
// needed twice the LOBPCG steps (measured on the coins pixel graph).
const wDepth = 2

// longRows is the mean number of stored entries per row from which a
// V-cycle level skips its post-smoothing: there the product costs more
// than the steps it saves. On the coins pixel graph (levels of 25 to 78
// entries per row) skipping it cut LOBPCG work by 4% and time by a
// tenth; on superpixel-like planar graphs (about 6 per row) it cost 20%
// more work (counted per solve).
const longRows = 16

// wRatio is the largest coarse-to-fine size ratio at which a level is
// cycled as a W-cycle: two coarse visits cost 2·ratio fine products, more
// than the fine level itself once matching pairs fewer than about half
// the nodes (irregular superpixel graphs), with no fewer LOBPCG steps to
// show for it (measured on planarGraph(3000) and the coins pixel graph).
const wRatio = 0.52
