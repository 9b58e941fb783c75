package score

import (
	"math"
	"math/rand/v2"
	"testing"
)

func randomLabels(r *rand.Rand, n, k int) []int32 {
	x := make([]int32, n)
	for i := range x {
		x[i] = int32(r.IntN(k))
	}
	return x
}

// Identities from Hubert and Arabie (1985) and Meila (2007): a partition
// compared with itself (under any renaming) has ARI 1, RI 1 and VI 0.
func TestSamePartition(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for _, k := range []int{1, 2, 7, 300} {
		a := randomLabels(r, 1000, k)
		b := make([]int32, len(a))
		for i, v := range a {
			b[i] = -3*v + 1000 // a renaming: injective map of labels
		}
		if got := ARI(a, b); got != 1 {
			t.Errorf("k=%d: ARI = %v, want 1", k, got)
		}
		if got := RandIndex(a, b); got != 1 {
			t.Errorf("k=%d: RI = %v, want 1", k, got)
		}
		vi, split, merge := VI(a, b)
		if vi > 1e-12 || split > 1e-12 || merge > 1e-12 {
			t.Errorf("k=%d: VI = %v (%v + %v), want 0", k, vi, split, merge)
		}
	}
}

// Meila (2007), property: VI(A,B) <= log n, reached by one cluster against
// all singletons.
func TestVIBound(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for _, k := range []int{2, 5, 50, 500} {
		n := 800
		vi, _, _ := VI(randomLabels(r, n, k), randomLabels(r, n, k))
		if vi > math.Log(float64(n))+1e-12 || vi < 0 {
			t.Errorf("k=%d: VI = %v outside [0, log n = %v]", k, vi, math.Log(float64(n)))
		}
	}
	n := 64
	one := make([]int32, n)
	single := make([]int32, n)
	for i := range single {
		single[i] = int32(i)
	}
	vi, split, merge := VI(single, one)
	if !near(vi, math.Log(float64(n)), 1e-12) {
		t.Errorf("singletons vs one cluster: VI = %v, want log n = %v", vi, math.Log(float64(n)))
	}
	// Singletons as the prediction split the one true region: all of it is split.
	if !near(split, math.Log(float64(n)), 1e-12) || merge != 0 {
		t.Errorf("split, merge = %v, %v; want log n, 0", split, merge)
	}
}

// A hand-worked VI: A = {0,0,1,1}, B = {0,0,0,1}. n_ij: (0,0)=2, (1,0)=1,
// (1,1)=1; b sizes 3,1; a sizes 2,2.
// H(A|B) = -(2/4 log(2/3) + 1/4 log(1/3) + 1/4 log(1/1)) = 0.5 log 1.5 + 0.25 log 3.
// H(B|A) = -(2/4 log(2/2) + 1/4 log(1/2) + 1/4 log(1/2)) = 0.5 log 2.
func TestVIHandWorked(t *testing.T) {
	vi, split, merge := VI([]int32{0, 0, 1, 1}, []int32{0, 0, 0, 1})
	wantSplit := 0.5*math.Log(1.5) + 0.25*math.Log(3)
	wantMerge := 0.5 * math.Log(2)
	if !near(split, wantSplit, 1e-15) || !near(merge, wantMerge, 1e-15) || !near(vi, wantSplit+wantMerge, 1e-15) {
		t.Errorf("VI = %v (%v, %v), want %v (%v, %v)", vi, split, merge, wantSplit+wantMerge, wantSplit, wantMerge)
	}
}

// Hand-worked ARI (Hubert and Arabie 1985 formula): a = {0,0,0,1,1,1},
// b = {0,0,1,1,2,2}. Cells 2,1,1,2 -> sum C(n_ij) = 2; S_a = 3+3 = 6;
// S_b = 1+1+1 = 3; C(6) = 15; expected = 6*3/15 = 1.2;
// ARI = (2 - 1.2) / (4.5 - 1.2) = 0.8/3.3 = 8/33.
// RI: Same = 2, OnlyA = 4, OnlyB = 1, Neither = 8 -> (2+8)/15 = 2/3.
func TestARIHandWorked(t *testing.T) {
	a := []int32{0, 0, 0, 1, 1, 1}
	b := []int32{0, 0, 1, 1, 2, 2}
	p := Contingency(a, b).Pairs()
	if p != (PairCounts{Same: 2, OnlyA: 4, OnlyB: 1, Neither: 8}) {
		t.Errorf("pairs = %+v", p)
	}
	if got := ARI(a, b); !near(got, 8.0/33, 1e-15) {
		t.Errorf("ARI = %v, want 8/33 = %v", got, 8.0/33)
	}
	if got := RandIndex(a, b); !near(got, 2.0/3, 1e-15) {
		t.Errorf("RI = %v, want 2/3", got)
	}
}

// The two ways Contingency counts (dense and bucketed) and the two ways it
// indexes labels (lookup table and sorted search) must give the same table
// as a plain map count.
func TestContingencyPaths(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for _, tc := range []struct {
		name   string
		n, k   int
		spread int32
	}{
		{"dense_compact", 5000, 10, 1},
		{"bucketed_compact", 5000, 2000, 1},
		{"dense_sparse_values", 5000, 10, 1 << 20},
		{"bucketed_sparse_values", 3000, 1500, 1 << 20},
	} {
		t.Run(tc.name, func(t *testing.T) {
			a := randomLabels(r, tc.n, tc.k)
			b := randomLabels(r, tc.n, tc.k)
			for i := range a {
				a[i] = a[i]*tc.spread - 77
				b[i] *= tc.spread
			}
			want := map[[2]int32]int64{}
			for i := range a {
				want[[2]int32{a[i], b[i]}]++
			}
			tab := Contingency(a, b)
			if len(tab.Cells) != len(want) {
				t.Fatalf("%d cells, want %d", len(tab.Cells), len(want))
			}
			var total int64
			for i, c := range tab.Cells {
				if i > 0 {
					p := tab.Cells[i-1]
					if p.Row > c.Row || (p.Row == c.Row && p.Col >= c.Col) {
						t.Fatalf("cells not sorted at %d", i)
					}
				}
				if got := want[[2]int32{tab.A[c.Row], tab.B[c.Col]}]; got != c.Count {
					t.Fatalf("cell (%d,%d) = %d, want %d", tab.A[c.Row], tab.B[c.Col], c.Count, got)
				}
				total += c.Count
			}
			if total != int64(tc.n) || tab.N != int64(tc.n) {
				t.Errorf("total %d, N %d, want %d", total, tab.N, tc.n)
			}
		})
	}
}

func TestLengthMismatchPanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("no panic on maps of different lengths")
		}
	}()
	ARI([]int32{1, 2}, []int32{1})
}
