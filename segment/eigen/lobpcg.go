package eigen

import (
	"context"
	"errors"
	"math"

	"github.com/cleave-seg/cleave/segment/parallel"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/lapack"
	lapackgonum "gonum.org/v1/gonum/lapack/gonum"
)

// symEig returns the eigenvalues (ascending) and eigenvectors (row-major
// n×n, column j belongs to value j) of the symmetric matrix whose upper
// triangle is in a (row-major n×n), symmetrized as (a_ij + a_ji)/2, as
// gonum's mat.EigenSym computes them (eigSym). Both are scratch of p
// (pool.floats).
func (p *pool) symEig(n int, a []float64) ([]float64, []float64, error) {
	if n == 0 {
		return nil, nil, nil
	}
	s := p.floats(n * n)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			s[i*n+j] = 0.5 * (a[i*n+j] + a[j*n+i])
		}
	}
	vals, ok := p.eigSym(n, s)
	if !ok {
		return nil, nil, errors.New("eigen: dense symmetric eigensolver did not converge")
	}
	return vals, s, nil
}

// eigSym factorizes the symmetric matrix whose upper triangle is in a
// (row-major n×n, zeros below) by LAPACK's Dsyev in gonum's
// implementation, the routine, arguments, array and workspace size
// (queried) that gonum's mat.EigenSym.Factorize gives it, so the results
// are Factorize's bit for bit (TestEigSymAsGonum) without its
// allocations. It returns the eigenvalues ascending, with the
// eigenvectors overwriting a (column j belongs to value j), and false
// when the iteration did not converge.
func (p *pool) eigSym(n int, a []float64) ([]float64, bool) {
	w := p.floats(n)
	query := p.floats(1)
	lapackImpl.Dsyev(lapack.EVCompute, blas.Upper, n, a, n, w, query, -1)
	lwork := int(query[0])
	work := p.floats(lwork)
	return w, lapackImpl.Dsyev(lapack.EVCompute, blas.Upper, n, a, n, w, work, lwork)
}

// lapackImpl is gonum's LAPACK, the one mat.EigenSym calls.
var lapackImpl lapackgonum.Implementation

// lobpcgResult is the refined block of one level.
type lobpcgResult struct {
	x         *block
	theta     []float64
	residuals []float64
	iters     int
}

// lobpcg refines the block x (n×m, orthogonal to z0) towards the m
// smallest eigenpairs of L restricted to the complement of z0 by the
// locally optimal block preconditioned conjugate gradient method of
// Knyazev (2001). Each step performs the Rayleigh-Ritz procedure on
// span[X, W, P] with W = T R, T the preconditioner and R = L X - X Θ the
// residuals of the unconverged wanted columns, and P the previous search
// directions. P is taken as the part of
// the new Ritz vectors' coordinates that lies outside X, orthonormalized
// inside the small space (Hetmaniuk and Lehoucq 2006), so the basis stays
// orthonormal and Rayleigh-Ritz is a standard symmetric eigenproblem.
// It stops when the first want columns have ‖L x - θ x‖ <= tol or after
// maxIter steps. With guards set the guard columns (want..m-1) get
// residual directions too while a wanted column is unconverged: on dense
// pixel graphs a wanted pair next to a nearly equal guard otherwise
// converges only as fast as the guard does through Rayleigh-Ritz (see
// wideGraph). It checks ctx before each step and returns its error once
// it is done.
func lobpcg(ctx context.Context, o *ops, x *block, want int, tol float64, maxIter int, precond func(*block) *block, seed uint64, guards bool) (*lobpcgResult, error) {
	lv := o.lv
	n := lv.n
	m0 := x.m
	o.deflate(x)
	x, _ = o.svqb(x, 1e-14)
	if x.m < m0 {
		// Interpolated vectors became dependent: top up with random ones.
		x = fillRandom(x, m0, seed)
		o.deflate(x)
		x, _ = o.svqb(x, 1e-14)
	}
	m := x.m
	if m < want {
		return nil, errors.New("eigen: start block lost rank")
	}
	tmp := o.get(m)
	ax := o.get(m)
	lv.applyL(ax, x, tmp, o.workers)
	// Initial Rayleigh-Ritz on span X.
	h := o.gram(x, ax)
	theta, c, err := o.pl().symEig(m, h)
	if err != nil {
		return nil, err
	}
	xn, axn := o.get(m), o.get(m)
	o.combine(xn, []*block{x}, c)
	o.combine(axn, []*block{ax}, c)
	o.put(x, ax)
	x, ax = xn, axn

	var p, ap *block
	var res []float64
	it := 0
	for ; ; it++ {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		// The residual block and the product's scratch block go back to
		// the pool while the preconditioner runs, which needs blocks of
		// the same size (fewer blocks held at once: 50 MB each at a
		// million nodes).
		if tmp == nil {
			tmp = o.get(m)
		}
		r := o.get(m)
		if it > 0 && it%refreshEvery == 0 {
			// AX and AP are updated by linear combination, so rounding
			// drifts them away from L X and L P; recompute AX and
			// restart the directions so that residuals stay true.
			lv.applyL(ax, x, tmp, o.workers)
			o.put(p, ap)
			p, ap = nil, nil
		}
		// R = AX - X Θ
		if serial(lv.nchunks(), o.workers) {
			residualRows(r, x, ax, theta, 0, n)
		} else {
			hr, hx, hax, th := heapBlock(r), heapBlock(x), heapBlock(ax), theta
			parallel.For(lv.nchunks(), o.workers, func(ch int) {
				residualRows(hr, hx, hax, th, lv.chunks[ch], lv.chunks[ch+1])
			})
		}
		res = o.colNorms(r)
		done := true
		for q := 0; q < want; q++ {
			if !(res[q] <= tol) {
				done = false
			}
		}
		if done || it >= maxIter {
			o.put(r)
			break
		}
		// Residual directions only for the wanted columns still above
		// the tolerance: the guard columns improve through Rayleigh-Ritz
		// alone, which costs fewer products than it loses in steps
		// (measured on the coins pixel graph).
		var activeBuf [16]int
		active := activeBuf[:0]
		for q := 0; q < want; q++ {
			if !(res[q] <= tol) {
				active = append(active, q)
			}
		}
		if guards && len(active) > 0 {
			for q := want; q < m; q++ {
				active = append(active, q)
			}
		}
		w := o.get(len(active))
		if serial(lv.nchunks(), o.workers) {
			gatherColumns(w, r, active, 0, n)
		} else {
			hw, hr, ha := heapBlock(w), heapBlock(r), append([]int(nil), active...)
			parallel.For(lv.nchunks(), o.workers, func(ch int) {
				gatherColumns(hw, hr, ha, lv.chunks[ch], lv.chunks[ch+1])
			})
		}
		o.put(r, tmp)
		tmp = nil
		if precond != nil {
			pw := precond(w)
			o.put(w)
			w = pw
		}
		o.deflate(w)
		o.orthogonalize(w, x, p)
		for pass := 0; pass < 2; pass++ {
			w2, _ := o.svqb(w, 1e-12)
			o.put(w)
			w = w2
		}
		if w.m == 0 {
			o.put(w)
			break
		}
		aw := o.get(w.m)
		tmp = o.get(max(m, w.m))
		lv.applyL(aw, w, &block{n: n, m: w.m, v: tmp.v[:n*w.m]}, o.workers)

		var basisBuf, abasisBuf [3]*block
		basis := append(basisBuf[:0], x, w)
		abasis := append(abasisBuf[:0], ax, aw)
		if p != nil && p.m > 0 {
			basis = append(basis, p)
			abasis = append(abasis, ap)
		}
		ns := 0
		for _, b := range basis {
			ns += b.m
		}
		g := o.gramBlocks(basis, abasis)
		vals, vecs, err := o.pl().symEig(ns, g)
		if err != nil {
			return nil, err
		}
		// C = first m eigenvectors (ns×m); Z = C with its X rows zeroed,
		// made orthogonal to C and orthonormal in the small space.
		cm := o.floats(ns * m)
		for i := 0; i < ns; i++ {
			copy(cm[i*m:i*m+m], vecs[i*ns:i*ns+m])
		}
		z := smallComplement(o.pl(), cm, ns, m)
		mp := len(z) / ns
		// The new blocks overwrite the old ones of the same width in
		// place (combineMulti reads each row of its inputs before it
		// writes that row of its outputs); the others are released.
		var oldBuf [4]*block
		old := append(oldBuf[:0], w, aw)
		xn, axn := x, ax
		// The images A X and A P are either combined from [AX, AW, AP]
		// (ns products per entry) or recomputed as sparse products (about
		// nnz/n per entry, at a higher cost each): on sparse graphs such
		// as superpixel graphs the product is the cheaper, and it is
		// exact rather than updated.
		recompute := 2*lv.nnz() < ns*n
		if mp > 0 {
			var pn, apn *block
			if p != nil && p.m == mp {
				pn, apn = p, ap
			} else {
				old = append(old, p, ap)
				pn, apn = o.get(mp), o.get(mp)
			}
			o.combineMulti([]*block{xn, pn}, basis, [][]float64{cm, z})
			if recompute {
				lv.applyL(axn, xn, &block{n: n, m: m, v: tmp.v[:n*m]}, o.workers)
				lv.applyL(apn, pn, &block{n: n, m: mp, v: tmp.v[:n*mp]}, o.workers)
			} else {
				o.combineMulti([]*block{axn, apn}, abasis, [][]float64{cm, z})
			}
			p, ap = pn, apn
		} else {
			old = append(old, p, ap)
			o.combine(xn, basis, cm)
			if recompute {
				lv.applyL(axn, xn, &block{n: n, m: m, v: tmp.v[:n*m]}, o.workers)
			} else {
				o.combine(axn, abasis, cm)
			}
			p, ap = nil, nil
		}
		x, ax = xn, axn
		o.put(old...)
		theta = vals[:m]
	}
	o.put(tmp, ax, p, ap)
	return &lobpcgResult{x: x, theta: append([]float64(nil), theta...), residuals: res, iters: it}, nil
}

// residualRows sets rows r0..r1-1 of r to AX - X Θ.
func residualRows(r, x, ax *block, theta []float64, r0, r1 int) {
	m := r.m
	for i := r0; i < r1; i++ {
		rr, xr, axr := r.v[i*m:i*m+m], x.v[i*m:i*m+m], ax.v[i*m:i*m+m]
		for q := range rr {
			rr[q] = axr[q] - theta[q]*xr[q]
		}
	}
}

// gatherColumns sets rows r0..r1-1 of w to the columns active of r.
func gatherColumns(w, r *block, active []int, r0, r1 int) {
	m := r.m
	for i := r0; i < r1; i++ {
		for t, q := range active {
			w.v[i*w.m+t] = r.v[i*m+q]
		}
	}
}

// gramBlocks returns G = Sᵀ (A S) for S = [X, W, P] and A S = [AX, AW,
// AP]: the X-X block from Xᵀ AX (symmetrized), the others from one fused
// pass Sᵀ [AW, AP], mirrored by symmetry. The X-X block is diag(θ) in
// exact arithmetic, but taking it as such stalls LOBPCG on degenerate
// clusters: a coupling of 1e-10 between two Ritz vectors of one
// eigenvalue shows as a residual inside span X, which no new direction
// can remove (the torus 8x9 with k = 12 stopped at 5e-10 for 500 steps;
// with the computed block it converges to 1e-10 in 18).
func (o *ops) gramBlocks(basis, abasis []*block) []float64 {
	ns := width(basis)
	m := basis[0].m
	g := o.floats(ns * ns)
	xx := o.gram(basis[0], abasis[0])
	for a := 0; a < m; a++ {
		for b := 0; b < m; b++ {
			g[a*ns+b] = 0.5 * (xx[a*m+b] + xx[b*m+a])
		}
	}
	rest := ns - m
	blk := o.gramMulti(basis, abasis[1:]) // ns × rest
	for i := 0; i < ns; i++ {
		for j := 0; j < rest; j++ {
			v := blk[i*rest+j]
			if i >= m && i-m > j {
				continue // lower triangle of the trailing block: mirrored below
			}
			g[i*ns+m+j] = v
			g[(m+j)*ns+i] = v
		}
	}
	return g
}

// smallComplement returns Z (ns×mp, row-major): the coordinates of C
// (ns×m, orthonormal columns) with the first m rows (the X block) set to
// zero, orthogonalized against C twice and orthonormalized, dropping
// directions that vanish.
func smallComplement(pl *pool, c []float64, ns, m int) []float64 {
	z := pl.floats(ns * m)
	copy(z[m*m:], c[m*m:])
	for pass := 0; pass < 2; pass++ {
		// z -= C (Cᵀ z)
		ctz := pl.floats(m * m)
		for i := 0; i < ns; i++ {
			for a := 0; a < m; a++ {
				for b := 0; b < m; b++ {
					ctz[a*m+b] += c[i*m+a] * z[i*m+b]
				}
			}
		}
		for i := 0; i < ns; i++ {
			for a := 0; a < m; a++ {
				for b := 0; b < m; b++ {
					z[i*m+b] -= c[i*m+a] * ctz[a*m+b]
				}
			}
		}
	}
	// Orthonormalize the columns of z by modified Gram-Schmidt with
	// reorthogonalization (Golub and Van Loan section 5.2), dropping
	// columns that fall below 1e-10 of their original norm.
	var colsBuf [16][]float64
	cols := colsBuf[:0]
	for b := 0; b < m; b++ {
		v := pl.floats(ns)
		for i := 0; i < ns; i++ {
			v[i] = z[i*m+b]
		}
		norm0 := vnorm(v)
		if norm0 == 0 {
			continue
		}
		for pass := 0; pass < 2; pass++ {
			for _, u := range cols {
				d := vdot(u, v)
				for i := range v {
					v[i] -= d * u[i]
				}
			}
		}
		nv := vnorm(v)
		if nv <= 1e-10*norm0 || nv < 1e-300 {
			continue
		}
		for i := range v {
			v[i] /= nv
		}
		cols = append(cols, v)
	}
	mp := len(cols)
	out := pl.floats(ns * mp)
	for b, v := range cols {
		for i := 0; i < ns; i++ {
			out[i*mp+b] = v[i]
		}
	}
	return out
}

func vdot(a, b []float64) float64 {
	var s float64
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

func vnorm(a []float64) float64 { return math.Sqrt(vdot(a, a)) }

// refreshEvery is the step interval at which L X is recomputed.
const refreshEvery = 10

// ritzStart is the start block of width m made from the caller's vectors
// (Options.Start; each of length n): their span with z0 removed,
// orthonormalized (svqb, dropping dependent directions), topped up with
// random vectors when narrower than m, and rotated to its Rayleigh-Ritz
// vectors, of which the m of least Ritz value are kept (the
// Rayleigh-Ritz procedure, Golub and Van Loan section 8.1). lobpcg
// orthonormalizes the block again and repeats the procedure on it.
func ritzStart(o *ops, start [][]float64, m int, seed uint64) *block {
	n, s := o.lv.n, len(start)
	x := o.get(s)
	for q, v := range start {
		for i := 0; i < n; i++ {
			x.v[i*s+q] = v[i]
		}
	}
	o.deflate(x)
	xo, _ := o.svqb(x, 1e-12)
	o.put(x)
	if xo.m < m {
		xf := fillRandom(xo, m, seed)
		o.put(xo)
		o.deflate(xf)
		xo, _ = o.svqb(xf, 1e-12)
	}
	if xo.m <= m {
		return xo
	}
	w := xo.m
	ax, tmp := o.get(w), o.get(w)
	o.lv.applyL(ax, xo, tmp, o.workers)
	_, c, err := o.pl().symEig(w, o.gram(xo, ax))
	o.put(ax, tmp)
	if err != nil {
		// No rotation: lobpcg's own Rayleigh-Ritz step takes the whole
		// span instead (a wider block, the same result within Tol).
		return xo
	}
	cm := o.floats(w * m)
	for i := 0; i < w; i++ {
		copy(cm[i*m:i*m+m], c[i*w:i*w+m])
	}
	out := o.get(m)
	o.combine(out, []*block{xo}, cm)
	o.put(xo)
	return out
}
