package eigen

import (
	"math"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
)

// connected reports whether g is connected (breadth-first search).
func connected(g *affinity.Graph) bool {
	seen := make([]bool, g.N)
	queue := []int{0}
	seen[0] = true
	for len(queue) > 0 {
		i := queue[0]
		queue = queue[1:]
		for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
			if j := int(g.Col[p]); !seen[j] {
				seen[j] = true
				queue = append(queue, j)
			}
		}
	}
	for _, s := range seen {
		if !s {
			return false
		}
	}
	return true
}

// restrictedStart is what segment's bisection hands a part: the parent's
// eigenvectors z_1..z_{k-1} as y = D^-1/2 z on the kept nodes, scaled by
// the part's own D^1/2.
func restrictedStart(parent, part *affinity.Graph, r *Result, keep []int) [][]float64 {
	dp, dc := parent.Degrees(), part.Degrees()
	var start [][]float64
	for q := 1; q < len(r.Vectors); q++ {
		v := make([]float64, len(keep))
		for k, i := range keep {
			v[k] = r.Vectors[q][i] / math.Sqrt(dp[i]) * math.Sqrt(dc[k])
		}
		start = append(start, v)
	}
	return start
}

// TestStartAgainstGonum solves parts of graphs from the parent's
// eigenvectors (Options.Start) and checks every pair against gonum's
// dense mat.EigenSym of the part (the reference library): the invariants
// of checkPairs at the tolerance asked, and each eigenvalue within its
// residual of gonum's (|λ - θ| <= ‖r‖ for a unit Ritz vector, Golub and
// Van Loan section 8.1). A start narrower than the block, and one that is
// only z0 (removed, so the block is random), must give the same
// guarantees, and the same result on one worker and two.
func TestStartAgainstGonum(t *testing.T) {
	cases := []struct {
		name string
		g    *affinity.Graph
		drop int // nodes removed from the end of the node order
	}{
		{"planar 900", planarGraph(900, 7), 9},
		{"object 896", objectGraph(t, 12), 9},
		{"random 700", randomGraph(t, 700, 600, 5), 7},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			parent, err := Smallest(c.g, 6, Options{Seed: 1})
			if err != nil {
				t.Fatal(err)
			}
			var keep []int
			for i := 0; i < c.g.N-c.drop; i++ {
				keep = append(keep, i)
			}
			part := c.g.Subgraph(keep)
			if !connected(part) {
				t.Fatalf("part of %d nodes is not connected", part.N)
			}
			ref, _ := denseReference(t, part)
			start := restrictedStart(c.g, part, parent, keep)
			z0 := make([]float64, part.N)
			for i, d := range part.Degrees() {
				z0[i] = math.Sqrt(d)
			}
			for _, s := range []struct {
				name  string
				k     int
				tol   float64
				start [][]float64
			}{
				{"k=2 tol 1e-4", 2, 1e-4, start},
				{"k=3 tol 1e-6", 3, 1e-6, start},
				{"k=4 tol 1e-6, one vector", 4, 1e-6, start[:1]},
				{"k=2 tol 1e-4, z0 only", 2, 1e-4, [][]float64{z0}},
			} {
				var first *Result
				for _, w := range []int{1, 2} {
					r, err := Smallest(part, s.k, Options{Tol: s.tol, Workers: w, Seed: 2, Start: s.start})
					if err != nil {
						t.Fatalf("%s workers=%d: %v", s.name, w, err)
					}
					// Results do not depend on the worker count (the
					// package's fixed-order reductions).
					if first == nil {
						first = r
					} else {
						for q := range r.Vectors {
							for i, v := range r.Vectors[q] {
								if math.Float64bits(v) != math.Float64bits(first.Vectors[q][i]) {
									t.Fatalf("%s: vector %d entry %d is %v with 2 workers, %v with 1", s.name, q, i, v, first.Vectors[q][i])
								}
							}
						}
					}
					checkPairs(t, part, s.k, r, s.tol)
					for i := 0; i < s.k; i++ {
						if d := math.Abs(r.Values[i] - ref[i]); d > r.Residuals[i]+1e-12 {
							t.Errorf("%s workers=%d: λ_%d = %.10g, gonum %.10g (|difference| %.3g > residual %.3g)", s.name, w, i, r.Values[i], ref[i], d, r.Residuals[i])
						}
					}
					if w == 1 {
						cold, err := Smallest(part, s.k, Options{Tol: s.tol, Workers: 1, Seed: 2})
						if err != nil {
							t.Fatal(err)
						}
						t.Logf("%s: %d LOBPCG steps from the start, %d coarse to fine", s.name, r.Iterations, cold.Iterations)
					}
				}
			}
		})
	}
}

// TestStartBadInput: start vectors of the wrong length or with a
// non-finite entry are refused with an error, not a panic.
func TestStartBadInput(t *testing.T) {
	g := planarGraph(300, 3)
	good := make([]float64, g.N)
	for i := range good {
		good[i] = float64(i)
	}
	nan := append([]float64(nil), good...)
	nan[5] = math.NaN()
	for _, start := range [][][]float64{{good[:10]}, {good, nan}} {
		if _, err := Smallest(g, 2, Options{Start: start}); err == nil {
			t.Errorf("start of lengths %d...: no error", len(start[0]))
		}
	}
}
