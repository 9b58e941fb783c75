package segment

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// kmeans clusters the rows of x (n points of dimension dim, row-major) into k
// clusters with weights wt (nil: all 1), minimising Σ w_i |x_i - c(i)|².
// Seeds come from k-means++ (Arthur and Vassilvitskii 2007): the first centre
// drawn with probability ∝ w_i, each next one ∝ w_i D(x_i)², D the distance to
// the nearest chosen centre. Lloyd iterations follow until no label changes.
// restarts independent seedings run (in parallel on workers goroutines) and
// the one of least inertia wins; the result is a pure function of the
// inputs, whatever the worker count. From kmeansSampleMin points on, the
// restarts run on an evenly strided sample and their end points are
// iterated on all points, both in blocks of points (see kmeansSampleMin
// and iterateBlocks).
func kmeans(x []float64, n, dim, k int, wt []float64, restarts int, seed uint64, workers int) []int32 {
	lab, _ := kmeansContext(context.Background(), x, n, dim, k, wt, restarts, seed, workers)
	return lab
}

// kmeansSampleMin is the number of points from which the restarts of
// kmeans run on a sample: every s-th point (s = ceil(n/kmeansSample),
// weights kept), Lloyd iterations on all points start from the centres
// each restart ends with on the sample, and the least inertia on all
// points wins. Running k-means on subsamples to find starting points for
// the whole set is the scheme of Bradley and Fayyad (1998, "Refining
// initial points for k-means clustering"; from memory), here with one
// sample. The seeding and most iterations then cost about n/s points
// each instead of n, and the iterations on all points start near their
// end: on the k-way embedding of
// the pixel graph (pixels in row-major order, so the stride samples the
// image evenly) the eight full restarts were a quarter of the whole
// command at a million pixels. Graphs of superpixels and the class
// grouping stay below it (MaxScaledSuperpixels), so their results are
// unchanged.
const kmeansSampleMin = 1 << 16

// kmeansSample is the target size of the sample (see kmeansSampleMin).
const kmeansSample = 1 << 15

// kmeansContext is kmeans that stops when ctx is done: each restart
// checks ctx before every seeding step and every Lloyd iteration, and
// ctx's error is returned.
func kmeansContext(ctx context.Context, x []float64, n, dim, k int, wt []float64, restarts int, seed uint64, workers int) ([]int32, error) {
	return kmeansRun(ctx, x, n, dim, k, wt, restarts, seed, workers, kmeansSampleMin)
}

// kmeansRun is kmeansContext with the sampling threshold as a parameter.
func kmeansRun(ctx context.Context, x []float64, n, dim, k int, wt []float64, restarts int, seed uint64, workers, sampleMin int) ([]int32, error) {
	if k >= n {
		lab := make([]int32, n)
		for i := range lab {
			lab[i] = int32(i)
		}
		return lab, nil
	}
	xs, ns, ws := x, n, wt
	sampled := n >= sampleMin
	if sampled {
		stride := (n + kmeansSample - 1) / kmeansSample
		ns = (n + stride - 1) / stride
		xs = make([]float64, ns*dim)
		if wt != nil {
			ws = make([]float64, ns)
		}
		for t := 0; t < ns; t++ {
			i := t * stride
			copy(xs[t*dim:(t+1)*dim], x[i*dim:(i+1)*dim])
			if wt != nil {
				ws[t] = wt[i]
			}
		}
	}
	// Restart r draws from its own generator, seeded by (seed, r), so the
	// restarts can run in parallel and the winner (least inertia, ties to
	// the lower r) does not depend on the worker count.
	restarts = max(1, restarts)
	labs := make([][]int32, restarts)
	cents := make([][]float64, restarts)
	inertia := make([]float64, restarts)
	parallel.For(restarts, workers, func(r int) {
		rng := rand.New(rand.NewPCG(seed, 0x6b6d65616e73+uint64(r)))
		if !sampled {
			labs[r], cents[r], inertia[r] = lloyd(ctx, xs, ns, dim, k, ws, rng)
			return
		}
		// On the sample the iterations run in blocks as on all
		// points (iterateBlocks), one worker a restart.
		cent := seedCentres(ctx, xs, ns, dim, k, ws, rng)
		if cent == nil {
			inertia[r] = math.Inf(1)
			return
		}
		labs[r], inertia[r] = iterateBlocks(ctx, xs, ns, dim, k, ws, cent, 1, nil)
		cents[r] = cent
	})
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if !sampled {
		best := 0
		for r := 1; r < restarts; r++ {
			if inertia[r] < inertia[best] {
				best = r
			}
		}
		return labs[best], nil
	}
	// Every distinct end point of the sample's restarts is iterated on
	// all points and the least inertia there wins (ties to the lower r):
	// close local optima can swap ranks between the sample and the whole
	// set (the coins pixel graph at 116,736 nodes: the fourth on the
	// sample was the best on all points). Restarts that end in the same
	// partition of the sample differ only in the numbering of their
	// centres, so the centres are put in one order first (canonicalOrder)
	// and such end points are iterated once: at 1,050,624 nodes the 8
	// restarts had 8 numberings of one partition, and the 8 passes on all
	// points took a fifth of the whole command's CPU time. Iterating from
	// a renumbered start gives the renumbered result, unless a point lies
	// at exactly equal distances from two centres (the first wins).
	for r := range cents {
		canonicalOrder(cents[r], k, dim)
	}
	same := make([]int, restarts) // the first restart with the same centres
	for r := range same {
		same[r] = r
		for q := 0; q < r; q++ {
			if slices.Equal(cents[q], cents[r]) {
				same[r] = q
				break
			}
		}
	}
	// One end point after the other, each iteration's blocks of points
	// on the workers (iterateBlocks): the end points' iteration counts
	// differ (6 to 29 on the coins pixel graph at 116,736 nodes), and a
	// long one run alone on one worker left the other idle. The labels
	// of the least inertia so far are kept (ties to the lower r), the
	// other arrays reused.
	var sc blockScratch
	best, bestIn := -1, 0.0
	var bestLab []int32
	for r := range restarts {
		if same[r] != r {
			continue
		}
		lab, in := iterateBlocks(ctx, x, n, dim, k, wt, cents[r], workers, &sc)
		if best < 0 || in < bestIn {
			best, bestIn = r, in
			bestLab, sc.lab = lab, bestLab
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return bestLab, nil
}

// canonicalOrder sorts the k centres of cent (k rows of dim values) in
// ascending lexicographic order of their coordinates, so that two sets of
// the same centres numbered differently become equal.
func canonicalOrder(cent []float64, k, dim int) {
	rows := make([][]float64, k)
	for c := range rows {
		rows[c] = append([]float64(nil), cent[c*dim:(c+1)*dim]...)
	}
	slices.SortStableFunc(rows, func(a, b []float64) int {
		for d := range a {
			if a[d] < b[d] {
				return -1
			}
			if a[d] > b[d] {
				return 1
			}
		}
		return 0
	})
	for c, r := range rows {
		copy(cent[c*dim:(c+1)*dim], r)
	}
}

func weightOf(wt []float64, i int) float64 {
	if wt == nil {
		return 1
	}
	return wt[i]
}

// boundSlack is the relative margin by which Hamerly's bounds must be
// apart before a point is skipped: up + boundSlack·(up + |lo| + travel) <
// lo, travel the sum of the largest centre move of every iteration so
// far. Distances and centre moves are each computed to a few units of
// rounding (2^-52) relative, and a bound is a sum of at most 301 of them
// whose magnitudes add up to at most up + |lo| + 2·travel; 1e-9 is far
// above the rounding that can accumulate, and skips almost as many points
// as an exact test would.
const boundSlack = 1e-9

func sqDist(a, b []float64) float64 {
	b = b[:len(a)]
	var s float64
	for d, v := range a {
		t := v - b[d]
		s += t * t
	}
	return s
}

// lloyd runs one seeding and its Lloyd iterations; once ctx is done it
// returns at its next check with a partial result that the caller
// discards.
//
// Every pass over the points does all it can at once, so a point's row is
// read once per seeding step and once per iteration (at a million points
// the passes, not the distances, were the cost): the seeding's distance
// update also sums the next draw's total, and an iteration's one pass
// moves the bounds by the previous iteration's centre moves, assigns the
// point and adds it to its centre's sum. Each sum still runs over the
// points in ascending order, so every number is the one the separate
// passes gave (TestLloydMatchesPlain).
func lloyd(ctx context.Context, x []float64, n, dim, k int, wt []float64, rng *rand.Rand) ([]int32, []float64, float64) {
	cent := seedCentres(ctx, x, n, dim, k, wt, rng)
	if cent == nil {
		return nil, nil, math.Inf(1)
	}
	lab, inertia := iterate(ctx, x, n, dim, k, wt, cent)
	return lab, cent, inertia
}

// seedCentres draws k centres by k-means++ (see kmeans); nil once ctx is
// done.
func seedCentres(ctx context.Context, x []float64, n, dim, k int, wt []float64, rng *rand.Rand) []float64 {
	cent := make([]float64, k*dim)
	dist := make([]float64, n)
	// pick draws point i with probability prob(i)/tot, tot = Σ prob(i)
	// summed in point order by the caller.
	pick := func(tot float64, prob func(i int) float64) int {
		if tot <= 0 {
			return rng.IntN(n)
		}
		u := rng.Float64() * tot
		for i := 0; i < n; i++ {
			u -= prob(i)
			if u < 0 {
				return i
			}
		}
		return n - 1
	}
	var tot float64
	if wt == nil {
		for i := 0; i < n; i++ {
			tot++
		}
	} else {
		for _, w := range wt {
			tot += w
		}
	}
	first := pick(tot, func(i int) float64 { return weightOf(wt, i) })
	copy(cent[:dim], x[first*dim:(first+1)*dim])
	tot = 0
	for i := 0; i < n; i++ {
		dist[i] = sqDist(x[i*dim:(i+1)*dim], cent[:dim])
		tot += weightOf(wt, i) * dist[i]
	}
	for c := 1; c < k; c++ {
		if ctx.Err() != nil {
			return nil
		}
		j := pick(tot, func(i int) float64 { return weightOf(wt, i) * dist[i] })
		copy(cent[c*dim:(c+1)*dim], x[j*dim:(j+1)*dim])
		if c == k-1 {
			break // no further draw needs the distances
		}
		tot = 0
		for i := 0; i < n; i++ {
			if d := sqDist(x[i*dim:(i+1)*dim], cent[c*dim:(c+1)*dim]); d < dist[i] {
				dist[i] = d
			}
			tot += weightOf(wt, i) * dist[i]
		}
	}
	return cent
}

// iterate runs Lloyd iterations from the centres cent (updated in place)
// until no label changes, at most 300, and returns the labels and their
// inertia.
func iterate(ctx context.Context, x []float64, n, dim, k int, wt []float64, cent []float64) ([]int32, float64) {
	lab := make([]int32, n)
	for i := range lab {
		lab[i] = -1
	}
	sum := make([]float64, k*dim)
	cnt := make([]float64, k)
	// Hamerly's bounds (Hamerly 2010): up[i] >= |x_i - c(lab_i)| and
	// lo[i] <= |x_i - c| for every other centre c, kept valid through the
	// centre moves by the triangle inequality. A point whose bounds are
	// apart by more than a relative margin cannot change its label, so it
	// is skipped; every other point is assigned exactly as Lloyd's step
	// does (all k squared distances, the first least one wins). The
	// margin (boundSlack) covers the rounding of the bounds, so labels,
	// centres and inertia are bit-identical to plain Lloyd iterations
	// (TestLloydMatchesPlain).
	up := make([]float64, n)
	lo := make([]float64, n)
	old := make([]float64, k*dim)
	move := make([]float64, k)
	maxMove := 0.0
	var inertia float64
	travel := 0.0 // Σ of the largest centre move per iteration
	for iter := 0; iter < 300; iter++ {
		if ctx.Err() != nil {
			return nil, math.Inf(1)
		}
		changed := false
		last := iter == 299
		clear(sum)
		clear(cnt)
		// The sums of the current run of points with one label are
		// taken in sc, the slice of that label's sum (consecutive
		// points mostly share a label).
		run := -1
		var sc []float64
		w := 1.0
		for i := 0; i < n; i++ {
			xi := x[i*dim : i*dim+dim : i*dim+dim]
			li := lab[i]
			assign := true
			if iter > 0 {
				// The previous iteration's centre moves.
				u, l := up[i]+move[li], lo[i]-maxMove
				if !last {
					if u+boundSlack*(u+math.Abs(l)+travel) < l {
						assign = false
					} else {
						// Tighten the upper bound to the exact distance
						// and test again (Hamerly's second test).
						c := int(li)
						u = math.Sqrt(sqDist(xi, cent[c*dim:c*dim+dim]))
						assign = !(u+boundSlack*(u+math.Abs(l)+travel) < l)
					}
				}
				up[i], lo[i] = u, l
			}
			if assign {
				bc, bd, sd := 0, math.Inf(1), math.Inf(1)
				for c := 0; c < k; c++ {
					d := sqDist(xi, cent[c*dim:c*dim+dim])
					if d < bd {
						bc, bd, sd = c, d, bd
					} else if d < sd {
						sd = d
					}
				}
				if li != int32(bc) {
					li = int32(bc)
					lab[i] = li
					changed = true
				}
				up[i], lo[i] = math.Sqrt(bd), math.Sqrt(sd)
			}
			c := int(li)
			if wt != nil {
				w = wt[i]
			}
			cnt[c] += w
			if c != run {
				run = c
				sc = sum[c*dim : c*dim+dim : c*dim+dim]
			}
			sc = sc[:len(xi)]
			for d, v := range xi {
				sc[d] += w * v
			}
		}
		if !changed || last {
			// Lloyd's inertia of this assignment: Σ w_i |x_i - c(lab_i)|²
			// in point order, with the centres it was made with.
			inertia = 0
			for i := 0; i < n; i++ {
				c := int(lab[i])
				inertia += weightOf(wt, i) * sqDist(x[i*dim:(i+1)*dim], cent[c*dim:(c+1)*dim])
			}
			if !changed {
				break
			}
		}
		copy(old, cent)
		for c := 0; c < k; c++ {
			if cnt[c] == 0 {
				continue // keep an emptied centre where it was
			}
			for d := 0; d < dim; d++ {
				cent[c*dim+d] = sum[c*dim+d] / cnt[c]
			}
		}
		maxMove = 0
		for c := 0; c < k; c++ {
			move[c] = math.Sqrt(sqDist(cent[c*dim:(c+1)*dim], old[c*dim:(c+1)*dim]))
			maxMove = max(maxMove, move[c])
		}
		travel += maxMove
	}
	return lab, inertia
}
