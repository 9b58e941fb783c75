package segment

import (
	"context"
	"math"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// kmeansBlock is the number of consecutive points in a block of
// iterateBlocks. On the k-way embedding of the coins pixel graph at
// 116,736 nodes (row-major pixels), 1,540-1,780 of its 1,824 blocks of 64
// were skipped in an iteration after the first (but for one long run),
// and the whole clustering took about the least CPU time with 64 of 32,
// 64, 256 and 1024 (two rounds each at load about 6; 1024 the most).
const kmeansBlock = 64

// kmeansGroup is the number of blocks iterateBlocks hands to a worker at
// a time.
const kmeansGroup = 16

// iterateBlocks is iterate with the points in blocks of kmeansBlock
// consecutive points, the blocks of one iteration run on workers
// goroutines. Labels are Lloyd's (every point not skipped gets all k
// squared distances, the first least one wins), but a centre's sum is
// the sum, in order, of the sums of groups of kmeansGroup blocks, each
// the sum in block order of its blocks' own sums in point order: the
// centres can differ from iterate's in the last bits, and so, at a point
// lying within rounding of two centres, the labels (the result does not
// depend on the worker count).
//
// Two savings come from the blocks. A block keeps its sums while none
// of its labels changes, so an iteration adds up only the blocks and
// groups where labels moved. And a block whose smallest margin lo_i - up_i of
// Hamerly's bounds exceeds twice the largest centre moves since its last
// visit cannot change a label (up_i grows by its centre's move, lo_i
// falls by the largest, each at most the largest move), so it is not
// read at all; its points' bounds catch up on the next visit, by the
// cumulative moves of their centres since then.
//
// The labels and the per-point bounds come from sc (nil: allocated), the
// labels returned being sc.lab: the caller keeps them by taking sc.lab
// away. The inertia is summed in point order within each group of blocks
// and over the groups in order.
func iterateBlocks(ctx context.Context, x []float64, n, dim, k int, wt []float64, cent []float64, workers int, sc *blockScratch) ([]int32, float64) {
	nb := (n + kmeansBlock - 1) / kmeansBlock
	if sc == nil {
		sc = new(blockScratch)
	}
	lab, up, lo := sc.arrays(n)
	for i := range lab {
		lab[i] = -1
	}
	// Per block: its sums (k·dim) and counts (k), the iteration up to
	// whose centre moves its points' bounds are brought (seen), and the
	// least margin and the largest magnitude of those bounds.
	part := make([]float64, nb*k*dim)
	pcnt := make([]float64, nb*k)
	seen := make([]int, nb)
	gap := make([]float64, nb)
	mag := make([]float64, nb)
	moved := make([]bool, nb)
	// Per group of kmeansGroup blocks: the sums of its blocks' sums in
	// block order (redone when one of them changed), and whether one did.
	ng := (nb + kmeansGroup - 1) / kmeansGroup
	gpart := make([]float64, ng*k*dim)
	gcnt := make([]float64, ng*k)
	gmoved := make([]bool, ng)
	ginert := make([]float64, ng)
	// cum[t*k+c] is the sum of centre c's moves over iterations before t,
	// cumMax[t] the sum of the largest moves (travel before t).
	cum := make([]float64, k, 301*k)
	cumMax := make([]float64, 1, 301)
	sum := make([]float64, k*dim)
	cnt := make([]float64, k)
	old := make([]float64, k*dim)
	var inertia float64
	for iter := 0; iter < 300; iter++ {
		if ctx.Err() != nil {
			return nil, math.Inf(1)
		}
		last := iter == 299
		travel := cumMax[iter]
		cm := cum[iter*k : iter*k+k]
		visit := func(b int) {
			i0, i1 := b*kmeansBlock, min(n, (b+1)*kmeansBlock)
			moved[b] = false
			if iter > 0 && !last {
				d := travel - cumMax[seen[b]]
				if gap[b]-2*d > 2*boundSlack*(mag[b]+2*d+travel) {
					return
				}
			}
			cs := cum[seen[b]*k : seen[b]*k+k]
			ds := travel - cumMax[seen[b]]
			g, mg := math.Inf(1), 0.0
			changed := false
			for i := i0; i < i1; i++ {
				xi := x[i*dim : i*dim+dim : i*dim+dim]
				li := lab[i]
				assign := true
				if iter > 0 {
					u, l := up[i]+(cm[li]-cs[li]), lo[i]-ds
					if !last {
						if u+boundSlack*(u+math.Abs(l)+travel) < l {
							assign = false
						} else {
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
						lab[i] = int32(bc)
						changed = true
					}
					up[i], lo[i] = math.Sqrt(bd), math.Sqrt(sd)
				}
				if t := lo[i] - up[i]; t < g {
					g = t
				}
				if t := up[i] + math.Abs(lo[i]); t > mg {
					mg = t
				}
			}
			seen[b], gap[b], mag[b] = iter, g, mg
			if !changed {
				return
			}
			moved[b] = true
			ps := part[b*k*dim : (b+1)*k*dim]
			pc := pcnt[b*k : (b+1)*k]
			clear(ps)
			clear(pc)
			run := -1
			var sc []float64
			w := 1.0
			for i := i0; i < i1; i++ {
				xi := x[i*dim : i*dim+dim : i*dim+dim]
				c := int(lab[i])
				if wt != nil {
					w = wt[i]
				}
				pc[c] += w
				if c != run {
					run = c
					sc = ps[c*dim : c*dim+dim : c*dim+dim]
				}
				sc = sc[:len(xi)]
				for d, v := range xi {
					sc[d] += w * v
				}
			}
		}
		// The blocks are handed out kmeansGroup at a time: one block
		// each made the shared counter of parallel.For a cost of its
		// own.
		parallel.For(ng, workers, func(c int) {
			b0, b1 := c*kmeansGroup, min(nb, (c+1)*kmeansGroup)
			gmoved[c] = false
			for b := b0; b < b1; b++ {
				visit(b)
				gmoved[c] = gmoved[c] || moved[b]
			}
			if !gmoved[c] {
				return
			}
			gs, gc := gpart[c*k*dim:(c+1)*k*dim], gcnt[c*k:(c+1)*k]
			clear(gs)
			clear(gc)
			for b := b0; b < b1; b++ {
				for j, v := range part[b*k*dim : (b+1)*k*dim] {
					gs[j] += v
				}
				for j, v := range pcnt[b*k : (b+1)*k] {
					gc[j] += v
				}
			}
		})
		changed := false
		for _, m := range gmoved {
			changed = changed || m
		}
		if !changed || last {
			parallel.For(ng, workers, func(g int) {
				var s float64
				for i := g * kmeansGroup * kmeansBlock; i < min(n, (g+1)*kmeansGroup*kmeansBlock); i++ {
					c := int(lab[i])
					s += weightOf(wt, i) * sqDist(x[i*dim:(i+1)*dim], cent[c*dim:(c+1)*dim])
				}
				ginert[g] = s
			})
			inertia = 0
			for _, v := range ginert {
				inertia += v
			}
			if !changed {
				break
			}
		}
		clear(sum)
		clear(cnt)
		for g := 0; g < ng; g++ {
			for j, v := range gpart[g*k*dim : (g+1)*k*dim] {
				sum[j] += v
			}
			for c, v := range gcnt[g*k : (g+1)*k] {
				cnt[c] += v
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
		maxMove := 0.0
		for c := 0; c < k; c++ {
			mv := math.Sqrt(sqDist(cent[c*dim:(c+1)*dim], old[c*dim:(c+1)*dim]))
			maxMove = max(maxMove, mv)
			cum = append(cum, cm[c]+mv)
		}
		cumMax = append(cumMax, travel+maxMove)
	}
	return lab, inertia
}

// blockScratch holds the per-point arrays of iterateBlocks for reuse
// from one call to the next.
type blockScratch struct {
	lab    []int32
	up, lo []float64
}

// arrays returns the labels and the two bounds for n points, allocated
// when sc's are shorter.
func (sc *blockScratch) arrays(n int) ([]int32, []float64, []float64) {
	if cap(sc.lab) < n {
		sc.lab = make([]int32, n)
	}
	if cap(sc.up) < n {
		sc.up, sc.lo = make([]float64, n), make([]float64, n)
	}
	sc.lab = sc.lab[:n]
	return sc.lab, sc.up[:n], sc.lo[:n]
}
