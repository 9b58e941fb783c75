package affinity

import (
	"bytes"
	"fmt"
	"math"
	"runtime"
	"strings"
	"testing"
)

// stencilCases are image sizes and radii for the stencil form against the
// compressed rows of PixelGraph: single pixels, single rows and columns,
// radii wider than the image, and images large enough to have interior
// pixels. Small sigma_I on noise leaves edges out (kernel argument above
// maxExpArg), so the zero slots of absent edges are exercised too.
var stencilCases = []struct {
	w, h, r, planes int
	sigmaI          float64
}{
	{1, 1, 1, 1, 0.1},
	{1, 1, 5, 1, 0.1},
	{2, 1, 1, 1, 0.1},
	{1, 7, 2, 1, 0.1},
	{7, 1, 3, 2, 0.1},
	{2, 2, 1, 1, 0.5},
	{3, 3, 2, 1, 0.5},
	{4, 3, 5, 1, 0.3},
	{5, 6, 1, 3, 0.2},
	{9, 4, 2, 1, 0.08},
	{13, 11, 3, 1, 0.05},
	{17, 12, 5, 1, 0.1},
	{12, 17, 5, 2, 0.1},
	{40, 30, 5, 1, 0.1},
	{31, 29, 8, 1, 0.1},
	{25, 20, 4, 1, 0.02},
}

// TestStencilGraphMatchesCSR checks that the stencil form holds exactly
// PixelGraph's graph: CSR bit for bit, every row, the degrees, NNZ and
// the Matrix Market file byte for byte (the compressed rows of
// PixelGraph are the reference: the formula of Shi and Malik (2000),
// checked against hand values in TestPixelGraphHand3x3).
func TestStencilGraphMatchesCSR(t *testing.T) {
	dropped := false
	for _, c := range stencilCases {
		t.Run(fmt.Sprintf("%dx%d_r%d_p%d", c.w, c.h, c.r, c.planes), func(t *testing.T) {
			f := noiseImage(uint64(c.w*100+c.h), c.w, c.h, c.planes)
			p := PixelParams{Radius: c.r, SigmaI: c.sigmaI, SigmaX: 4}
			g, err := PixelGraph(f, c.w, c.h, p, 1)
			if err != nil {
				t.Fatal(err)
			}
			s, err := PixelStencilGraph(f, c.w, c.h, p, 1)
			if err != nil {
				t.Fatal(err)
			}
			if s.Nodes() != g.N || s.NNZ() != g.NNZ() {
				t.Fatalf("nodes %d nnz %d, want %d and %d", s.Nodes(), s.NNZ(), g.N, g.NNZ())
			}
			if !bytes.Equal(graphBytes(t, s.CSR()), graphBytes(t, g)) {
				t.Fatal("CSR differs from PixelGraph")
			}
			for i := 0; i < g.N; i++ {
				col, wt := s.Row(i, nil, nil)
				lo, hi := g.RowPtr[i], g.RowPtr[i+1]
				if !equalInt32(col, g.Col[lo:hi]) {
					t.Fatalf("row %d columns %v, want %v", i, col, g.Col[lo:hi])
				}
				for k := range wt {
					if wt[k] != g.Weight[lo+k] {
						t.Fatalf("row %d entry %d weight %v, want %v", i, k, wt[k], g.Weight[lo+k])
					}
				}
			}
			dg, ds := g.Degrees(), s.Degrees()
			for i := range dg {
				if dg[i] != ds[i] {
					t.Fatalf("degree %d: %v, want %v", i, ds[i], dg[i])
				}
			}
			var a, b bytes.Buffer
			if err := g.WriteMatrixMarket(&a, "a comment"); err != nil {
				t.Fatal(err)
			}
			if err := s.WriteMatrixMarket(&b, "a comment"); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(a.Bytes(), b.Bytes()) {
				t.Fatal("Matrix Market files differ")
			}
			// Structural count: in-image neighbours of every pixel.
			st := newStencil(c.w, c.h, c.r, 4)
			full := 0
			for y := 0; y < c.h; y++ {
				for x := 0; x < c.w; x++ {
					full += st.rowLen(x, y, c.w, c.h)
				}
			}
			if g.NNZ() < full {
				dropped = true
			}
			// Slots of neighbours outside the image hold 0.
			dx, dy := s.Offsets()
			wts := s.Weights()
			K := len(dx)
			for i := 0; i < c.w*c.h; i++ {
				x, y := i%c.w, i/c.w
				for o := range dx {
					xx, yy := x+dx[o], y+dy[o]
					out := xx < 0 || xx >= c.w || yy < 0 || yy >= c.h
					if out && wts[i*K+o] != 0 {
						t.Fatalf("offset (%d,%d) of pixel (%d,%d) outside the image holds %v", dx[o], dy[o], x, y, wts[i*K+o])
					}
				}
			}
		})
	}
	if !dropped {
		t.Error("no case left an edge out: the zero slots of absent edges went untested")
	}
}

// TestStencilGraphWorkersIdentical checks that the weights do not depend
// on the number of goroutines.
func TestStencilGraphWorkersIdentical(t *testing.T) {
	f := blobImage(3, 61, 47, 0.05)
	p := PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: 4}
	s1, err := PixelStencilGraph(f, 61, 47, p, 1)
	if err != nil {
		t.Fatal(err)
	}
	s4, err := PixelStencilGraph(f, 61, 47, p, 4)
	if err != nil {
		t.Fatal(err)
	}
	w1, w4 := s1.Weights(), s4.Weights()
	for k := range w1 {
		if w1[k] != w4[k] {
			t.Fatalf("weight %d: %v with 1 worker, %v with 4", k, w1[k], w4[k])
		}
	}
}

// TestStencilGraphBadInput checks that PixelStencilGraph refuses what
// PixelGraph refuses, with the same errors.
func TestStencilGraphBadInput(t *testing.T) {
	good := make([]float32, 12)
	cases := []struct {
		name string
		f    [][]float32
		w, h int
		p    PixelParams
		want string
	}{
		{"no planes", nil, 4, 3, PixelParams{2, 0.1, 2}, "no feature planes"},
		{"short plane", [][]float32{good[:11]}, 4, 3, PixelParams{2, 0.1, 2}, "has 11 values"},
		{"zero width", [][]float32{{}}, 0, 3, PixelParams{2, 0.1, 2}, "empty"},
		{"radius", [][]float32{good}, 4, 3, PixelParams{0, 0.1, 2}, "radius"},
		{"sigma-i", [][]float32{good}, 4, 3, PixelParams{2, -1, 2}, "sigma-i"},
	}
	for _, c := range cases {
		_, err := PixelStencilGraph(c.f, c.w, c.h, c.p, 1)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
}

// TestEstimateStencilGraphBytes: the estimate covers what the build of
// the stencil form allocates (runtime.MemStats.TotalAlloc) and is not far
// above it, and it is about half of the compressed rows' estimate at
// r = 5 (4 bytes an entry against 8, with every slot counted).
func TestEstimateStencilGraphBytes(t *testing.T) {
	for _, c := range []struct{ w, h, r int }{{152, 192, 5}, {64, 40, 1}, {30, 30, 12}, {7, 300, 5}} {
		f := blobImage(3, c.w, c.h, 0.02)
		var m0, m1 runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&m0)
		_, err := PixelStencilGraph(f, c.w, c.h, PixelParams{Radius: c.r, SigmaI: 0.1, SigmaX: 4}, 1)
		runtime.ReadMemStats(&m1)
		if err != nil {
			t.Fatal(err)
		}
		used := int64(m1.TotalAlloc - m0.TotalAlloc)
		est := EstimateStencilGraphBytes(c.w, c.h, c.r)
		if used > est || float64(used) < 0.8*float64(est) {
			t.Errorf("%dx%d r=%d: allocated %d bytes, estimate %d", c.w, c.h, c.r, used, est)
		}
		t.Logf("%dx%d r=%d: allocated %d bytes, estimate %d", c.w, c.h, c.r, used, est)
	}
	if r := float64(EstimateStencilGraphBytes(1152, 912, 5)) / float64(EstimatePixelGraphBytes(1152, 912, 5)); r < 0.45 || r > 0.55 {
		t.Errorf("stencil over compressed rows at 1152 x 912, r = 5: %.3f, want about 0.5", r)
	}
	if EstimateStencilGraphBytes(0, 5, 5) != 0 || EstimateStencilGraphBytes(5, 5, 0) != 0 {
		t.Error("empty sizes should estimate 0")
	}
	if EstimateStencilGraphBytes(1<<25, 1<<25, 5) != math.MaxInt64 {
		t.Error("huge size should saturate")
	}
}
