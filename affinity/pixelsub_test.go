package affinity

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestPixelSubgraphHand3x3 checks PixelSubgraph on the 3x3 image of
// TestPixelGraphHand3x3 against weights worked out by hand from the
// formula of Shi and Malik (2000), eq. (11), w_ij = exp(-(a+b)) with
// a = 4 (F_i-F_j)² (sigma_I = 0.5) and b = dx²+dy² (sigma_X = 1), on the
// pixels {0, 2, 4, 8}: node 0 is pixel 0, 1 pixel 2, 2 pixel 4, 3 pixel 8.
func TestPixelSubgraphHand3x3(t *testing.T) {
	img := hand3x3
	g, err := PixelSubgraph([][]float32{img}, 3, 3, []int{0, 2, 4, 8}, PixelParams{Radius: 2, SigmaI: 0.5, SigmaX: 1})
	if err != nil {
		t.Fatal(err)
	}
	e := math.Exp
	cases := []handRow{
		// pixel 0 (0,0)=0: pixel 2 a=4 b=4; pixel 4 a=1 b=2; pixel 8 is at distance sqrt(8) > 2.
		{0, []int32{1, 2}, []float64{e(-8), e(-3)}},
		// pixel 4 (1,1)=0.5: pixels 0, 2 a=1 b=2; pixel 8 a=0.25 b=2.
		{2, []int32{0, 1, 3}, []float64{e(-3), e(-3), e(-2.25)}},
		// pixel 8 (2,2)=0.25: pixel 2 a=2.25 b=4; pixel 4 a=0.25 b=2.
		{3, []int32{1, 2}, []float64{e(-6.25), e(-2.25)}},
	}
	checkHandRows(t, g, cases)
}

// TestPixelSubgraphMatchesSubgraph checks that PixelSubgraph gives, bit
// for bit, the graph PixelGraph followed by Graph.Subgraph gives (the
// re-cut of objects relies on it for identical label maps), on random
// pixel sets of noise and blob images, one and three planes, radii 1 to
// 5, including weights dropped at maxExpArg (sigma_I 0.01 on noise).
func TestPixelSubgraphMatchesSubgraph(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 3))
	cases := []struct {
		name   string
		f      [][]float32
		w, h   int
		p      PixelParams
		filled float64
	}{
		{"noise r2", noiseImage(1, 37, 23, 1), 37, 23, PixelParams{Radius: 2, SigmaI: 0.12, SigmaX: 2}, 0.6},
		{"noise r5 drops", noiseImage(2, 40, 30, 1), 40, 30, PixelParams{Radius: 5, SigmaI: 0.01, SigmaX: 4}, 0.5},
		{"noise 3 planes", noiseImage(3, 25, 31, 3), 25, 31, PixelParams{Radius: 3, SigmaI: 0.2, SigmaX: 2}, 0.8},
		{"blob r1", blobImage(4, 50, 40, 0.02), 50, 40, PixelParams{Radius: 1, SigmaI: 0.1, SigmaX: 1}, 0.3},
		{"blob all", blobImage(5, 33, 33, 0.05), 33, 33, PixelParams{Radius: 2, SigmaI: 0.12, SigmaX: 2}, 1},
		{"one row", noiseImage(6, 60, 1, 1), 60, 1, PixelParams{Radius: 4, SigmaI: 0.3, SigmaX: 2}, 0.7},
	}
	for _, c := range cases {
		var nodes []int
		for i := 0; i < c.w*c.h; i++ {
			if rng.Float64() < c.filled {
				nodes = append(nodes, i)
			}
		}
		full, err := PixelGraph(c.f, c.w, c.h, c.p, 1)
		if err != nil {
			t.Fatal(err)
		}
		want := full.Subgraph(nodes)
		got, err := PixelSubgraph(c.f, c.w, c.h, nodes, c.p)
		if err != nil {
			t.Fatal(err)
		}
		if got.NNZ() == 0 {
			t.Fatalf("%s: empty graph", c.name)
		}
		if !bytes.Equal(graphBytes(t, got), graphBytes(t, want)) {
			t.Errorf("%s: PixelSubgraph differs from PixelGraph + Subgraph (%d / %d entries)", c.name, got.NNZ(), want.NNZ())
		}
		if err := got.Validate(); err != nil {
			t.Errorf("%s: %v", c.name, err)
		}
	}
}

func TestPixelSubgraphBadInput(t *testing.T) {
	f := noiseImage(1, 4, 4, 1)
	p := PixelParams{Radius: 2, SigmaI: 0.1, SigmaX: 2}
	for _, c := range []struct {
		name  string
		nodes []int
		want  string
	}{
		{"out of range", []int{3, 16}, "out of range"},
		{"negative", []int{-1, 3}, "out of range"},
		{"descending", []int{5, 3}, "not ascending"},
		{"repeated", []int{3, 3}, "not ascending"},
	} {
		if _, err := PixelSubgraph(f, 4, 4, c.nodes, p); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	if _, err := PixelSubgraph([][]float32{{1, 2}}, 4, 4, []int{0}, p); err == nil {
		t.Error("short plane: no error")
	}
	if _, err := PixelSubgraph(f, 4, 4, []int{0}, PixelParams{Radius: 0, SigmaI: 0.1, SigmaX: 2}); err == nil {
		t.Error("radius 0: no error")
	}
}
