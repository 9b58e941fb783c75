package eigen

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// ops bundles the dense block kernels of one level. Every reduction over
// rows adds per-chunk partial sums in chunk order (Golub and Van Loan's
// inner products, evaluated in a fixed order), so results do not depend on
// the number of workers.
type ops struct {
	lv      *level
	workers int
	part    []float64 // scratch for per-chunk partial sums
}

// gram returns the ma×mb matrix Aᵀ B (row-major).
func (o *ops) gram(a, b *block) []float64 {
	ma, mb := a.m, b.m
	nc := o.lv.nchunks()
	sz := ma * mb
	if cap(o.part) < nc*sz {
		o.part = make([]float64, nc*sz)
	}
	part := o.part[:nc*sz]
	parallel(nc, o.workers, func(c int) {
		g := part[c*sz : (c+1)*sz]
		clear(g)
		for i := o.lv.chunks[c]; i < o.lv.chunks[c+1]; i++ {
			ar := a.v[i*ma : i*ma+ma]
			br := b.v[i*mb : i*mb+mb]
			for p, x := range ar {
				gr := g[p*mb : p*mb+mb]
				for q, y := range br {
					gr[q] += x * y
				}
			}
		}
	})
	out := make([]float64, sz)
	for c := 0; c < nc; c++ {
		for t, v := range part[c*sz : (c+1)*sz] {
			out[t] += v
		}
	}
	return out
}

// colNorms returns the Euclidean norm of every column of a.
func (o *ops) colNorms(a *block) []float64 {
	m := a.m
	nc := o.lv.nchunks()
	if cap(o.part) < nc*m {
		o.part = make([]float64, nc*m)
	}
	part := o.part[:nc*m]
	parallel(nc, o.workers, func(c int) {
		g := part[c*m : (c+1)*m]
		clear(g)
		for i := o.lv.chunks[c]; i < o.lv.chunks[c+1]; i++ {
			for q, y := range a.v[i*m : i*m+m] {
				g[q] += y * y
			}
		}
	})
	out := make([]float64, m)
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

// combine sets out = Σ_t in[t] · C[rows of t] where C is ns×mc row-major
// and ns is the total width of the inputs.
func (o *ops) combine(out *block, in []*block, c []float64) {
	mc := out.m
	parallel(o.lv.nchunks(), o.workers, func(ch int) {
		for i := o.lv.chunks[ch]; i < o.lv.chunks[ch+1]; i++ {
			or := out.v[i*mc : i*mc+mc]
			clear(or)
			off := 0
			for _, b := range in {
				br := b.v[i*b.m : i*b.m+b.m]
				for p, x := range br {
					cr := c[(off+p)*mc : (off+p)*mc+mc]
					for q, y := range cr {
						or[q] += x * y
					}
				}
				off += b.m
			}
		}
	})
}

// subMul sets a = a - b·C with C of size b.m × a.m.
func (o *ops) subMul(a, b *block, c []float64) {
	ma, mb := a.m, b.m
	parallel(o.lv.nchunks(), o.workers, func(ch int) {
		for i := o.lv.chunks[ch]; i < o.lv.chunks[ch+1]; i++ {
			ar := a.v[i*ma : i*ma+ma]
			br := b.v[i*mb : i*mb+mb]
			for p, x := range br {
				cr := c[p*ma : p*ma+ma]
				for q, y := range cr {
					ar[q] -= x * y
				}
			}
		}
	})
}

// deflate removes the null-vector component: a = (I - z0 z0ᵀ) a.
func (o *ops) deflate(a *block) {
	z := &block{n: o.lv.n, m: 1, v: o.lv.z0}
	o.subMul(a, z, o.gram(z, a))
}

// orthogonalize makes w orthogonal to the orthonormal blocks in (block
// classical Gram-Schmidt, applied twice: "twice is enough", Golub and
// Van Loan section 5.2).
func (o *ops) orthogonalize(w *block, in ...*block) {
	for pass := 0; pass < 2; pass++ {
		for _, q := range in {
			if q == nil || q.m == 0 {
				continue
			}
			o.subMul(w, q, o.gram(q, w))
		}
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
		return w, nil
	}
	g := o.gram(w, w)
	dscale := make([]float64, m)
	for i := 0; i < m; i++ {
		if d := g[i*m+i]; d > 0 {
			dscale[i] = 1 / math.Sqrt(d)
		}
	}
	sym := mat.NewSymDense(m, nil)
	for i := 0; i < m; i++ {
		for j := i; j < m; j++ {
			sym.SetSym(i, j, dscale[i]*g[i*m+j]*dscale[j])
		}
	}
	var es mat.EigenSym
	if !es.Factorize(sym, true) {
		return &block{n: w.n, m: 0}, nil
	}
	vals := es.Values(nil)
	var vecs mat.Dense
	es.VectorsTo(&vecs)
	lmax := vals[m-1]
	var keep []int
	for j := m - 1; j >= 0; j-- {
		if vals[j] > drop*lmax && vals[j] > 0 {
			keep = append(keep, j)
		}
	}
	k := len(keep)
	t := make([]float64, m*k)
	for q, j := range keep {
		f := 1 / math.Sqrt(vals[j])
		for i := 0; i < m; i++ {
			t[i*k+q] = dscale[i] * vecs.At(i, j) * f
		}
	}
	out := newBlock(w.n, k)
	o.combine(out, []*block{w}, t)
	return out, t
}
