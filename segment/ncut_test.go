package segment

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/eigen"
)

func mustGraph(t testing.TB, n int, edges []affinity.Edge) *affinity.Graph {
	t.Helper()
	g, err := affinity.FromEdges(n, edges)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// Hand-computed normalized cuts (Shi and Malik 2000, eq. 2).
func TestNcutHand(t *testing.T) {
	// Path 0 -1- 1 -0.1- 2 -1- 3.
	path := mustGraph(t, 4, []affinity.Edge{{I: 0, J: 1, W: 1}, {I: 1, J: 2, W: 0.1}, {I: 2, J: 3, W: 1}})
	// Square 0-1-2-3-0 with weights 1, 2, 3, 4.
	square := mustGraph(t, 4, []affinity.Edge{{I: 0, J: 1, W: 1}, {I: 1, J: 2, W: 2}, {I: 2, J: 3, W: 3}, {I: 3, J: 0, W: 4}})
	cases := []struct {
		name string
		g    *affinity.Graph
		inA  []bool
		want float64
	}{
		// cut 0.1; assoc(A,V) = 1 + 1.1 = 2.1 = assoc(B,V): 0.1/2.1 + 0.1/2.1.
		{"path middle", path, []bool{true, true, false, false}, 0.2 / 2.1},
		// cut 1; assoc(A,V) = d0 = 1, assoc(B,V) = 1.1 + 1.1 + 1 = 3.2.
		{"path end", path, []bool{true, false, false, false}, 1 + 1/3.2},
		// A = {0,1}: cut = w12 + w30 = 6; d = (5, 3, 5, 7): 6/8 + 6/12.
		{"square", square, []bool{true, true, false, false}, 6.0/8 + 6.0/12},
		// A = {0,2}: every edge is cut, cut = 10; 10/10 + 10/10.
		{"square alternate", square, []bool{true, false, true, false}, 2},
		{"empty side", path, []bool{true, true, true, true}, math.Inf(1)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := Ncut(c.g, c.inA); math.Abs(got-c.want) > 1e-6 && !(math.IsInf(got, 1) && math.IsInf(c.want, 1)) {
				t.Errorf("Ncut = %v, want %v", got, c.want)
			}
		})
	}
}

func randomConnected(rng *rand.Rand, n int, extra int) []affinity.Edge {
	var e []affinity.Edge
	for i := 1; i < n; i++ { // a random spanning tree keeps it connected
		e = append(e, affinity.Edge{I: i, J: rng.IntN(i), W: float32(0.1 + rng.Float64())})
	}
	for k := 0; k < extra; k++ {
		i, j := rng.IntN(n), rng.IntN(n)
		if i != j {
			e = append(e, affinity.Edge{I: i, J: j, W: float32(0.1 + rng.Float64())})
		}
	}
	return e
}

// The one-pass sweep must find the same best prefix Ncut as evaluating
// every prefix from scratch with Ncut (an internal identity: the running
// cut update is cut += d_i - 2 w(i, A)).
func TestSweepMatchesDirect(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 20; trial++ {
		n := 5 + rng.IntN(30)
		g := mustGraph(t, n, randomConnected(rng, n, 2*n))
		y := make([]float64, n)
		for i := range y {
			y[i] = rng.NormFloat64()
		}
		s, ok := sweepSplit(g, g.Degrees(), y, nil, 1)
		if !ok {
			t.Fatal("no admissible split")
		}
		best := math.Inf(1)
		for k := 1; k < n; k++ {
			inA := make([]bool, n)
			for _, i := range s.order[:k] {
				inA[i] = true
			}
			best = math.Min(best, Ncut(g, inA))
		}
		if math.Abs(best-s.ncut) > 1e-9*math.Max(1, best) {
			t.Fatalf("trial %d: sweep %v, direct %v", trial, s.ncut, best)
		}
	}
}

// Two cliques K_10 joined by three weak edges: the recursive cut finds the
// planted partition, and its Ncut equals the closed form
// 2 cut / (vol/2) with cut = 3 w, vol/2 = 10*9 + 3 w (each side has the same
// volume).
func TestBisectTwoCliques(t *testing.T) {
	const n, wWeak = 10, 0.01
	var e []affinity.Edge
	for s := 0; s < 2; s++ {
		for i := 0; i < n; i++ {
			for j := i + 1; j < n; j++ {
				e = append(e, affinity.Edge{I: s*n + i, J: s*n + j, W: 1})
			}
		}
	}
	for k := 0; k < 3; k++ {
		e = append(e, affinity.Edge{I: k, J: n + k, W: wWeak})
	}
	g := mustGraph(t, 2*n, e)
	p := Params{MaxNcut: 0.2, MinArea: 1, Method: MethodBisect, Workers: 1, Seed: 1}
	res, err := bisect(context.Background(), g, nil, p.cutParams(), cutOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if res.regions != 2 {
		t.Fatalf("%d regions, want 2 (splits %v)", res.regions, res.splitNcuts)
	}
	for i := 0; i < 2*n; i++ {
		if (res.region[i] == res.region[0]) != (i < n) {
			t.Fatalf("node %d on the wrong side: %v", i, res.region)
		}
	}
	cut := 3.0 * float64(float32(wWeak))
	want := 2 * cut / (90 + cut)
	if len(res.splitNcuts) != 1 || math.Abs(res.splitNcuts[0]-want) > 1e-6 {
		t.Errorf("split Ncuts %v, want [%v]", res.splitNcuts, want)
	}
	// K_10's normalized Laplacian has eigenvalue 10/9 (Chung 1997); the two
	// weakly joined copies keep the 0 and gain a small second eigenvalue.
	if v := res.eigenvalues; len(v) < 3 || v[1] > 0.01 || math.Abs(v[2]-10.0/9) > 0.01 {
		t.Errorf("eigenvalues %v: want 0, a small one, then about 10/9", v)
	}
}

// Cheeger inequality (Chung 1997, ch. 2): λ_2/2 <= h(G) <= sqrt(2 λ_2) with
// h(G) = min_S cut(S, S̄) / min(vol S, vol S̄). h is found by brute force
// over all subsets of small random graphs; the sweep of D^-1/2 z_1, which
// the proof of the upper bound constructs, must itself reach sqrt(2 λ_2).
func TestCheegerBounds(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for trial := 0; trial < 12; trial++ {
		n := 6 + rng.IntN(8)
		g := mustGraph(t, n, randomConnected(rng, n, n))
		deg := g.Degrees()
		var vol float64
		for _, d := range deg {
			vol += d
		}
		h := math.Inf(1)
		for mask := 1; mask < 1<<(n-1); mask++ { // node n-1 always in S̄
			var cut, volS float64
			for i := 0; i < n; i++ {
				if mask&(1<<i) == 0 {
					continue
				}
				volS += deg[i]
				for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
					if mask&(1<<g.Col[p]) == 0 {
						cut += float64(g.Weight[p])
					}
				}
			}
			h = math.Min(h, cut/math.Min(volS, vol-volS))
		}
		ep, err := eigen.Smallest(g, 2, eigen.Options{Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		l2 := ep.Values[1]
		if l2/2 > h+1e-9 || h > math.Sqrt(2*l2)+1e-9 {
			t.Errorf("trial %d: λ2 %v, h %v: Cheeger bounds violated", trial, l2, h)
		}
		// Conductance of the best sweep cut of the Fiedler vector.
		y := make([]float64, n)
		for i := range y {
			y[i] = ep.Vectors[1][i] / math.Sqrt(deg[i])
		}
		s, _ := sweepSplit(g, deg, y, nil, 1)
		best := math.Inf(1)
		for k := 1; k < n; k++ {
			inA := make([]bool, n)
			var volA float64
			for _, i := range s.order[:k] {
				inA[i] = true
				volA += deg[i]
			}
			cut := Ncut(g, inA) / (1/volA + 1/(vol-volA))
			best = math.Min(best, cut/math.Min(volA, vol-volA))
		}
		if best > math.Sqrt(2*l2)+1e-9 || best < h-1e-9 {
			t.Errorf("trial %d: sweep conductance %v outside [h %v, sqrt(2λ2) %v]", trial, best, h, math.Sqrt(2*l2))
		}
	}
}

func TestComponents(t *testing.T) {
	g := mustGraph(t, 6, []affinity.Edge{{I: 0, J: 1, W: 1}, {I: 1, J: 2, W: 1}, {I: 4, J: 5, W: 1}})
	comp, n := Components(g)
	if n != 3 {
		t.Fatalf("%d components, want 3 (node 3 isolated)", n)
	}
	if comp[0] != comp[2] || comp[4] != comp[5] || comp[3] == comp[0] || comp[3] == comp[4] {
		t.Errorf("components %v", comp)
	}
}

// TestSweepOrderStable checks sweepOrder against the standard library's
// stable sort (sort.SliceStable of 0..n-1 by y, the order sweepSplit
// used before): the same order on random vectors with many ties and
// signed zeros.
func TestSweepOrderStable(t *testing.T) {
	rng := rand.New(rand.NewPCG(13950, 1))
	for trial := 0; trial < 60; trial++ {
		n := 1 + rng.IntN(3000)
		y := make([]float64, n)
		levels := 1 + rng.IntN(50) // few levels: many ties
		for i := range y {
			y[i] = float64(rng.IntN(levels)) - float64(levels)/2
			if trial%3 == 0 {
				y[i] = rng.NormFloat64()
			}
			if y[i] == 0 && rng.IntN(2) == 0 {
				y[i] = math.Copysign(0, -1)
			}
		}
		want := make([]int32, n)
		for i := range want {
			want[i] = int32(i)
		}
		sort.SliceStable(want, func(a, b int) bool { return y[want[a]] < y[want[b]] })
		if got := sweepOrder(y); !slices.Equal(got, want) {
			t.Fatalf("trial %d (n = %d): sweepOrder differs from sort.SliceStable", trial, n)
		}
	}
}
