package segment

import (
	"container/heap"
	"context"
	"math"
	"sort"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/eigen"
)

// cutResult is what both cut methods return: a region index per graph node
// (0..regions-1), the eigenvalues of the top-level solve and the Ncut value
// of every accepted split.
type cutResult struct {
	region      []int32
	regions     int
	eigenvalues []float64
	splitNcuts  []float64
	tree        *cutTree // with cutOptions.tree
	// short is the worst solve that stopped above its residual target.
	short shortfall
	// root is what the first two-way cut of the whole graph found.
	root rootSplit
	// solved is the number of nodes of all the parts whose Fiedler
	// vector was solved for (at most cutOptions.budget when it is set).
	solved int
}

// part is a set of graph nodes (ascending) awaiting a decision.
type part struct {
	nodes []int
	area  int
	id    int32 // node of the split tree (see cutTree)
	// start holds, when the parent's solve found more than the Fiedler
	// pair, the parent's vectors y_q = D^-1/2 z_q (q >= 1) at this part's
	// nodes: the start of the part's own solve (eigen.Options.Start).
	start [][]float64
}

type partHeap []part

func (h partHeap) Len() int { return len(h) }
func (h partHeap) Less(a, b int) bool {
	if h[a].area != h[b].area {
		return h[a].area > h[b].area
	}
	return h[a].nodes[0] < h[b].nodes[0]
}
func (h partHeap) Swap(a, b int) { h[a], h[b] = h[b], h[a] }
func (h *partHeap) Push(x any)   { *h = append(*h, x.(part)) }
func (h *partHeap) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}

// Stability test of a Fiedler vector (Shi and Malik 2000, section 3.1):
// the histogram of its values in stabilityBins bins; when the ratio of the
// least to the most populated bin exceeds stabilityRatio the values change
// continuously, with no clear place to cut, and the part is not split.
// The paper uses the ratio 0.06 (value from memory of the paper); the bin
// count is not given there and is our choice.
const (
	stabilityBins  = 20
	stabilityRatio = 0.06
)

// stable reports whether y has a clear split point by the test above.
// Parts with fewer nodes than bins always pass: their histograms are too
// coarse to judge.
func stable(y []float64) bool {
	if len(y) < 4*stabilityBins {
		return true
	}
	lo, hi := y[0], y[0]
	for _, v := range y {
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	if !(hi > lo) {
		return false
	}
	var count [stabilityBins]int
	for _, v := range y {
		b := int(float64(stabilityBins) * (v - lo) / (hi - lo))
		count[min(b, stabilityBins-1)]++
	}
	mn, mx := count[0], count[0]
	for _, c := range count {
		mn, mx = min(mn, c), max(mx, c)
	}
	return float64(mn) <= stabilityRatio*float64(mx)
}

// topEigenpairs is how many eigenpairs the first (top-level) solve of a
// recursive bisection computes, so the record shows the low spectrum.
const topEigenpairs = 6

// splitTol is the eigensolver's residual tolerance for the Fiedler vectors
// of the parts below the top level.
const splitTol = 1e-4

// cutOptions are the internal variations of bisect for its two callers:
// the image's top-level cut and the re-cut of single objects.
type cutOptions struct {
	stability bool // apply the Fiedler-vector stability test
	// accept, when set, must also approve a split of a part (nodes of the
	// whole graph; inA marks side A by position in nodes; ncut is the
	// split's Ncut, at most cutParams.maxNcut).
	accept func(nodes []int, inA []bool, ncut float64) bool
	// final, when set, marks a part (nodes of the whole graph) that is not
	// to be split at all.
	final func(nodes []int) bool
	// noSpectrum skips the top-level spectrum: every solve is a k = 2
	// solve at splitTol (for the small graphs of object refinement).
	noSpectrum bool
	// tree records the split tree in cutResult.tree (see cutTree).
	tree bool
	// initial, when set, is a partition of the graph's nodes (ascending
	// node lists) to start from instead of the whole graph: each is split
	// on as a part of its own (the re-cut's neck partition).
	initial [][]int
	// budget, when positive, bounds the nodes of all the parts whose
	// Fiedler vector is solved for: a part whose solve would pass it is
	// left whole (the re-cut of single objects, refineWork).
	budget int
}

// cutParams are the values bisect reads: of Params (Params.cutParams)
// for the image's cut, its own for the re-cut of single objects.
type cutParams struct {
	maxNcut  float64 // largest Ncut of an accepted split
	minArea  int     // pixels each side of an accepted split holds at least
	segments int     // region limit (0: none)
	workers  int     // eigensolver workers (below 1: GOMAXPROCS)
	seed     uint64  // eigensolver seed
}

// cutParams returns the values of p that bisect reads.
func (p Params) cutParams() cutParams {
	return cutParams{maxNcut: p.MaxNcut, minArea: p.MinArea, segments: p.Segments, workers: p.Workers, seed: p.Seed}
}

// bisect performs recursive two-way normalized cuts (Shi and Malik 2000,
// section 3.1): each part's Fiedler vector y = D^-1/2 z_1 of its own
// subgraph is swept for the split of least Ncut; the split is accepted when
// that Ncut is at most p.maxNcut and both sides hold at least p.minArea
// pixels. Disconnected parts split into their components at no cost
// (Ncut 0). The largest open part is split first, and splitting stops
// once p.segments regions exist (0: no limit).
func bisect(ctx context.Context, g *affinity.Graph, area []int, p cutParams, o cutOptions) (*cutResult, error) {
	res := &cutResult{region: make([]int32, g.N)}
	h := &partHeap{}
	var final []part
	all := make([]int, g.N)
	areaOf := func(nodes []int) int {
		s := 0
		for _, i := range nodes {
			s += nodeArea(area, i)
		}
		return s
	}
	for i := range all {
		all[i] = i
	}
	var tr *cutTree
	if o.tree {
		tr = &cutTree{}
	}
	newPart := func(nodes []int, parent int32) part {
		pt := part{nodes: nodes, area: areaOf(nodes)}
		if tr != nil {
			pt.id = int32(len(tr.parent))
			tr.parent = append(tr.parent, parent)
			tr.ncut = append(tr.ncut, math.Inf(1))
			tr.zeros = append(tr.zeros, 0)
			tr.low = append(tr.low, int32(nodes[0]))
		}
		return pt
	}
	regions := 1
	if len(o.initial) > 0 {
		for _, nodes := range o.initial {
			heap.Push(h, newPart(nodes, -1))
		}
		regions = len(o.initial)
	} else {
		heap.Push(h, newPart(all, -1))
	}
	solved := 0            // nodes of the parts solved so far (cutOptions.budget)
	first := !o.noSpectrum // the top-level solve records the low spectrum
	for h.Len() > 0 {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if p.segments > 0 && regions >= p.segments {
			break
		}
		pt := heap.Pop(h).(part)
		if len(pt.nodes) < 2 || pt.area < 2*p.minArea || (o.final != nil && o.final(pt.nodes)) {
			final = append(final, pt)
			continue
		}
		sub := g
		if len(pt.nodes) != g.N {
			sub = g.Subgraph(pt.nodes)
		}
		subArea := make([]int, len(pt.nodes))
		for k, i := range pt.nodes {
			subArea[k] = nodeArea(area, i)
		}
		comp, nc := Components(sub)
		if nc > 1 {
			pieces := make([][]int, nc)
			for k, c := range comp {
				pieces[c] = append(pieces[c], pt.nodes[k])
			}
			for c, pc := range pieces {
				heap.Push(h, newPart(pc, pt.id))
				if c > 0 { // nc pieces take nc-1 free splits
					res.splitNcuts = append(res.splitNcuts, 0)
				}
			}
			if tr != nil {
				tr.ncut[pt.id], tr.zeros[pt.id] = 0, nc-1
				tr.order = append(tr.order, pt.id)
			}
			regions += nc - 1
			continue
		}
		if o.budget > 0 && solved+sub.N > o.budget {
			final = append(final, pt)
			continue
		}
		solved += sub.N
		k := 2
		if first {
			k = min(topEigenpairs, sub.N)
		}
		opt := eigen.Options{Workers: p.workers, Seed: p.seed}
		if pt.start != nil {
			// The parent's low eigenvectors, restricted to the part and
			// scaled by the part's own degrees (z = D^1/2 y), span nearly
			// the part's low eigenvectors when the split cut off a small
			// piece: the part's solve starts from them (warmStart).
			deg := sub.Degrees()
			opt.Start = make([][]float64, len(pt.start))
			for q, y := range pt.start {
				z := make([]float64, sub.N)
				for i := range z {
					z[i] = y[i] * math.Sqrt(deg[i])
				}
				opt.Start[q] = z
			}
		}
		if !first {
			// Only the order of the Fiedler vector's entries matters to the
			// sweep, and a residual of splitTol already fixes it far more
			// finely than the Ncut threshold can tell; the top-level solve,
			// whose eigenvalues are recorded, keeps the default tolerance.
			opt.Tol = splitTol
		}
		ep, err := eigen.SmallestContext(ctx, sub, k, opt)
		if !res.short.note(err, ep, opt.Tol, sub.N) {
			return nil, err
		}
		if first {
			res.eigenvalues = append([]float64(nil), ep.Values...)
			first = false
		}
		deg := sub.Degrees()
		y := make([]float64, sub.N)
		z := ep.Vectors[1]
		for i := range y {
			y[i] = z[i] / math.Sqrt(deg[i])
		}
		s, ok := sweepSplit(sub, deg, y, subArea, p.minArea)
		steady := !o.stability || stable(y)
		if len(pt.nodes) == g.N {
			res.root = rootSplit{tried: true, found: ok, ncut: s.ncut, stable: steady}
		}
		if !ok || s.ncut > p.maxNcut || !steady {
			final = append(final, pt)
			continue
		}
		inA := make([]bool, sub.N)
		for _, i := range s.order[:s.at] {
			inA[i] = true
		}
		if o.accept != nil && !o.accept(pt.nodes, inA, s.ncut) {
			final = append(final, pt)
			continue
		}
		res.splitNcuts = append(res.splitNcuts, s.ncut)
		var a, b []int
		for k, i := range pt.nodes {
			if inA[k] {
				a = append(a, i)
			} else {
				b = append(b, i)
			}
		}
		pa, pb := newPart(a, pt.id), newPart(b, pt.id)
		if vecs := handedOn(ep.Vectors, opt.Start); vecs != nil {
			if big := max(len(a), len(b)); float64(big) >= warmShare*float64(len(pt.nodes)) {
				ya, yb := warmStart(vecs, deg, inA, len(a) > len(b), len(b) > len(a))
				pa.start, pb.start = ya, yb
			}
		}
		heap.Push(h, pa)
		heap.Push(h, pb)
		if tr != nil {
			tr.ncut[pt.id] = s.ncut
			tr.order = append(tr.order, pt.id)
		}
		regions++
	}
	for h.Len() > 0 {
		final = append(final, heap.Pop(h).(part))
	}
	// Number regions by their lowest node so the numbering is deterministic.
	sortParts(final)
	for r, pt := range final {
		for _, i := range pt.nodes {
			res.region[i] = int32(r)
		}
	}
	res.regions = len(final)
	res.solved = solved
	if tr != nil {
		tr.leafOf = make([]int32, g.N)
		for _, pt := range final {
			for _, i := range pt.nodes {
				tr.leafOf[i] = pt.id
			}
		}
		tr.eigenvalues, tr.short, tr.root = res.eigenvalues, res.short, res.root
		res.tree = tr
	}
	return res, nil
}

// warmShare is the least share of a part's nodes that the larger side of
// its split must keep to be handed the part's vectors as the start of
// its own solve (part.start): when the split cuts off a small piece, the
// low eigenvectors of what is left are nearly those of the part
// restricted to it (a perturbation of a few rows of L), so its solve
// starts there instead of from its coarse levels, at the same residual
// target. A side of a balanced split has low eigenvectors of its own
// and starts from its coarse levels as before.
const warmShare = 0.9

// handedOn returns the vectors a solved part hands on to the larger side
// of its split (warmShare): those of the top-level solve (more than the
// Fiedler pair, topEigenpairs), or, for a part that started from such
// vectors itself (start, in its z coordinates), its Fiedler vector and
// then its start, at most topEigenpairs-1 in all; nil otherwise.
func handedOn(vecs [][]float64, start [][]float64) [][]float64 {
	if len(vecs) > 2 {
		return vecs[1:]
	}
	if len(start) == 0 || len(vecs) < 2 {
		return nil
	}
	out := [][]float64{vecs[1]}
	return append(out, start[:min(len(start), topEigenpairs-2)]...)
}

// warmStart splits vectors z_q of a part (vecs, in the part's node order;
// deg its degrees) between the two sides of its split (inA) as y_q =
// D^-1/2 z_q at each side's nodes, in their order, for the sides marked
// (toA, toB; nil for the other).
func warmStart(vecs [][]float64, deg []float64, inA []bool, toA, toB bool) (a, b [][]float64) {
	for _, z := range vecs {
		var ya, yb []float64
		for i, v := range z {
			y := v / math.Sqrt(deg[i])
			if inA[i] && toA {
				ya = append(ya, y)
			} else if !inA[i] && toB {
				yb = append(yb, y)
			}
		}
		if toA {
			a = append(a, ya)
		}
		if toB {
			b = append(b, yb)
		}
	}
	return a, b
}

// cutTree is the split tree of one recursive bisection. Every part is a
// node (the whole graph is node 0); a split part has the Ncut of its
// split (0 for a split into connected components, which also records
// zeros = pieces - 1 entries of the split list) and the parts it split
// into as children; a part never split has Ncut +Inf. Since a part's
// split depends on the part alone and never on max-ncut, the bisection
// at any threshold t at most the one the tree was grown with is the tree
// cut back to the splits of Ncut <= t: prune gives it without solving
// again (with the segment limit off).
type cutTree struct {
	parent      []int32   // node -> parent node, -1 for the root
	ncut        []float64 // node -> Ncut of its split, +Inf if not split
	zeros       []int     // node -> split-list entries of a components split
	low         []int32   // node -> its lowest graph node
	order       []int32   // split nodes in the order the splits were made
	leafOf      []int32   // graph node -> the unsplit part holding it
	eigenvalues []float64
	short       shortfall
	root        rootSplit
}

// prune returns the bisection at threshold t: graph nodes are in the
// same region when the first split on their common path from the root
// with Ncut above t, or the leaf, is the same; regions are numbered by
// their lowest graph node and the accepted splits listed in the order
// they were made, as bisect itself does.
func (tr *cutTree) prune(t float64) *cutResult {
	nn := len(tr.parent)
	// top[v] is the region node of tree node v at threshold t.
	top := make([]int32, nn)
	applied := make([]bool, nn) // v's own split is made at t
	for v := 0; v < nn; v++ {   // parents precede children
		p := tr.parent[v]
		switch {
		case p < 0:
			top[v] = int32(v)
		case applied[p]:
			top[v] = int32(v)
		default:
			top[v] = top[p]
		}
		applied[v] = top[v] == int32(v) && tr.ncut[v] <= t
	}
	reps := map[int32]int32{} // region node -> its lowest graph node
	for _, leaf := range tr.leafOf {
		r := top[leaf]
		if lo, ok := reps[r]; !ok || tr.low[leaf] < lo {
			reps[r] = tr.low[leaf]
		}
	}
	ids := make([]int32, 0, len(reps))
	for r := range reps {
		ids = append(ids, r)
	}
	sort.Slice(ids, func(a, b int) bool { return reps[ids[a]] < reps[ids[b]] })
	num := make(map[int32]int32, len(ids))
	for k, r := range ids {
		num[r] = int32(k)
	}
	res := &cutResult{region: make([]int32, len(tr.leafOf)), regions: len(ids), eigenvalues: tr.eigenvalues, short: tr.short, root: tr.root}
	for i, leaf := range tr.leafOf {
		res.region[i] = num[top[leaf]]
	}
	for _, v := range tr.order {
		if !applied[v] {
			continue
		}
		if tr.zeros[v] > 0 {
			for range tr.zeros[v] {
				res.splitNcuts = append(res.splitNcuts, 0)
			}
		} else {
			res.splitNcuts = append(res.splitNcuts, tr.ncut[v])
		}
	}
	return res
}

func sortParts(ps []part) {
	sort.Slice(ps, func(a, b int) bool { return ps[a].nodes[0] < ps[b].nodes[0] })
}
