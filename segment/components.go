package segment

import (
	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/internal/unionfind"
)

// Components labels the connected components of g (edges of positive
// weight) by union-find with path halving and union by size. comp[i] is the
// component of node i, numbered 0..n-1 in order of each component's lowest
// node, so the numbering is deterministic.
func Components(g *affinity.Graph) (comp []int32, n int) {
	parent := unionfind.New(g.N)
	find := parent.Find
	size := make([]int32, g.N)
	for i := range size {
		size[i] = 1
	}
	for i := 0; i < g.N; i++ {
		for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
			j := g.Col[p]
			if int(j) <= i || g.Weight[p] <= 0 {
				continue
			}
			a, b := find(int32(i)), find(j)
			if a == b {
				continue
			}
			if size[a] < size[b] {
				a, b = b, a
			}
			parent[b] = a
			size[a] += size[b]
		}
	}
	comp = make([]int32, g.N)
	id := make([]int32, g.N)
	for i := range id {
		id[i] = -1
	}
	for i := 0; i < g.N; i++ {
		r := find(int32(i))
		if id[r] < 0 {
			id[r] = int32(n)
			n++
		}
		comp[i] = id[r]
	}
	return comp, n
}
