package eigen

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// DefaultTol is the residual tolerance used when Options.Tol is 0.
const DefaultTol = 1e-6

// DefaultMaxIter is the LOBPCG step limit on the input graph when
// Options.MaxIter is 0 (intermediate levels take at most midIter steps).
const DefaultMaxIter = 500

// denseMax is the largest graph solved directly by a dense symmetric
// eigensolver; above it the coarse-to-fine LOBPCG path is faster (for
// k = 2 the two cross near 70 nodes: BenchmarkCrossover).
const denseMax = 70

// denseMaxLoose replaces denseMax at loose residual targets, where the
// coarse-to-fine path (coarsened to coarseMaxLoose nodes) was faster from
// 32 nodes on and the dense solver below (k = 2 on planarGraph, tol 1e-4,
// one worker).
const denseMaxLoose = 30

// coarseMax is the size at which coarsening stops and the coarsest graph
// is solved densely. The W-cycle visits the coarsest level 2^levels
// times, so it is kept small.
const coarseMax = 60

// coarseMaxLoose replaces coarseMax at loose residual targets, where
// the dense solve of the coarsest level (cubic in its size) is a large
// share of the work (BenchmarkSmallestObject1500).
const coarseMaxLoose = 30

// coarseStall is the largest coarsest level solved densely when
// coarsening stops early (matching stalls).
const coarseStall = 1000

// midIter is the LOBPCG step limit on the intermediate levels: a few
// steps there give the next level a start that is good enough, more cost
// more than they save (measured on the coins pixel graph).
const midIter = 2

// prolongSmooth is the number of damped Jacobi steps z <- z - 0.7 L z
// applied to interpolated vectors; they remove most of the jumps of the
// piecewise-constant interpolation at the cost of one product each. At
// loose residual targets one step is kept: the second cost more products
// than it saved in LOBPCG steps (object and superpixel-like graphs).
const prolongSmooth = 2

// Options controls Smallest.
type Options struct {
	// Tol bounds the residual ‖L z - λ z‖ of every returned unit vector
	// z; 0 means DefaultTol (1e-6). Since |λ - θ| <= ‖r‖²/gap for a Ritz
	// value θ with residual r (Golub and Van Loan, section 8.1), 1e-6
	// gives eigenvalues of order 1e-4 to a few parts in 1e-4 or better.
	Tol float64
	// MaxIter limits the LOBPCG steps on the input graph; 0 means
	// DefaultMaxIter.
	MaxIter int
	// Workers is the number of goroutines for the sparse products and
	// block reductions; 0 means runtime.GOMAXPROCS(0). Results are
	// byte-identical for any value.
	Workers int
	// Seed seeds the random vectors used when the coarse levels supply
	// fewer start vectors than the block needs.
	Seed uint64
	// Start, when set, replaces the coarse-to-fine start of the LOBPCG
	// solve on the input graph: vectors of length N in the coordinates of
	// L's eigenvectors z (for instance a parent graph's eigenvectors
	// restricted to this subgraph's nodes, see segment's bisection). The
	// block starts from the Rayleigh-Ritz vectors of their span with z0
	// removed (Knyazev 2001 starts LOBPCG from any block; the closer its
	// span to the wanted eigenvectors, the fewer steps), topped up with
	// random vectors when the span is narrower than the block; the
	// multilevel preconditioner is built as without it. Graphs solved
	// densely ignore it. The result meets Tol either way.
	Start [][]float64
	// SinglePrecond takes the multigrid preconditioner's products in
	// single precision, on every level (on the input graph two per
	// cycle, two thirds of its products in a LOBPCG step of a pixel
	// graph): S x rounded to float32 and each row's sums in float32
	// (single.go; AVX kernels of eight float32 lanes). The
	// preconditioner only chooses the search directions; Rayleigh-Ritz,
	// the residuals and the returned pairs use the double-precision
	// product, so the result meets Tol either way, but it is not the
	// one without it bit for bit. Graphs solved densely, and starts
	// that use no preconditioner, ignore it.
	SinglePrecond bool
}

// Result holds the k smallest eigenpairs of L.
type Result struct {
	// Values are the eigenvalues in ascending order. Values[0] is the
	// Rayleigh quotient of the exact null vector z0 (0 up to rounding).
	Values []float64
	// Vectors[i] is the unit eigenvector z_i of L (length N), with its
	// entry of largest magnitude (the first such) positive. Vectors[0] is
	// z0 = D^1/2 1 / ‖D^1/2 1‖ exactly; the others are orthogonal to it.
	Vectors [][]float64
	// Residuals[i] = ‖L z_i - λ_i z_i‖, recomputed from the returned pairs.
	Residuals []float64
	// Iterations is the number of LOBPCG steps on the input graph itself
	// (0 when it was solved densely).
	Iterations int
}

// ErrNotConverged is returned (wrapped, together with the best result
// found) when some residual is still above the tolerance after MaxIter
// steps.
var ErrNotConverged = errors.New("eigen: LOBPCG did not converge")

// Smallest returns the k smallest eigenpairs of the symmetric normalized
// Laplacian L = I - D^-1/2 W D^-1/2 of g (Shi and Malik 2000). The graph
// must be connected; the null vector z0 = D^1/2 1/‖D^1/2 1‖ is deflated
// exactly and returned as the first pair. Graphs of at most 70 nodes (30
// at residual targets of 1e-5 and above), and requests whose LOBPCG block
// would not fit in N (k above about N/3), are solved densely; the others
// coarse to fine with block LOBPCG (see the package comment). It returns an error for a nil or empty graph, k < 1,
// k > N, malformed arrays, negative or non-finite weights and nodes of
// zero degree. When LOBPCG stops at MaxIter above the tolerance it returns
// the result together with an error wrapping ErrNotConverged.
func Smallest(g *affinity.Graph, k int, opt Options) (*Result, error) {
	return SmallestContext(context.Background(), g, k, opt)
}

// SmallestContext is Smallest that stops when ctx is done: the
// coarsening checks ctx before each level and LOBPCG before each step,
// and ctx's error is returned with no result.
func SmallestContext(ctx context.Context, g *affinity.Graph, k int, opt Options) (*Result, error) {
	return smallestContext(ctx, g, k, opt, denseLimit(opt))
}

// denseLimit is the dense crossover for opt's residual target: denseMax,
// or denseMaxLoose at loose targets.
func denseLimit(opt Options) int {
	if opt.Tol >= looseTol {
		return denseMaxLoose
	}
	return denseMax
}

// resolved returns opt with the defaults in place of a zero Tol and
// MaxIter, or an error for a tolerance that is not positive and finite or
// a negative MaxIter.
func (opt Options) resolved() (Options, error) {
	tol := opt.Tol
	if tol == 0 {
		tol = DefaultTol
	}
	if !(tol > 0) || math.IsInf(tol, 0) {
		return opt, fmt.Errorf("eigen: tolerance %v must be positive and finite", opt.Tol)
	}
	if opt.MaxIter < 0 {
		return opt, fmt.Errorf("eigen: MaxIter %d must not be negative", opt.MaxIter)
	}
	if opt.MaxIter == 0 {
		opt.MaxIter = DefaultMaxIter
	}
	opt.Tol = tol
	return opt, nil
}

// smallest is Smallest with the dense crossover limit as a parameter.
func smallest(g *affinity.Graph, k int, opt Options, limit int) (*Result, error) {
	return smallestContext(context.Background(), g, k, opt, limit)
}

// smallestContext is SmallestContext with the dense crossover limit as a
// parameter.
func smallestContext(ctx context.Context, g *affinity.Graph, k int, opt Options, limit int) (*Result, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if err := check(g, k); err != nil {
		return nil, err
	}
	opt, err := opt.resolved()
	if err != nil {
		return nil, err
	}
	pl := takePool()
	defer givePool(pl)
	return solve(ctx, newLevelIn(pl, g.N, g.RowPtr, g.Col, g.Weight), k, opt, limit, pl)
}

// SmallestStencil is SmallestContext on the pixel graph in stencil form
// (affinity.StencilGraph): the input level's products read the weights
// per offset and no compressed rows are built. The result is the one
// SmallestContext gives on g.CSR(), bit for bit: the stencil product
// adds the same terms in the same order (see stencilOp.mulRows), and
// everything else (degrees, chunks, coarsening) reads the rows in the
// same order.
func SmallestStencil(ctx context.Context, g *affinity.StencilGraph, k int, opt Options) (*Result, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if g == nil {
		return nil, errors.New("eigen: graph is nil")
	}
	n := g.Nodes()
	if n <= 0 {
		return nil, fmt.Errorf("eigen: graph has %d nodes", n)
	}
	if k < 1 || k > n {
		return nil, fmt.Errorf("eigen: k = %d out of range 1..%d (number of nodes)", k, n)
	}
	limit := denseLimit(opt)
	opt, err := opt.resolved()
	if err != nil {
		return nil, err
	}
	pl := takePool()
	defer givePool(pl)
	return solve(ctx, newStencilLevel(g, parallel.Workers(opt.Workers)), k, opt, limit, pl)
}

// solve is the solver behind both entry points, on the input level lv0;
// opt is resolved (Options.resolved).
func solve(ctx context.Context, lv0 *level, k int, opt Options, limit int, pl *pool) (*Result, error) {
	for i, d := range lv0.deg {
		if !(d > 0) || math.IsInf(d, 0) {
			return nil, fmt.Errorf("eigen: node %d has degree %v (the graph must be connected with finite weights)", i, d)
		}
	}
	n := lv0.n
	for q, v := range opt.Start {
		if len(v) != n {
			return nil, fmt.Errorf("eigen: start vector %d has length %d, want %d (the number of nodes)", q, len(v), n)
		}
		for _, f := range v {
			if math.IsNaN(f) || math.IsInf(f, 0) {
				return nil, fmt.Errorf("eigen: start vector %d has a non-finite entry", q)
			}
		}
	}
	return solveIn(ctx, lv0, k, opt, limit, pl)
}

// takePool returns a pool of solvePools for one solve.
func takePool() *pool { return solvePools.Get().(*pool) }

// givePool ends the solve of pl: its arenas are released and it goes
// back to solvePools, unless it holds more than poolKeep.
func givePool(pl *pool) {
	pl.release()
	if sz := pl.size(); sz <= poolKeep {
		solvePools.Put(pl)
	} else if sz >= collectAfter {
		// The blocks are garbage now; collect before the caller's
		// next allocations grow the heap toward the collector's
		// target, which was set while they were live.
		pl.free = nil
		runtime.GC()
	}
}

// solveIn is solve with its block storage and scratch from pl, which
// holds no block in use and whose arena is released (pool.release): the
// result does not depend on what pl's storage holds (TestPooledAsFresh).
func solveIn(ctx context.Context, lv0 *level, k int, opt Options, limit int, pl *pool) (*Result, error) {
	tol, maxIter := opt.Tol, opt.MaxIter
	workers := parallel.Workers(opt.Workers)
	n := lv0.n
	want := k - 1 // eigenpairs wanted besides z0
	o := &ops{lv: lv0, workers: workers, pool: pl}

	var vals []float64
	var vecs *block
	iters := 0
	var convErr error
	// LOBPCG needs the block, its residuals and the previous directions to
	// fit in the complement of z0; beyond that, solve densely.
	m := blockSize(want)
	pl.unit = n * max(m, k)
	if n <= limit || 3*m >= n-1 || want == 0 {
		if want > 0 {
			v, z, err := denseLevel(pl, lv0, want)
			if err != nil {
				return nil, err
			}
			vals, vecs = v, z
		}
	} else {
		levels := []*level{lv0}
		cmax := coarseMax
		if tol >= looseTol {
			cmax = coarseMaxLoose
		}
		// Pixel graphs get the stronger hierarchy of wideGraph; sparse
		// ones (superpixel and object graphs) keep pairwise aggregation
		// and the shallow W-cycle.
		wide := wideGraph(lv0)
		for cur := lv0; cur.n > cmax; {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			var c *level
			if wide {
				c = coarsenTwice(cur, workers, pl)
			} else {
				c = coarsenIn(cur, workers, pl)
			}
			if c == nil {
				break
			}
			levels = append(levels, c)
			cur = c
		}
		coarsest := levels[len(levels)-1]
		var x *block
		var mg *multigrid
		if coarsest.n > coarseStall {
			// Coarsening stalled far above the dense size: solve on the
			// input graph alone, from random vectors, without a
			// preconditioner (slow but sure).
			levels = levels[:1]
			coarsest = lv0
		}
		if len(levels) > 1 {
			cvals, cvecs, err := denseLevel(pl, coarsest, -1)
			if err != nil {
				return nil, err
			}
			mg = newMultigrid(pl, levels, workers, cvecs, cvals, wide)
			mg.pool = pl
			mg.single = opt.SinglePrecond
			cnt := min(m, coarsest.n-1)
			x = pl.get(coarsest.n, cnt)
			for i := 0; i < coarsest.n; i++ {
				copy(x.v[i*cnt:i*cnt+cnt], cvecs.v[i*cvecs.m:i*cvecs.m+cnt])
			}
			pl.put(cvecs)
		} else {
			x = newBlock(coarsest.n, 0)
		}
		top := len(levels) - 1
		if len(opt.Start) > 0 {
			// A start of the caller's replaces the coarse levels' vectors:
			// only the input level is solved.
			pl.put(x)
			x = ritzStart(o, opt.Start, m, opt.Seed)
			top = 0
		}
		for l := top; l >= 0; l-- {
			if l < top {
				xc := x
				x = prolong(levels[l], levels[l+1], xc, workers, pl)
				pl.put(xc)
				lx, tmp := pl.get(x.n, x.m), pl.get(x.n, x.m)
				smooth := prolongSmooth
				if tol >= looseTol {
					smooth = 1
				}
				lv := levels[l]
				for sm := 0; sm < smooth; sm++ {
					lv.applyL(lx, x, tmp, workers)
					if serial(lv.nchunks(), workers) {
						jacobiRows(x, lx, 0, lv.n)
					} else {
						hx, hl := heapBlock(x), heapBlock(lx)
						parallel.For(lv.nchunks(), workers, func(c int) {
							jacobiRows(hx, hl, lv.chunks[c], lv.chunks[c+1])
						})
					}
				}
				pl.put(lx, tmp)
			}
			if l == top && l == len(levels)-1 && len(levels) > 1 {
				continue // exact dense solution of the coarsest level
			}
			if l > 0 && 3*m >= levels[l].n-1 {
				continue // too small for the block: interpolate on
			}
			if l > 0 && tol >= looseTol {
				// A loose target is reached in about one more step on
				// the input graph, which costs less than the steps on
				// all intermediate levels (BenchmarkSmallestObject1500).
				continue
			}
			if x.m < m {
				// The coarser levels had fewer pairs than the block
				// needs (hub graphs shrink fast): add random vectors.
				x = fillRandom(x, m, opt.Seed)
			}
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			ol := &ops{lv: levels[l], workers: workers, pool: pl}
			var pre func(*block) *block
			if mg != nil {
				sub := mg.sub(l)
				pre = func(b *block) *block { return sub.apply(0, b) }
			}
			it := maxIter
			if l > 0 {
				it = min(it, midIter)
			}
			r, err := lobpcg(ctx, ol, x, want, levelTol(tol, l), it, pre, opt.Seed, wide)
			if err != nil {
				return nil, err
			}
			x = r.x
			if l == 0 {
				iters = r.iters
				for q := 0; q < want; q++ {
					if !(r.residuals[q] <= tol) {
						convErr = fmt.Errorf("%w: residual %.3g > %.3g after %d steps", ErrNotConverged, r.residuals[q], tol, r.iters)
						break
					}
				}
				vals = r.theta[:want]
			}
		}
		vecs = x
	}
	res := finish(o, vals, vecs, want)
	pl.put(vecs)
	res.Iterations = iters
	return res, convErr
}

// jacobiRows sets rows r0..r1-1 of x to x - 0.7 lx (one damped Jacobi
// step on an interpolated block, lx = L x).
func jacobiRows(x, lx *block, r0, r1 int) {
	m := x.m
	for t := r0 * m; t < r1*m; t++ {
		x.v[t] -= 0.7 * lx.v[t]
	}
}

// collectAfter is the size of a solve's block pool (float64 values) from
// which the solve ends with a garbage collection: 2^25 values, 256 MiB,
// about five blocks of 6 columns at a million nodes. At 1,050,624 nodes
// the heap target, set while the blocks were live (876 MB), let the
// k-means that follows grow the heap to 1.3 GB with 0.5 GB live
// (GODEBUG=gctrace=1); the collection costs one mark of the live heap,
// mostly pointer-free arrays (DEVELOPERS.md has the figures).
const collectAfter = 1 << 25

// blockSize is the LOBPCG block width for want eigenpairs: guard vectors
// beyond the wanted ones speed up convergence of clustered eigenvalues
// (Knyazev 2001), but every step's dense work grows with the square of the
// width. One guard vector per six wanted pairs (at least one) did the
// least work overall: against the earlier three or more, level-0 work fell
// by 45% for k = 2 and 17-20% for k = 6 on superpixel-like graphs and by
// 7% on the coins pixel graph, at up to two more steps (sparse products
// and dense block operations counted per solve).
func blockSize(want int) int {
	return want + max(1, (want+1)/6)
}

// wideGraph reports whether lv has at least longRows stored entries per
// row on average (a pixel graph; r = 5 gives 80). Such a graph gets instead
// of the defaults tuned on sparse superpixel-like graphs: levels four
// times smaller from one to the next (coarsenTwice), a W-cycle with one
// post-smoothing step on every level (mg.go), and residual directions for
// the guard columns of the LOBPCG block as long as a wanted column is
// unconverged (lobpcg.go). On the coins photograph scaled to 116k and
// 465k nodes (k = 6, tol 1e-6) this took the LOBPCG steps on the input
// graph from 11 and 23 to 7 and 7, and its sparse products from 27 and
// 47 (plus 40 and 64 on the half-size level) to 25 and 25 (plus 44 on the
// quarter-size level); without the guard directions the fifth pair
// stalled for 9 steps beside a nearly equal sixth at 465k (measured with
// a trace of the residuals, seeds not involved: the graphs are images).
// On superpixel-like graphs the same settings were slower (k = 6 on 3000
// nodes), so they stay off there.
func wideGraph(lv *level) bool { return lv.nnz() >= longRows*lv.n }

// looseTol is the residual target from which the solver takes the cheap
// path for Fiedler vectors: no refinement on the intermediate levels and
// one smoothing step after each interpolation (segment asks 1e-4 for its
// sub-part and object splits).
const looseTol = 1e-5

// levelTol is the residual target on level l (0 = input graph). Coarse
// levels only supply start vectors, so a loose target is enough.
func levelTol(tol float64, l int) float64 {
	if l == 0 {
		return tol
	}
	return 10 * tol
}

// fillRandom widens x to m columns with uniform random vectors.
func fillRandom(x *block, m int, seed uint64) *block {
	rng := rand.New(rand.NewPCG(seed, 0x6c6f6270636721))
	out := newBlock(x.n, m)
	for i := 0; i < x.n; i++ {
		copy(out.v[i*m:], x.v[i*x.m:i*x.m+x.m])
		for q := x.m; q < m; q++ {
			out.v[i*m+q] = rng.Float64() - 0.5
		}
	}
	return out
}

// check validates the arguments without trusting the graph's arrays.
func check(g *affinity.Graph, k int) error {
	if g == nil {
		return errors.New("eigen: graph is nil")
	}
	if g.N <= 0 {
		return fmt.Errorf("eigen: graph has %d nodes", g.N)
	}
	if k < 1 || k > g.N {
		return fmt.Errorf("eigen: k = %d out of range 1..%d (number of nodes)", k, g.N)
	}
	if g.N > math.MaxInt32 || len(g.RowPtr) != g.N+1 || g.RowPtr[0] != 0 || g.RowPtr[g.N] != len(g.Col) || len(g.Col) != len(g.Weight) {
		return errors.New("eigen: malformed graph arrays (RowPtr, Col, Weight lengths disagree)")
	}
	for i := 0; i < g.N; i++ {
		if g.RowPtr[i] > g.RowPtr[i+1] {
			return fmt.Errorf("eigen: graph row pointers decrease at row %d", i)
		}
		for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
			if j := g.Col[p]; j < 0 || int(j) >= g.N {
				return fmt.Errorf("eigen: row %d has column %d out of range", i, j)
			}
			if w := g.Weight[p]; !(w >= 0) || math.IsInf(float64(w), 1) {
				return fmt.Errorf("eigen: row %d has weight %v (must be finite and non-negative)", i, w)
			}
		}
	}
	return nil
}

// finish assembles the result: z0 first, then the deflated pairs, signs
// fixed and residuals recomputed with a fresh product.
func finish(o *ops, vals []float64, vecs *block, want int) *Result {
	lv := o.lv
	n := lv.n
	k := want + 1
	all := o.get(k)
	for i := 0; i < n; i++ {
		all.v[i*k] = lv.z0[i]
		if want > 0 {
			copy(all.v[i*k+1:i*k+k], vecs.v[i*vecs.m:i*vecs.m+want])
		}
	}
	lz, tmp := o.get(k), o.get(k)
	lv.applyL(lz, all, tmp, o.workers)
	res := &Result{Values: make([]float64, k), Vectors: make([][]float64, k), Residuals: make([]float64, k)}
	ztlz := o.gram(all, lz)
	for q := 0; q < k; q++ {
		v := make([]float64, n)
		for i := range v {
			v[i] = all.v[i*k+q]
		}
		res.Vectors[q] = v
	}
	res.Values[0] = ztlz[0]
	copy(res.Values[1:], vals)
	for q := 0; q < k; q++ {
		v := res.Vectors[q]
		lam := res.Values[q]
		var s float64
		for i := range v {
			r := lz.v[i*k+q] - lam*v[i]
			s += r * r
		}
		res.Residuals[q] = math.Sqrt(s)
		// Sign: entry of largest magnitude (first such) positive.
		big := 0
		for i := range v {
			if math.Abs(v[i]) > math.Abs(v[big]) {
				big = i
			}
		}
		if v[big] < 0 {
			for i := range v {
				v[i] = -v[i]
			}
		}
	}
	o.put(all, lz, tmp)
	return res
}
