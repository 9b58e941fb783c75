package segment

import (
	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/internal/unionfind"
)

// Components labels the connected components of g (edges of positive
// weight) by union-find with path halving and union by size. comp[i] is the
// component of node i, numbered 0..n-1 in order of each component's lowest
// node, so the numbering is deterministic. The edges are read until every
// node is joined (the usual case for the re-cut's object graphs), since
// the remaining ones cannot change the components.
func Components(g *affinity.Graph) (comp []int32, n int) {
	return components(g.N, func(link func(i, j int32) bool) {
		for i := 0; i < g.N; i++ {
			for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
				if j := g.Col[p]; int(j) > i && g.Weight[p] > 0 && link(int32(i), j) {
					return
				}
			}
		}
	})
}

// stencilComponents is Components of the pixel graph in stencil form.
// The edges to the right and lower neighbours go first: when they join
// every pixel (the usual case) the other 38 of r = 5 need no look, since
// the components are the same whatever the order of the unions. The
// labels, numbered by each component's lowest node, are those of
// Components on the compressed rows.
func stencilComponents(s *affinity.StencilGraph) (comp []int32, n int) {
	N := s.Nodes()
	w, _ := s.Size()
	dx, dy := s.Offsets()
	k := len(dx)
	wt := s.Weights()
	// The forward offsets (dy > 0, or dy = 0 and dx > 0) are the second
	// half; a positive weight is an edge inside the image.
	var near []int
	for f := k / 2; f < k; f++ {
		if (dx[f] == 1 && dy[f] == 0) || (dx[f] == 0 && dy[f] == 1) {
			near = append(near, f)
		}
	}
	return components(N, func(link func(i, j int32) bool) {
		for i := 0; i < N; i++ {
			for _, f := range near {
				if wt[i*k+f] > 0 && link(int32(i), int32(i+dy[f]*w+dx[f])) {
					return
				}
			}
		}
		for i := 0; i < N; i++ {
			row := wt[i*k : i*k+k]
			for f := k / 2; f < k; f++ {
				if row[f] > 0 && link(int32(i), int32(i+dy[f]*w+dx[f])) {
					return
				}
			}
		}
	})
}

// components labels the components of the graph on nn nodes whose edges
// edges passes to link; link reports when all nodes are joined, after
// which edges may stop.
func components(nn int, edges func(link func(i, j int32) bool)) (comp []int32, n int) {
	parent := unionfind.New(nn)
	find := parent.Find
	size := make([]int32, nn)
	for i := range size {
		size[i] = 1
	}
	joins := 0
	edges(func(i, j int32) bool {
		a, b := find(i), find(j)
		if a == b {
			return joins == nn-1
		}
		if size[a] < size[b] {
			a, b = b, a
		}
		parent[b] = a
		size[a] += size[b]
		joins++
		return joins == nn-1
	})
	comp = make([]int32, nn)
	if nn > 0 && joins == nn-1 {
		return comp, 1 // one component: every label 0
	}
	id := make([]int32, nn)
	for i := range id {
		id[i] = -1
	}
	for i := 0; i < nn; i++ {
		r := find(int32(i))
		if id[r] < 0 {
			id[r] = int32(n)
			n++
		}
		comp[i] = id[r]
	}
	return comp, n
}
