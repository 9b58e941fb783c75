package unionfind

import (
	"math/rand/v2"
	"testing"
)

// Find against connected components counted by a breadth-first search
// over the same random edges (common practice: two ways to the same
// partition), after unions by the lower root index.
func TestFindMatchesSearch(t *testing.T) {
	const n = 500
	rng := rand.New(rand.NewPCG(11400, 1))
	adj := make([][]int, n)
	f := New(n)
	for range 400 {
		a, b := rng.IntN(n), rng.IntN(n)
		adj[a], adj[b] = append(adj[a], b), append(adj[b], a)
		ra, rb := f.Find(int32(a)), f.Find(int32(b))
		if ra < rb {
			f[rb] = ra
		} else if rb < ra {
			f[ra] = rb
		}
	}
	comp := make([]int, n)
	for i := range comp {
		comp[i] = -1
	}
	for s := range n {
		if comp[s] >= 0 {
			continue
		}
		comp[s] = s
		queue := []int{s}
		for len(queue) > 0 {
			v := queue[0]
			queue = queue[1:]
			for _, u := range adj[v] {
				if comp[u] < 0 {
					comp[u] = s
					queue = append(queue, u)
				}
			}
		}
	}
	for i := range n {
		for j := range n {
			if (comp[i] == comp[j]) != (f.Find(int32(i)) == f.Find(int32(j))) {
				t.Fatalf("nodes %d and %d: search says same %v, forest says %v", i, j, comp[i] == comp[j], f.Find(int32(i)) == f.Find(int32(j)))
			}
		}
		// The root is the lowest node of the component (unions by index).
		if r := f.Find(int32(i)); int(r) != comp[i] {
			t.Fatalf("node %d: root %d, lowest node of its component %d", i, r, comp[i])
		}
	}
}
