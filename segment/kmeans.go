package segment

import (
	"context"
	"math"
	"math/rand/v2"
)

// kmeans clusters the rows of x (n points of dimension dim, row-major) into k
// clusters with weights wt (nil: all 1), minimising Σ w_i |x_i - c(i)|².
// Seeds come from k-means++ (Arthur and Vassilvitskii 2007): the first centre
// drawn with probability ∝ w_i, each next one ∝ w_i D(x_i)², D the distance to
// the nearest chosen centre. Lloyd iterations follow until no label changes.
// restarts independent seedings run (in parallel on workers goroutines) and
// the one of least inertia wins; the result is a pure function of the
// inputs, whatever the worker count.
func kmeans(x []float64, n, dim, k int, wt []float64, restarts int, seed uint64, workers int) []int32 {
	lab, _ := kmeansContext(context.Background(), x, n, dim, k, wt, restarts, seed, workers)
	return lab
}

// kmeansContext is kmeans that stops when ctx is done: each restart
// checks ctx before every seeding step and every Lloyd iteration, and
// ctx's error is returned.
func kmeansContext(ctx context.Context, x []float64, n, dim, k int, wt []float64, restarts int, seed uint64, workers int) ([]int32, error) {
	if k >= n {
		lab := make([]int32, n)
		for i := range lab {
			lab[i] = int32(i)
		}
		return lab, nil
	}
	// Restart r draws from its own generator, seeded by (seed, r), so the
	// restarts can run in parallel and the winner (least inertia, ties to
	// the lower r) does not depend on the worker count.
	restarts = max(1, restarts)
	labs := make([][]int32, restarts)
	inertia := make([]float64, restarts)
	forEach(restarts, workers, func(r int) {
		rng := rand.New(rand.NewPCG(seed, 0x6b6d65616e73+uint64(r)))
		labs[r], inertia[r] = lloyd(ctx, x, n, dim, k, wt, rng)
	})
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	best := 0
	for r := 1; r < restarts; r++ {
		if inertia[r] < inertia[best] {
			best = r
		}
	}
	return labs[best], nil
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
	var s float64
	for d := range a {
		t := a[d] - b[d]
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
func lloyd(ctx context.Context, x []float64, n, dim, k int, wt []float64, rng *rand.Rand) ([]int32, float64) {
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
			return nil, math.Inf(1)
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
		for i := 0; i < n; i++ {
			xi := x[i*dim : (i+1)*dim]
			assign := true
			if iter > 0 {
				// The previous iteration's centre moves.
				up[i] += move[lab[i]]
				lo[i] -= maxMove
				if !last {
					if up[i]+boundSlack*(up[i]+math.Abs(lo[i])+travel) < lo[i] {
						assign = false
					} else {
						// Tighten the upper bound to the exact distance
						// and test again (Hamerly's second test).
						c := int(lab[i])
						up[i] = math.Sqrt(sqDist(xi, cent[c*dim:(c+1)*dim]))
						assign = !(up[i]+boundSlack*(up[i]+math.Abs(lo[i])+travel) < lo[i])
					}
				}
			}
			if assign {
				bc, bd, sd := 0, math.Inf(1), math.Inf(1)
				for c := 0; c < k; c++ {
					d := sqDist(xi, cent[c*dim:(c+1)*dim])
					if d < bd {
						bc, bd, sd = c, d, bd
					} else if d < sd {
						sd = d
					}
				}
				if lab[i] != int32(bc) {
					lab[i] = int32(bc)
					changed = true
				}
				up[i], lo[i] = math.Sqrt(bd), math.Sqrt(sd)
			}
			c := int(lab[i])
			w := weightOf(wt, i)
			cnt[c] += w
			sc := sum[c*dim : (c+1)*dim]
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
