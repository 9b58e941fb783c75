package affinity

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// A hand-worked 4x3 labelling:
//
//	0 0 1 1
//	0 0 1 1
//	2 2 2 1
//
// Shared 4-connected pixel edges: 0-1: 2 (rows 0 and 1), 0-2: 2 (the two
// vertical pairs under region 0), 1-2: 2 (pixel (2,1)-(2,2) vertical and
// (2,2)-(3,2) horizontal).
func TestAdjacencyHand(t *testing.T) {
	labels := []int32{0, 0, 1, 1, 0, 0, 1, 1, 2, 2, 2, 1}
	g := Adjacency(labelmap.Map{Pix: labels, Width: 4, Height: 3}, 3, 2)
	if err := g.Validate(); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		i, j int
		want float32
	}{{0, 1, 2}, {0, 2, 2}, {1, 2, 2}} {
		if got, ok := g.At(c.i, c.j); !ok || got != c.want {
			t.Errorf("b(%d,%d) = %v, %v; want %v", c.i, c.j, got, ok, c.want)
		}
	}
}

func TestSummarizeAndRegionGraph(t *testing.T) {
	labels := []int32{0, 0, 1, 1, 0, 0, 1, 1, 2, 2, 2, 1}
	f := [][]float32{{0, 0.2, 1, 1, 0.2, 0, 1, 1, 0.5, 0.5, 0.5, 1}}
	r := Summarize(f, labelmap.Map{Pix: labels, Width: 4, Height: 3}, 3)
	// Region 0: pixels (0,0),(1,0),(0,1),(1,1): mean 0.1, centroid (0.5,0.5).
	if r.Area[0] != 4 || math.Abs(r.Mean[0][0]-0.1) > 1e-7 || r.CX[0] != 0.5 || r.CY[0] != 0.5 {
		t.Fatalf("region 0: area %d mean %v centroid (%v,%v)", r.Area[0], r.Mean[0][0], r.CX[0], r.CY[0])
	}
	// Region 1: (2,0),(3,0),(2,1),(3,1),(3,2): centroid (2.6, 0.8).
	if r.Area[1] != 5 || math.Abs(r.CX[1]-2.6) > 1e-12 || math.Abs(r.CY[1]-0.8) > 1e-12 {
		t.Fatalf("region 1: area %d centroid (%v,%v)", r.Area[1], r.CX[1], r.CY[1])
	}
	p := RegionParams{SigmaI: 0.3, SigmaX: 5}
	g, err := RegionGraph(r, Adjacency(labelmap.Map{Pix: labels, Width: 4, Height: 3}, 3, 2), 4, 3, p)
	if err != nil {
		t.Fatal(err)
	}
	if err := g.Validate(); err != nil {
		t.Fatal(err)
	}
	// The formula in RegionGraph's doc comment, evaluated by hand for 0-1.
	S := math.Sqrt(12.0 / 3)
	df := r.Mean[0][1] - r.Mean[0][0]
	dx, dy := r.CX[1]-r.CX[0], r.CY[1]-r.CY[0]
	want := 2 / S * math.Exp(-df*df/0.09) * math.Exp(-(dx*dx+dy*dy)/25)
	if got, _ := g.At(0, 1); math.Abs(float64(got)-want) > 1e-6*want {
		t.Errorf("w01 = %v, want %v", got, want)
	}
	if _, err := RegionGraph(r, Adjacency(labelmap.Map{Pix: labels, Width: 4, Height: 3}, 3, 2), 4, 3, RegionParams{SigmaI: math.NaN(), SigmaX: 1}); err == nil {
		t.Error("NaN sigma-i accepted")
	}
}

func TestMatrixMarketRoundTrip(t *testing.T) {
	g, err := FromEdges(5, []Edge{{0, 1, 0.5}, {1, 2, 1e-7}, {3, 4, 2}, {0, 4, 0.333333}})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := g.WriteMatrixMarket(&buf, "test graph\nsecond line"); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	// Header and size line as the NIST Matrix Market format defines them.
	if !strings.HasPrefix(text, "%%MatrixMarket matrix coordinate real symmetric\n% test graph\n% second line\n5 5 4\n") {
		t.Fatalf("header:\n%s", text)
	}
	h, err := ReadMatrixMarket(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(graphBytes(t, g), graphBytes(t, h)) {
		t.Error("graph changed in a Matrix Market round trip")
	}
	for _, bad := range []string{"", "%%MatrixMarket matrix array real general\n2 2\n", "%%MatrixMarket matrix coordinate real symmetric\n2 2 1\n3 1 1\n", "%%MatrixMarket matrix coordinate real symmetric\n2 2 2\n2 1 1\n"} {
		if _, err := ReadMatrixMarket(strings.NewReader(bad)); err == nil {
			t.Errorf("accepted %q", bad)
		}
	}
}

func TestSubgraph(t *testing.T) {
	g, _ := FromEdges(4, []Edge{{0, 1, 1}, {1, 2, 2}, {2, 3, 3}, {0, 3, 4}})
	s := g.Subgraph([]int{1, 2, 3})
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	if s.N != 3 || s.NNZ() != 4 {
		t.Fatalf("N %d NNZ %d, want 3, 4", s.N, s.NNZ())
	}
	if w, _ := s.At(0, 1); w != 2 {
		t.Errorf("w(1,2) = %v", w)
	}
	if w, _ := s.At(1, 2); w != 3 {
		t.Errorf("w(2,3) = %v", w)
	}
}

// Subgraph against its definition, the induced subgraph (w_kl of the
// result = w of nodes[k], nodes[l] in the input, sorted rows), on random
// graphs and node sets whose positions take both lookups (a slice over a
// narrow span, a map over a wide one), ascending and shuffled.
func TestSubgraphInduced(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 4))
	const n = 400
	var e []Edge
	for i := 0; i < n; i++ {
		for k := 0; k < 6; k++ {
			if j := rng.IntN(n); j != i {
				e = append(e, Edge{I: i, J: j, W: float32(1 + rng.IntN(9))})
			}
		}
	}
	g, err := FromEdges(n, e)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name     string
		lo, span int
		pick     float64 // share of the span taken
		shuffle  bool
	}{
		{"dense span, ascending", 100, 120, 0.5, false},
		{"dense span, shuffled", 100, 120, 0.5, true},
		{"wide span, ascending", 0, n, 0.05, false},
		{"wide span, shuffled", 0, n, 0.05, true},
		{"all nodes", 0, n, 1, false},
	} {
		var nodes []int
		for v := c.lo; v < c.lo+c.span; v++ {
			if rng.Float64() < c.pick {
				nodes = append(nodes, v)
			}
		}
		if c.shuffle {
			rng.Shuffle(len(nodes), func(a, b int) { nodes[a], nodes[b] = nodes[b], nodes[a] })
		}
		s := g.Subgraph(nodes)
		if err := s.Validate(); err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		count := 0
		for k, u := range nodes {
			for l, v := range nodes {
				want, okW := g.At(u, v)
				got, okG := s.At(k, l)
				if okW != okG || want != got {
					t.Fatalf("%s: w(%d,%d) = %v %v, want %v %v", c.name, k, l, got, okG, want, okW)
				}
				if okW {
					count++
				}
			}
			for p := s.RowPtr[k] + 1; p < s.RowPtr[k+1]; p++ {
				if s.Col[p] <= s.Col[p-1] {
					t.Fatalf("%s: row %d not sorted", c.name, k)
				}
			}
		}
		if count != s.NNZ() {
			t.Errorf("%s: %d stored entries, %d edges", c.name, s.NNZ(), count)
		}
	}
}

// DropNegligible removes exactly the edges below 1e-6 of the larger degree
// of their ends, from both rows, and leaves the rest untouched: a triangle
// of unit weights (degrees about 2) with a fourth node hung on it by 1e-7
// (below 2e-6, dropped) and a fifth by 1e-5 (kept).
func TestDropNegligible(t *testing.T) {
	g, err := FromEdges(5, []Edge{{0, 1, 1}, {1, 2, 1}, {0, 2, 1}, {2, 3, 1e-7}, {0, 4, 1e-5}})
	if err != nil {
		t.Fatal(err)
	}
	g.DropNegligible()
	if err := g.Validate(); err != nil {
		t.Fatal(err)
	}
	if _, ok := g.At(2, 3); ok {
		t.Error("edge 2-3 (1e-7 against degree 2) kept")
	}
	if _, ok := g.At(3, 2); ok {
		t.Error("edge 3-2 kept in one row only")
	}
	for _, e := range [][2]int{{0, 1}, {1, 2}, {0, 2}, {0, 4}, {4, 0}} {
		if _, ok := g.At(e[0], e[1]); !ok {
			t.Errorf("edge %d-%d dropped", e[0], e[1])
		}
	}
	if g.NNZ() != 8 {
		t.Errorf("%d entries, want 8", g.NNZ())
	}
}

// Summarize by runs of one label equals the pixel-by-pixel sums of its
// definition bit for bit: a SLIC labelling of a blob scene, two planes.
func TestSummarizeRunsExact(t *testing.T) {
	const w, h = 97, 61
	f := blobImage(13, w, h, 0.05)
	f = append(f, blobImage(14, w, h, 0.05)[0])
	labelsMap, n, err := SLIC(f, w, h, SLICParams{Count: 60, Compactness: 20}, 1)
	if err != nil {
		t.Fatal(err)
	}
	labels := labelsMap.Pix
	got := Summarize(f, labelsMap, n)
	area := make([]float64, n)
	cx, cy := make([]float64, n), make([]float64, n)
	mean := [][]float64{make([]float64, n), make([]float64, n)}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			l := labels[y*w+x]
			area[l]++
			cx[l] += float64(x)
			cy[l] += float64(y)
			for c := range f {
				mean[c][l] += float64(f[c][y*w+x])
			}
		}
	}
	for l := 0; l < n; l++ {
		want := []float64{area[l], cx[l] / area[l], cy[l] / area[l], mean[0][l] / area[l], mean[1][l] / area[l]}
		have := []float64{float64(got.Area[l]), got.CX[l], got.CY[l], got.Mean[0][l], got.Mean[1][l]}
		for k := range want {
			if have[k] != want[k] {
				t.Fatalf("region %d, value %d (area, cx, cy, mean 0, mean 1): %v, per-pixel sums %v", l, k, have[k], want[k])
			}
		}
	}
}
