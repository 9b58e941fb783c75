package segment

import (
	"math"
	"sort"

	"github.com/cleave-seg/cleave/affinity"
)

// Ncut returns the normalized cut of the two-way partition (A, B) of g
// given by inA (Shi and Malik 2000, eq. 2):
//
//	Ncut(A,B) = cut(A,B)/assoc(A,V) + cut(A,B)/assoc(B,V)
//
// where cut(A,B) = Σ_{i∈A, j∈B} w_ij and assoc(A,V) = Σ_{i∈A} d_i. It is
// +Inf when either side has zero volume.
func Ncut(g *affinity.Graph, inA []bool) float64 {
	var cut, volA, volB float64
	for i := 0; i < g.N; i++ {
		for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
			w := float64(g.Weight[p])
			if inA[i] {
				volA += w
				if !inA[g.Col[p]] {
					cut += w
				}
			} else {
				volB += w
			}
		}
	}
	if volA == 0 || volB == 0 {
		return math.Inf(1)
	}
	return cut/volA + cut/volB
}

// split is the result of a sweep: nodes order[:at] form side A.
type split struct {
	order []int32
	at    int
	ncut  float64
}

// sweepSplit sorts the nodes by the indicator vector y (ties by index, so the
// order is deterministic) and evaluates the exact Ncut of every prefix split
// in one pass: moving node i into A changes the cut by d_i - 2 w(i, A), and
// assoc(A,V) grows by d_i (prefix sums). Only splits whose sides
// both hold at least minArea pixels are admissible (area[i] pixels per node;
// nil means 1 each). ok is false when no split is admissible.
func sweepSplit(g *affinity.Graph, deg []float64, y []float64, area []int, minArea int) (s split, ok bool) {
	n := g.N
	order := sweepOrder(y)
	pos := make([]int32, n)
	for k, i := range order {
		pos[i] = int32(k)
	}
	var vol, totalArea float64
	for i := 0; i < n; i++ {
		vol += deg[i]
		totalArea += float64(nodeArea(area, i))
	}
	best := math.Inf(1)
	bestAt := -1
	var cut, volA, areaA float64
	for k := 0; k < n-1; k++ {
		i := order[k]
		var toA float64
		for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
			if pos[g.Col[p]] < int32(k) {
				toA += float64(g.Weight[p])
			}
		}
		cut += deg[i] - 2*toA
		volA += deg[i]
		areaA += float64(nodeArea(area, int(i)))
		if areaA < float64(minArea) || totalArea-areaA < float64(minArea) {
			continue
		}
		volB := vol - volA
		if volA <= 0 || volB <= 0 {
			continue
		}
		c := cut
		if c < 0 { // rounding in the running sum
			c = 0
		}
		if v := c/volA + c/volB; v < best {
			best, bestAt = v, k+1
		}
	}
	if bestAt < 0 {
		return split{}, false
	}
	return split{order: order, at: bestAt, ncut: best}, true
}

// sweepOrder returns the node indices sorted by y ascending, ties by
// index: the order a stable sort of 0..n-1 by y gives. For y without NaN
// it radix-sorts the values from index order, which gives that same
// unique order; a y with a NaN
// (which is neither less nor greater than anything) takes the stable
// sort itself, whose result then depends on the algorithm.
func sweepOrder(y []float64) []int32 {
	order := make([]int32, len(y))
	for i := range order {
		order[i] = int32(i)
	}
	for _, v := range y {
		if math.IsNaN(v) {
			sort.SliceStable(order, func(a, b int) bool { return y[order[a]] < y[order[b]] })
			return order
		}
	}
	// The values' bit patterns, mapped so that unsigned order is
	// numeric order (negative values complemented, the sign bit set on
	// the others, -0 taken as +0), radix-sorted (radixSortKeyed) from
	// index order, so ties keep ascending indices.
	keys := make([]keyed, len(y))
	for i, v := range y {
		if v == 0 {
			v = 0 // -0 as +0: they compare equal
		}
		u := math.Float64bits(v)
		if u>>63 != 0 {
			u = ^u
		} else {
			u |= 1 << 63
		}
		keys[i] = keyed{u, int32(i)}
	}
	for k, e := range radixSortKeyed(keys) {
		order[k] = e.idx
	}
	return order
}

func nodeArea(area []int, i int) int {
	if area == nil {
		return 1
	}
	return area[i]
}
