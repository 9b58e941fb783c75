package eigen

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestEigSymAsGonum checks eigSym against gonum's mat.EigenSym, whose
// LAPACK call it makes without the allocations: eigenvalues and
// eigenvectors must agree bit for bit (the solver's arithmetic must not
// change). Random symmetric matrices of 1 to 40 rows, one with a
// repeated eigenvalue (the identity plus a rank-one term) and one
// scaled far below 1 (Dsyev rescales those).
func TestEigSymAsGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	type tc struct {
		n     int
		scale float64
		rank1 bool
	}
	var cases []tc
	for n := 1; n <= 40; n += 3 {
		cases = append(cases, tc{n, 1, false})
	}
	cases = append(cases, tc{12, 1, true}, tc{9, 1e-160, false})
	for _, c := range cases {
		n := c.n
		a := make([]float64, n*n) // upper triangle, zeros below
		u := make([]float64, n)
		for i := range u {
			u[i] = rng.Float64() - 0.5
		}
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				v := c.scale * (rng.Float64() - 0.5)
				if c.rank1 {
					v = u[i] * u[j]
					if i == j {
						v++
					}
				}
				a[i*n+j] = v
			}
		}
		sym := mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				sym.SetSym(i, j, a[i*n+j])
			}
		}
		var es mat.EigenSym
		if !es.Factorize(sym, true) {
			t.Fatalf("n=%d: gonum did not converge", n)
		}
		wantVals := es.Values(nil)
		var wantVecs mat.Dense
		es.VectorsTo(&wantVecs)
		pl := new(pool)
		vals, ok := pl.eigSym(n, a)
		if !ok {
			t.Fatalf("n=%d: eigSym did not converge", n)
		}
		for j := range wantVals {
			if math.Float64bits(vals[j]) != math.Float64bits(wantVals[j]) {
				t.Fatalf("n=%d: value %d is %v, gonum %v", n, j, vals[j], wantVals[j])
			}
		}
		for i, w := range wantVecs.RawMatrix().Data {
			if math.Float64bits(a[i]) != math.Float64bits(w) {
				t.Fatalf("n=%d: vector entry %d is %v, gonum %v", n, i, a[i], w)
			}
		}
	}
}

// dirty fills the storage a pool holds (free blocks, arena slabs, partial
// and running sums) with NaN (-7 in the integer arenas), so that any read of storage a solve did
// not write first shows in its result.
func dirty(pl *pool) {
	nan := math.NaN()
	fill := func(v []float64) {
		v = v[:cap(v)]
		for i := range v {
			v[i] = nan
		}
	}
	for _, f := range pl.free {
		fill(f)
	}
	fill(pl.scratch.slab)
	fill(pl.part)
	for i := range pl.intScratch.slab {
		pl.intScratch.slab[i] = -7
	}
	for i := range pl.int32Scratch.slab {
		pl.int32Scratch.slab[i] = -7
	}
	for i := range pl.float32Scratch.slab {
		pl.float32Scratch.slab[i] = float32(nan)
	}
	for _, s := range pl.sums {
		fill(s)
	}
}

// TestPooledAsFresh checks that a solve gives the same result, bit for
// bit, with the block storage and scratch of a pool that earlier solves
// of other graphs used (then filled with NaN) as with a new pool: the
// re-cut's small solves reuse one pool after another, and what the pool
// holds must never reach a result. Object graphs of about 40 to 400
// nodes at the re-cut's tolerance (1e-4) and superpixel-like graphs at
// the default one, k = 2 and 6, dense and coarse-to-fine paths.
func TestPooledAsFresh(t *testing.T) {
	type tc struct {
		name string
		lv   func(pl *pool) *level
		k    int
		tol  float64
	}
	obj := func(rad float64) func(*pool) *level {
		g := objectGraph(t, rad)
		return func(pl *pool) *level { return newLevelIn(pl, g.N, g.RowPtr, g.Col, g.Weight) }
	}
	pla := func(n int, seed uint64) func(*pool) *level {
		g := planarGraph(n, seed)
		return func(pl *pool) *level { return newLevelIn(pl, g.N, g.RowPtr, g.Col, g.Weight) }
	}
	cases := []tc{
		{"object40", obj(2.6), 2, 1e-4},
		{"object140", obj(4.8), 2, 1e-4},
		{"object400", obj(8), 2, 1e-4},
		{"planar25", pla(25, 2), 2, 1e-4},
		{"planar500", pla(500, 4), 2, 0},
		{"planar800k6", pla(800, 6), 6, 0},
	}
	solveWith := func(c tc, pl *pool) *Result {
		opt, err := Options{Tol: c.tol, Workers: 1, Seed: 9}.resolved()
		if err != nil {
			t.Fatal(err)
		}
		res, err := solveIn(context.Background(), c.lv(pl), c.k, opt, denseLimit(opt), pl)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		pl.release()
		return res
	}
	used := new(pool)
	for _, c := range cases {
		solveWith(c, used) // every case leaves its storage in the pool
	}
	for _, c := range cases {
		want := solveWith(c, new(pool))
		dirty(used)
		got := solveWith(c, used)
		for q := range want.Vectors {
			if math.Float64bits(got.Values[q]) != math.Float64bits(want.Values[q]) {
				t.Errorf("%s: value %d is %v with a used pool, %v with a new one", c.name, q, got.Values[q], want.Values[q])
			}
			for i, v := range want.Vectors[q] {
				if math.Float64bits(got.Vectors[q][i]) != math.Float64bits(v) {
					t.Fatalf("%s: vector %d entry %d is %v with a used pool, %v with a new one", c.name, q, i, got.Vectors[q][i], v)
				}
			}
		}
		if got.Iterations != want.Iterations {
			t.Errorf("%s: %d steps with a used pool, %d with a new one", c.name, got.Iterations, want.Iterations)
		}
	}
}

// TestEmptyBlocksHoldNoStorage: a block of no columns takes no storage
// from the pool, and svqb of such a block returns a new one, so that
// LOBPCG, which puts back the block it orthonormalized and later the one
// it kept, never lists one slab twice (two later blocks would then share
// it). A property of the code, no reference.
func TestEmptyBlocksHoldNoStorage(t *testing.T) {
	p := new(pool)
	p.put(&block{n: 8, m: 2, v: make([]float64, 16)})
	if b := p.get(8, 0); cap(b.v) != 0 || len(p.free) != 1 {
		t.Fatalf("get(8, 0): capacity %d, %d slabs left in the pool, want 0 and 1", cap(b.v), len(p.free))
	}
	o := &ops{lv: &level{n: 8}, pool: p, workers: 1}
	w := &block{n: 8, m: 0}
	w2, _ := o.svqb(w, 1e-12)
	if w2 == w {
		t.Fatal("svqb of an empty block returned the block itself")
	}
	o.put(w)
	o.put(w2)
	if len(p.free) != 1 {
		t.Fatalf("%d slabs in the pool after putting two empty blocks back, want 1", len(p.free))
	}
	a, b := p.get(8, 2), p.get(8, 2)
	if len(a.v) > 0 && len(b.v) > 0 && &a.v[0] == &b.v[0] {
		t.Fatal("two blocks share one slab")
	}
}
