package eigen

import (
	"math"
	"sync"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// ops bundles the dense block kernels of one level. Every reduction over
// rows adds per-chunk partial sums in chunk order (Golub and Van Loan's
// inner products, evaluated in a fixed order), so results do not depend on
// the number of workers.
type ops struct {
	lv      *level
	workers int
	pool    *pool // block storage and scratch shared by all levels of one solve
}

// get returns an n×m block whose contents are undefined; every caller
// overwrites it completely. Reusing storage keeps the garbage collector
// out of the iteration.
func (o *ops) get(m int) *block {
	return o.pl().get(o.lv.n, m)
}

// put releases the storage of blocks that are no longer used.
func (o *ops) put(bs ...*block) {
	o.pl().put(bs...)
}

// pl returns o's pool, made on first use.
func (o *ops) pl() *pool {
	if o.pool == nil {
		o.pool = new(pool)
	}
	return o.pool
}

// floats returns n zeroed values of scratch (pool.floats).
func (o *ops) floats(n int) []float64 { return o.pl().floats(n) }

// pool recycles block storage. Contents of a recycled block are whatever
// its last user left, so callers of get overwrite every entry (or clear
// it); results therefore never depend on what the pool holds.
type pool struct {
	free [][]float64
	// unit is the smallest capacity of new storage: a solve sets it to
	// the size of a full-width block on the input graph. Levels are
	// solved coarse to fine, so storage sized for the level at hand would
	// be too small for every finer level; sized by unit, the blocks of
	// the coarse levels serve the finer ones (on the coins pixel graph
	// this halved the block storage of a solve).
	unit int
	// part holds the per-chunk partial sums of the reductions (gramMulti,
	// colNorms) and sums the running sums of combineMulti and subMul, one
	// a goroutine (rowSums): scratch of the solve's levels, one at a time.
	part []float64
	sums [][]float64
	// scratch is the small dense work of a solve (Gram matrices,
	// coefficients, the dense eigenproblems and coarse levels of small
	// graphs), handed out by floats and valid until the solve ends
	// (release): a re-cut of one object makes hundreds of small solves,
	// where allocating these cost as much as the arithmetic.
	scratch arena[float64]
	// intScratch, int32Scratch and float32Scratch hold the levels of
	// small graphs (degrees, aggregates, coarse rows): scratch of the
	// solve like the above.
	intScratch     arena[int]
	int32Scratch   arena[int32]
	float32Scratch arena[float32]
}

// arena hands out slices of a slab in turn; release makes the whole slab
// free again. A request that does not fit starts a new slab (the slices
// of the old one stay valid), so a pool reused from solve to solve
// settles on one slab large enough for a whole solve.
type arena[T any] struct {
	slab  []T
	used  int // values of slab handed out
	total int // values handed out since the last release
	want  int // the most a solve took (at most arenaKeep)
}

// arenaMax is the largest request served from an arena; larger ones (the
// coarsest level of a stalled coarsening, up to 1000 nodes, and the
// levels of large graphs) are allocated on their own.
const arenaMax = 1 << 14

// arenaKeep is the largest slab an arena keeps between solves (values).
const arenaKeep = 1 << 19

// take returns n zeroed values, valid until release; a nil arena
// allocates them.
func (a *arena[T]) take(n int) []T {
	if a == nil || n > arenaMax {
		return make([]T, n)
	}
	if a.used+n > len(a.slab) {
		a.slab = make([]T, max(2*len(a.slab), a.want, n, 1024))
		a.used = 0
	}
	s := a.slab[a.used : a.used+n : a.used+n]
	a.used += n
	a.total += n
	clear(s)
	return s
}

// release makes the arena's storage free for the next solve.
func (a *arena[T]) release() {
	a.want = min(max(a.want, a.total), arenaKeep)
	if len(a.slab) > arenaKeep {
		a.slab = nil
	}
	a.used, a.total = 0, 0
}

// floats, ints, int32s and float32s return n zeroed values of the pool's
// arenas, valid until release; a nil pool allocates them.
func (p *pool) floats(n int) []float64 {
	if p == nil {
		return make([]float64, n)
	}
	return p.scratch.take(n)
}

func (p *pool) ints(n int) []int {
	if p == nil {
		return make([]int, n)
	}
	return p.intScratch.take(n)
}

func (p *pool) int32s(n int) []int32 {
	if p == nil {
		return make([]int32, n)
	}
	return p.int32Scratch.take(n)
}

func (p *pool) float32s(n int) []float32 {
	if p == nil {
		return make([]float32, n)
	}
	return p.float32Scratch.take(n)
}

// release makes the arenas' storage free for the next solve; no slice
// they handed out may be used after it.
func (p *pool) release() {
	p.scratch.release()
	p.intScratch.release()
	p.int32Scratch.release()
	p.float32Scratch.release()
}

// get returns an n×m block backed by the smallest free slice that fits,
// or by new storage of at least p.unit values.
func (p *pool) get(n, m int) *block {
	need := n * m
	if need == 0 {
		// No storage: a block of no columns must not hold a slab, or
		// putting it back (once by the one who dropped it, once by the
		// one who took it) would list the slab twice.
		return &block{n: n, m: m}
	}
	best := -1
	for t, f := range p.free {
		if cap(f) >= need && (best < 0 || cap(f) < cap(p.free[best])) {
			best = t
		}
	}
	if best < 0 {
		return &block{n: n, m: m, v: make([]float64, need, max(need, p.unit))}
	}
	v := p.free[best][:need]
	last := len(p.free) - 1
	p.free[best] = p.free[last]
	p.free = p.free[:last]
	return &block{n: n, m: m, v: v}
}

// put releases the storage of blocks that are no longer used.
func (p *pool) put(bs ...*block) {
	for _, b := range bs {
		if b != nil && cap(b.v) > 0 {
			p.free = append(p.free, b.v)
		}
	}
}

// size is the number of float64 values held.
func (p *pool) size() int {
	s := 0
	for _, f := range p.free {
		s += cap(f)
	}
	return s
}

// solvePools keeps the block storage of finished solves for the next
// ones: segment calls Smallest many times on small graphs, where
// allocation and garbage collection otherwise cost as much as the
// arithmetic. A pool is used by one solve at a time.
var solvePools = sync.Pool{New: func() any { return new(pool) }}

// poolKeep is the most storage (float64 values) a pool keeps between
// solves; larger pools are dropped so that one big solve does not pin
// its memory.
const poolKeep = 1 << 21

// gram returns the ma×mb matrix Aᵀ B (row-major).
func (o *ops) gram(a, b *block) []float64 {
	return o.gramMulti([]*block{a}, []*block{b})
}

// colNorms returns the Euclidean norm of every column of a (scratch of
// the solve, see pool.floats).
func (o *ops) colNorms(a *block) []float64 {
	m := a.m
	nc := o.lv.nchunks()
	part := o.partSums(nc * m)
	if serial(nc, o.workers) {
		for c := 0; c < nc; c++ {
			o.normsChunk(a, part, c)
		}
	} else {
		parallel.For(nc, o.workers, func(c int) { o.normsChunk(a, part, c) })
	}
	out := o.floats(m)
	for c := 0; c < nc; c++ {
		for q, v := range part[c*m : (c+1)*m] {
			out[q] += v
		}
	}
	for q := range out {
		out[q] = math.Sqrt(out[q])
	}
	return out
}

// normsChunk sets part's entries of chunk c to the sums of squares of
// a's columns over the chunk's rows.
func (o *ops) normsChunk(a *block, part []float64, c int) {
	m := a.m
	g := part[c*m : (c+1)*m]
	clear(g)
	for i := o.lv.chunks[c]; i < o.lv.chunks[c+1]; i++ {
		for q, y := range a.v[i*m : i*m+m] {
			g[q] += y * y
		}
	}
}

// partSums returns the pool's scratch for n per-chunk partial sums
// (contents undefined).
func (o *ops) partSums(n int) []float64 {
	p := o.pl()
	if cap(p.part) < n {
		p.part = make([]float64, n)
	}
	return p.part[:n]
}

// combine sets out = Σ_t in[t] · C[rows of t] where C is ns×mc row-major
// and ns is the total width of the inputs.
func (o *ops) combine(out *block, in []*block, c []float64) {
	o.combineMulti([]*block{out}, in, [][]float64{c})
}

// subMul sets a = a - [bs...]·C with C of size (total width of bs) × a.m.
func (o *ops) subMul(a *block, bs []*block, c []float64) {
	ma := a.m
	nb := width(bs)
	if useAVX && ma > 0 && nb > 0 {
		var buf [4]segment
		segs := nonEmpty(buf[:0], bs)
		// Input by input over a chunk's rows (combineRows), the sums
		// carried in a scratch of rows x ma (o.rowSums) and the last
		// input's subtracted from a: the same additions, row by row,
		// as over the inputs' rows side by side.
		nc := o.lv.nchunks()
		sums := o.rowSums(ma)
		if serial(nc, o.workers) {
			for ch := 0; ch < nc; ch++ {
				o.subMulChunk(a, segs, c, sums[0], ch)
			}
			return
		}
		ha, hs := heapBlock(a), heapSegments(segs)
		_ = parallel.ForErr(nc, o.workers, func(g, ch int) error {
			o.subMulChunk(ha, hs, c, sums[g], ch)
			return nil
		})
		return
	}
	ct := make([]float64, ma*nb)
	for p := 0; p < nb; p++ {
		for q := 0; q < ma; q++ {
			ct[q*nb+p] = c[p*ma+q]
		}
	}
	ha, hb := heapBlock(a), heapBlocks(bs)
	parallel.For(o.lv.nchunks(), o.workers, func(ch int) {
		s := make([]float64, nb)
		for i := o.lv.chunks[ch]; i < o.lv.chunks[ch+1]; i++ {
			if len(hb) == 1 {
				s = hb[0].v[i*nb : i*nb+nb]
			} else {
				gatherRow(s, hb, i)
			}
			dotRows(ha.v[i*ma:i*ma+ma], s, ct, true)
		}
	})
}

// subMulChunk is subMul's AVX path on the rows of chunk ch, with sums
// the scratch of the goroutine running it (at least rows x a.m values).
func (o *ops) subMulChunk(a *block, segs []segment, c []float64, sums []float64, ch int) {
	r0, r1 := o.lv.chunks[ch], o.lv.chunks[ch+1]
	if r1 <= r0 {
		return
	}
	ma := a.m
	var ini *float64
	for t, sg := range segs {
		m := sg.b.m
		if t == len(segs)-1 {
			combineRows(&a.v[r0*ma], ma, &sg.b.v[r0*m], m, m, &c[sg.off*ma], 1, ini, r1-r0)
			break
		}
		combineRows(&sums[0], ma, &sg.b.v[r0*m], m, m, &c[sg.off*ma], 0, ini, r1-r0)
		ini = &sums[0]
	}
}

// segment is a block of nonzero width among several taken side by side,
// with off its first column among them.
type segment struct {
	b   *block
	off int
}

// rowSums returns scratch of the largest chunk's rows x w values for each
// goroutine that a parallel.ForErr over o's row chunks runs (contents
// undefined), held by the pool so that the block operations of a solve
// allocate it once.
func (o *ops) rowSums(w int) [][]float64 {
	nc := o.lv.nchunks()
	rowsMax := 0
	for ch := 0; ch < nc; ch++ {
		rowsMax = max(rowsMax, o.lv.chunks[ch+1]-o.lv.chunks[ch])
	}
	ng := max(1, parallel.Goroutines(nc, o.workers))
	p := o.pl()
	for len(p.sums) < ng {
		p.sums = append(p.sums, nil)
	}
	for g := 0; g < ng; g++ {
		if cap(p.sums[g]) < rowsMax*w {
			p.sums[g] = make([]float64, rowsMax*w)
		}
	}
	return p.sums
}

// nonEmpty appends to dst the blocks of bs of nonzero width with their
// offsets.
func nonEmpty(dst []segment, bs []*block) []segment {
	off := 0
	for _, b := range bs {
		if b.m > 0 {
			dst = append(dst, segment{b, off})
		}
		off += b.m
	}
	return dst
}

// heapBlock, heapBlocks and heapSegments copy the block headers a
// parallel loop's closure captures, so that only the parallel path moves
// them to the heap: a closure handed to parallel.For escapes, and with
// it everything it refers to, while the serial path (serial) keeps the
// callers' headers and slices of them on the stack.
func heapBlock(b *block) *block {
	c := *b
	return &c
}

func heapBlocks(bs []*block) []*block {
	out := make([]*block, len(bs))
	for i, b := range bs {
		out[i] = heapBlock(b)
	}
	return out
}

func heapSegments(segs []segment) []segment {
	out := make([]segment, len(segs))
	for i, sg := range segs {
		out[i] = segment{heapBlock(sg.b), sg.off}
	}
	return out
}

// deflate removes the null-vector component: a = (I - z0 z0ᵀ) a.
func (o *ops) deflate(a *block) {
	z := block{n: o.lv.n, m: 1, v: o.lv.z0}
	o.subMul(a, []*block{&z}, o.gram(&z, a))
}

// orthogonalize makes w orthogonal to the orthonormal blocks in (block
// classical Gram-Schmidt, applied twice: "twice is enough", Golub and
// Van Loan section 5.2).
func (o *ops) orthogonalize(w *block, in ...*block) {
	var buf [4]*block
	qs := buf[:0]
	for _, q := range in {
		if q != nil && q.m > 0 {
			qs = append(qs, q)
		}
	}
	if len(qs) == 0 || w.m == 0 {
		return
	}
	for pass := 0; pass < 2; pass++ {
		o.subMul(w, qs, o.gramMulti(qs, []*block{w}))
	}
}

// svqb orthonormalizes the columns of w in place by the SVQB method of
// Stathopoulos and Wu (2002): with G = WᵀW, Δ = diag(G)^-1/2 and
// ΔGΔ = U Λ Uᵀ, W ← W Δ U Λ^-1/2. Directions with λ < drop·λ_max are
// discarded, so the result may have fewer columns; it also returns the
// transform T (w.m × out.m) so that a companion block (A w) can follow.
func (o *ops) svqb(w *block, drop float64) (*block, []float64) {
	m := w.m
	if m == 0 {
		// A new empty block, not w itself: callers put w back after the
		// call, and would then put the block they keep a second time.
		return &block{n: w.n}, nil
	}
	g := o.gram(w, w)
	dscale := o.floats(m)
	for i := 0; i < m; i++ {
		if d := g[i*m+i]; d > 0 {
			dscale[i] = 1 / math.Sqrt(d)
		}
	}
	// The upper triangle of ΔGΔ, zeros below: the array gonum's
	// mat.EigenSym factorizes (eigSym).
	vecs := o.floats(m * m)
	for i := 0; i < m; i++ {
		for j := i; j < m; j++ {
			vecs[i*m+j] = dscale[i] * g[i*m+j] * dscale[j]
		}
	}
	vals, ok := o.pl().eigSym(m, vecs)
	if !ok {
		return &block{n: w.n, m: 0}, nil
	}
	lmax := vals[m-1]
	var buf [16]int
	keep := buf[:0]
	for j := m - 1; j >= 0; j-- {
		if vals[j] > drop*lmax && vals[j] > 0 {
			keep = append(keep, j)
		}
	}
	k := len(keep)
	t := o.floats(m * k)
	for q, j := range keep {
		f := 1 / math.Sqrt(vals[j])
		for i := 0; i < m; i++ {
			t[i*k+q] = dscale[i] * vecs[i*m+j] * f
		}
	}
	out := o.get(k)
	o.combine(out, []*block{w}, t)
	return out, t
}

// gramMulti returns [as...]ᵀ [bs...] (na×nb, row-major) in one pass over
// the rows. Within a chunk, rows are taken four at a time so that each
// entry of the result is loaded and stored once per four products; the
// grouping is fixed by the chunk boundaries, so the order of additions
// does not depend on the worker count.
//
// The result is scratch of the solve (pool.floats).
func (o *ops) gramMulti(as, bs []*block) []float64 {
	na, nb := width(as), width(bs)
	nc := o.lv.nchunks()
	sz := na * nb
	part := o.partSums(nc * sz)
	if serial(nc, o.workers) {
		// The gathered rows of the chunks' last rows from the scratch
		// (the parallel path allocates them in the chunks that need them).
		ra, rb := o.floats(4*na), o.floats(4*nb)
		for c := 0; c < nc; c++ {
			o.gramChunk(as, bs, part, ra, rb, c)
		}
	} else {
		ha, hb := heapBlocks(as), heapBlocks(bs)
		parallel.For(nc, o.workers, func(c int) { o.gramChunk(ha, hb, part, nil, nil, c) })
	}
	out := o.floats(sz)
	for c := 0; c < nc; c++ {
		for t, v := range part[c*sz : (c+1)*sz] {
			out[t] += v
		}
	}
	return out
}

// gramChunk sets part's entries of chunk c to the chunk's rows' share of
// [as...]ᵀ [bs...]. ra and rb (4·na and 4·nb values) hold the gathered
// rows of the chunk's last rows (fewer than four); when nil they are
// allocated if needed, since buffers for every chunk made the heap grow
// between collections at a million nodes.
func (o *ops) gramChunk(as, bs []*block, part, ra, rb []float64, c int) {
	na, nb := width(as), width(bs)
	sz := na * nb
	{
		g := part[c*sz : (c+1)*sz]
		clear(g)
		r0, r1 := o.lv.chunks[c], o.lv.chunks[c+1]
		single := len(as) == 1 && len(bs) == 1
		if full := (r1 - r0) / 4; useAVX && full > 0 {
			// The groups of four rows in the AVX kernel, pair of blocks
			// by pair of blocks: each entry of g belongs to one pair, so
			// it gets the same additions in the same order as below.
			offA := 0
			for _, ab := range as {
				offB := 0
				for _, bb := range bs {
					if ab.m > 0 && bb.m > 0 {
						gramRows4(&g[offA*nb+offB], nb, &ab.v[r0*ab.m], ab.m, &bb.v[r0*bb.m], bb.m, full)
					}
					offB += bb.m
				}
				offA += ab.m
			}
			r0 += 4 * full
		}
		for i := r0; i < r1; i += 4 {
			cnt := min(4, r1-i)
			if !single && cnt == 4 {
				// Several blocks: take each pair of blocks in place; every
				// entry gets the same operations as through the gathered
				// rows below.
				offA := 0
				for _, ab := range as {
					ma := ab.m
					av := ab.v
					a0, a1, a2, a3 := av[i*ma:(i+1)*ma], av[(i+1)*ma:(i+2)*ma], av[(i+2)*ma:(i+3)*ma], av[(i+3)*ma:(i+4)*ma]
					offB := 0
					for _, bb := range bs {
						mb := bb.m
						bv := bb.v
						b0, b1, b2, b3 := bv[i*mb:(i+1)*mb], bv[(i+1)*mb:(i+2)*mb], bv[(i+2)*mb:(i+3)*mb], bv[(i+3)*mb:(i+4)*mb]
						for p := 0; p < ma; p++ {
							x0, x1, x2, x3 := a0[p], a1[p], a2[p], a3[p]
							gr := g[(offA+p)*nb+offB : (offA+p)*nb+offB+mb]
							gr = gr[:len(b0)]
							b1, b2, b3 := b1[:len(b0)], b2[:len(b0)], b3[:len(b0)]
							for q := range gr {
								gr[q] += x0*b0[q] + x1*b1[q] + x2*b2[q] + x3*b3[q]
							}
						}
						offB += mb
					}
					offA += ma
				}
				continue
			}
			var a0, a1, a2, a3, b0, b1, b2, b3 []float64
			if single && cnt == 4 {
				// Contiguous rows: slice them in place.
				av, bv := as[0].v, bs[0].v
				a0, a1, a2, a3 = av[i*na:(i+1)*na], av[(i+1)*na:(i+2)*na], av[(i+2)*na:(i+3)*na], av[(i+3)*na:(i+4)*na]
				b0, b1, b2, b3 = bv[i*nb:(i+1)*nb], bv[(i+1)*nb:(i+2)*nb], bv[(i+2)*nb:(i+3)*nb], bv[(i+3)*nb:(i+4)*nb]
			} else {
				if ra == nil {
					ra, rb = make([]float64, 4*na), make([]float64, 4*nb)
				}
				ra, rb = ra[:4*na], rb[:4*nb]
				clear(ra)
				clear(rb)
				for t := 0; t < cnt; t++ {
					gatherRow(ra[t*na:(t+1)*na], as, i+t)
					gatherRow(rb[t*nb:(t+1)*nb], bs, i+t)
				}
				a0, a1, a2, a3 = ra[:na], ra[na:2*na], ra[2*na:3*na], ra[3*na:4*na]
				b0, b1, b2, b3 = rb[:nb], rb[nb:2*nb], rb[2*nb:3*nb], rb[3*nb:4*nb]
			}
			for p := 0; p < na; p++ {
				x0, x1, x2, x3 := a0[p], a1[p], a2[p], a3[p]
				gr := g[p*nb : p*nb+nb]
				gr = gr[:len(b0)]
				b1, b2, b3 := b1[:len(b0)], b2[:len(b0)], b3[:len(b0)]
				for q := range gr {
					gr[q] += x0*b0[q] + x1*b1[q] + x2*b2[q] + x3*b3[q]
				}
			}
		}
	}
}

func width(bs []*block) int {
	w := 0
	for _, b := range bs {
		w += b.m
	}
	return w
}

// gatherRow copies row i of the blocks, side by side, into dst.
func gatherRow(dst []float64, bs []*block, i int) {
	off := 0
	for _, b := range bs {
		copy(dst[off:off+b.m], b.v[i*b.m:i*b.m+b.m])
		off += b.m
	}
}

// combineMulti sets outs[t] = [in...] · cs[t] for every t in one pass
// over the rows; cs[t] is ns×outs[t].m row-major with ns the total width
// of the inputs. Each output entry is one running sum over ns products.
// With two or more inputs each row of them is copied before that row of
// the outputs is written, so an output may share its storage with an
// input of the same width (LOBPCG updates X, AX, P and AP in place).
func (o *ops) combineMulti(outs []*block, in []*block, cs [][]float64) {
	ns := width(in)
	if mc := width(outs); useAVX && ns > 0 && mc > 0 {
		// All outputs at once in the AVX kernel, from the coefficient
		// matrices side by side (ns × mc), through a scratch of sums:
		// each output entry is the same running sum as in dotRows, and
		// no input row is gathered.
		cc := o.floats(ns * mc)
		off := 0
		for t, c := range cs {
			mt := outs[t].m
			for p := 0; p < ns; p++ {
				copy(cc[p*mc+off:p*mc+off+mt], c[p*mt:p*mt+mt])
			}
			off += mt
		}
		var buf [4]segment
		segs := nonEmpty(buf[:0], in)
		// The sums of a chunk's rows are carried in a scratch of rows
		// x mc (o.rowSums), input by input over all the chunk's rows
		// (combineRows, one call an input), then the outputs written,
		// so every input row is still read before that row of any
		// output is written.
		nc := o.lv.nchunks()
		sums := o.rowSums(mc)
		if serial(nc, o.workers) {
			for ch := 0; ch < nc; ch++ {
				o.combineChunk(outs, segs, cc, sums[0], ch)
			}
			return
		}
		ho, hs := heapBlocks(outs), heapSegments(segs)
		_ = parallel.ForErr(nc, o.workers, func(g, ch int) error {
			o.combineChunk(ho, hs, cc, sums[g], ch)
			return nil
		})
		return
	}
	// Transpose the coefficient matrices so the inner loop is contiguous.
	cts := make([][]float64, len(cs))
	for t, c := range cs {
		mc := outs[t].m
		ct := make([]float64, mc*ns)
		for p := 0; p < ns; p++ {
			for q := 0; q < mc; q++ {
				ct[q*ns+p] = c[p*mc+q]
			}
		}
		cts[t] = ct
	}
	ho, hi := heapBlocks(outs), heapBlocks(in)
	parallel.For(o.lv.nchunks(), o.workers, func(ch int) {
		s := make([]float64, ns)
		for i := o.lv.chunks[ch]; i < o.lv.chunks[ch+1]; i++ {
			if len(hi) == 1 {
				s = hi[0].v[i*ns : i*ns+ns]
			} else {
				gatherRow(s, hi, i)
			}
			for t, out := range ho {
				mc := out.m
				dotRows(out.v[i*mc:i*mc+mc], s, cts[t], false)
			}
		}
	})
}

// combineChunk is combineMulti's AVX path on the rows of chunk ch: cc
// holds the coefficient matrices side by side, sums is the scratch of
// the goroutine running it (at least rows x width(outs) values).
func (o *ops) combineChunk(outs []*block, segs []segment, cc, sums []float64, ch int) {
	r0, r1 := o.lv.chunks[ch], o.lv.chunks[ch+1]
	if r1 <= r0 {
		return
	}
	mc := width(outs)
	var ini *float64
	for _, sg := range segs {
		m := sg.b.m
		combineRows(&sums[0], mc, &sg.b.v[r0*m], m, m, &cc[sg.off*mc], 0, ini, r1-r0)
		ini = &sums[0]
	}
	if len(outs) == 1 {
		// One output: its rows are the sums' rows, side by side.
		copy(outs[0].v[r0*mc:r1*mc], sums[:(r1-r0)*mc])
		return
	}
	off := 0
	for _, out := range outs {
		mo := out.m
		dst := out.v[r0*mo : r1*mo]
		for i := 0; i < r1-r0; i++ {
			d, src := dst[i*mo:i*mo+mo], sums[i*mc+off:i*mc+off+mo]
			for q, v := range src {
				d[q] = v
			}
		}
		off += mo
	}
}

// dotRows sets dst[q] = s · ct[q*len(s):(q+1)*len(s)] (or subtracts it
// when sub is set). Four outputs are formed together so that four
// independent sums are in flight and each s[p] is loaded once per four.
func dotRows(dst, s, ct []float64, sub bool) {
	ns := len(s)
	q := 0
	for ; q+4 <= len(dst); q += 4 {
		c0 := ct[q*ns : q*ns+ns]
		c1 := ct[(q+1)*ns : (q+1)*ns+ns]
		c2 := ct[(q+2)*ns : (q+2)*ns+ns]
		c3 := ct[(q+3)*ns : (q+3)*ns+ns]
		c0, c1, c2, c3 = c0[:len(s)], c1[:len(s)], c2[:len(s)], c3[:len(s)]
		var a0, a1, a2, a3 float64
		for p, x := range s {
			a0 += x * c0[p]
			a1 += x * c1[p]
			a2 += x * c2[p]
			a3 += x * c3[p]
		}
		if sub {
			dst[q] -= a0
			dst[q+1] -= a1
			dst[q+2] -= a2
			dst[q+3] -= a3
		} else {
			dst[q], dst[q+1], dst[q+2], dst[q+3] = a0, a1, a2, a3
		}
	}
	for ; q < len(dst); q++ {
		c0 := ct[q*ns : q*ns+ns]
		c0 = c0[:len(s)]
		var a0 float64
		for p, x := range s {
			a0 += x * c0[p]
		}
		if sub {
			dst[q] -= a0
		} else {
			dst[q] = a0
		}
	}
}
