package eigen

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
)

// stencilImage is a test scene of w x h pixels: blocks of 2 x 3 pixels
// at two levels 0.7 apart plus uniform noise of amplitude 0.3, so that at
// sigma_I = 0.1 the edges between blocks of different levels (kernel
// argument above 86) are left out of the graph while every pixel keeps
// the edges inside its block and to blocks of its own level.
func stencilImage(seed uint64, w, h int) [][]float32 {
	rng := rand.New(rand.NewPCG(seed, 3))
	p := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.3 * rng.Float64()
			if (x/2+y/3)%2 == 0 {
				v += 0.7
			}
			p[y*w+x] = float32(v)
		}
	}
	return [][]float32{p}
}

// stencilLevels builds the input level of one image both ways: from the
// compressed rows (the reference) and from the stencil form.
func stencilLevels(t testing.TB, w, h, r int, sigmaI float64) (csr, st *level, g *affinity.Graph, sg *affinity.StencilGraph) {
	t.Helper()
	f := stencilImage(uint64(w*1000+h*10+r), w, h)
	p := affinity.PixelParams{Radius: r, SigmaI: sigmaI, SigmaX: 4}
	g, err := affinity.PixelGraph(f, w, h, p, 1)
	if err != nil {
		t.Fatal(err)
	}
	sg, err = affinity.PixelStencilGraph(f, w, h, p, 1)
	if err != nil {
		t.Fatal(err)
	}
	return newLevel(g.N, g.RowPtr, g.Col, g.Weight), newStencilLevel(sg, 2), g, sg
}

// stencilSizes are the images of the stencil tests: single pixels, rows
// and columns, radii past the image, pixels near every edge, and images
// with interior rows whose neighbours are all in range.
var stencilSizes = []struct{ w, h, r int }{
	{1, 1, 1}, {2, 1, 1}, {1, 2, 3}, {5, 1, 2}, {1, 6, 5}, {2, 2, 1},
	{3, 3, 5}, {4, 7, 2}, {7, 4, 3}, {9, 9, 1}, {16, 12, 5}, {12, 16, 5},
	{23, 19, 4}, {40, 33, 5}, {37, 41, 7},
}

// TestStencilProductMatchesCSR checks the stencil product L x against the
// compressed-row product (level.mulRows, the reference) bit for bit, for
// block widths 1 to 13 (every column grouping of the kernel: 6, 5, 3, 2
// and the single column split by parity), over radii and image sizes
// including tiny images and pixels on every edge. Degrees, the diagonal
// of L and the row chunks must agree too.
func TestStencilProductMatchesCSR(t *testing.T) {
	dropped := false
	for _, c := range stencilSizes {
		for _, sigmaI := range []float64{0.1, 10} {
			t.Run(fmt.Sprintf("%dx%d_r%d_s%g", c.w, c.h, c.r, sigmaI), func(t *testing.T) {
				a, b, g, sg := stencilLevels(t, c.w, c.h, c.r, sigmaI)
				if a.nnz() != b.nnz() || a.nnz() != g.NNZ() {
					t.Fatalf("nnz %d and %d, graph %d", a.nnz(), b.nnz(), g.NNZ())
				}
				if sg.NNZ() < structuralNNZ(c.w, c.h, c.r) {
					dropped = true
				}
				same := func(u, v float64) bool { return math.Float64bits(u) == math.Float64bits(v) }
				for i := range a.deg {
					if !same(a.deg[i], b.deg[i]) || !same(a.jac[i], b.jac[i]) || !same(a.s[i], b.s[i]) {
						t.Fatalf("node %d: degree %v / %v, ω/diagonal %v / %v", i, a.deg[i], b.deg[i], a.jac[i], b.jac[i])
					}
					if !(a.deg[i] > 0) && g.N > 1 {
						t.Fatalf("node %d is isolated: pick another scene", i)
					}
				}
				if fmt.Sprint(a.chunks) != fmt.Sprint(b.chunks) {
					t.Fatalf("chunks %v, want %v", b.chunks, a.chunks)
				}
				if g.N == 1 {
					return // no edge: D^-1/2 is undefined
				}
				rng := rand.New(rand.NewPCG(uint64(g.N), 5))
				for m := 1; m <= 13; m++ {
					x := newBlock(g.N, m)
					for k := range x.v {
						x.v[k] = rng.Float64() - 0.5
					}
					ya, yb := newBlock(g.N, m), newBlock(g.N, m)
					a.applyL(ya, x, newBlock(g.N, m), 2)
					b.applyL(yb, x, newBlock(g.N, m), 3)
					for k := range ya.v {
						if math.Float64bits(ya.v[k]) != math.Float64bits(yb.v[k]) {
							t.Fatalf("m = %d, entry %d: stencil %v, compressed rows %v", m, k, yb.v[k], ya.v[k])
						}
					}
				}
			})
		}
	}
	if !dropped {
		t.Error("no case left an edge out: zero slots inside the image went untested")
	}
}

// structuralNNZ counts the pixel pairs within distance r of a w x h image.
func structuralNNZ(w, h, r int) int {
	n := 0
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			for dy := -r; dy <= r; dy++ {
				for dx := -r; dx <= r; dx++ {
					xx, yy := x+dx, y+dy
					if (dx != 0 || dy != 0) && dx*dx+dy*dy <= r*r && xx >= 0 && xx < w && yy >= 0 && yy < h {
						n++
					}
				}
			}
		}
	}
	return n
}

// TestSmallestStencilMatchesCSR checks that the solve on the stencil form
// returns what the solve on the compressed rows returns, bit for bit:
// the dense path (tiny images), the coarse-to-fine path on a scene with
// edges left out, and the coins photograph (whose eigenvalues
// TestScipyPixelGraph checks against scipy); the last three also with
// Options.SinglePrecond.
func TestSmallestStencilMatchesCSR(t *testing.T) {
	type tc struct {
		name   string
		g      *affinity.Graph
		sg     *affinity.StencilGraph
		k      int
		tol    float64
		sigmaI float64
		single bool
	}
	var cases []tc
	for _, c := range []struct{ w, h, r, k int }{{3, 3, 2, 3}, {8, 8, 2, 4}, {30, 20, 5, 6}, {61, 47, 3, 4}} {
		_, _, g, sg := stencilLevels(t, c.w, c.h, c.r, 10)
		cases = append(cases, tc{fmt.Sprintf("%dx%d_r%d", c.w, c.h, c.r), g, sg, c.k, 0, 10, false})
	}
	_, _, g, sg := stencilLevels(t, 64, 48, 5, 0.1)
	if g.NNZ() >= structuralNNZ(64, 48, 5) {
		t.Fatal("the scene should leave edges out")
	}
	cases = append(cases, tc{"64x48_r5_dropped", g, sg, 6, 0, 0.1, false})
	cases = append(cases, tc{"64x48_r5_loose", g, sg, 2, 1e-4, 0.1, false})
	cases = append(cases, tc{"coins", coinsGraph(t), coinsStencil(t), 6, 0, 0.1, false})
	// The preconditioner's products in single precision (applyL32) on
	// both forms.
	for _, c := range cases[len(cases)-3:] {
		c.name += "_single"
		c.single = true
		cases = append(cases, c)
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			opt := Options{Tol: c.tol, Workers: 2, SinglePrecond: c.single}
			want, err := Smallest(c.g, c.k, opt)
			if err != nil {
				t.Fatal(err)
			}
			got, err := SmallestStencil(context.Background(), c.sg, c.k, opt)
			if err != nil {
				t.Fatal(err)
			}
			if got.Iterations != want.Iterations {
				t.Errorf("steps %d, want %d", got.Iterations, want.Iterations)
			}
			for q := range want.Values {
				if math.Float64bits(got.Values[q]) != math.Float64bits(want.Values[q]) || got.Residuals[q] != want.Residuals[q] {
					t.Errorf("pair %d: λ %v residual %v, want %v and %v", q, got.Values[q], got.Residuals[q], want.Values[q], want.Residuals[q])
				}
				for i := range want.Vectors[q] {
					if math.Float64bits(got.Vectors[q][i]) != math.Float64bits(want.Vectors[q][i]) {
						t.Fatalf("pair %d entry %d: %v, want %v", q, i, got.Vectors[q][i], want.Vectors[q][i])
					}
				}
			}
		})
	}
}

// TestSmallestStencilErrors checks the argument errors of SmallestStencil.
func TestSmallestStencilErrors(t *testing.T) {
	sg := coinsStencil(t)
	if _, err := SmallestStencil(context.Background(), nil, 2, Options{}); err == nil {
		t.Error("nil graph: no error")
	}
	for _, k := range []int{0, sg.Nodes() + 1} {
		if _, err := SmallestStencil(context.Background(), sg, k, Options{}); err == nil {
			t.Errorf("k = %d: no error", k)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := SmallestStencil(ctx, sg, 2, Options{}); err != context.Canceled {
		t.Errorf("cancelled: error %v, want context.Canceled", err)
	}
	// An isolated pixel (all its edges left out) has degree 0.
	f := [][]float32{{0, 0, 0, 0, 1, 0, 0, 0, 0}}
	iso, err := affinity.PixelStencilGraph(f, 3, 3, affinity.PixelParams{Radius: 1, SigmaI: 0.01, SigmaX: 4}, 1)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := SmallestStencil(context.Background(), iso, 2, Options{}); err == nil {
		t.Error("isolated pixel: no error")
	}
}

// BenchmarkApplyLPixel times one product y = L x with a block of 6
// columns on the coins photograph enlarged twice and six times (116,736
// and 1,050,624 nodes, r = 5), with the graph in compressed rows and in
// stencil form, and the preconditioner's single-precision product on the
// stencil form (stencil32, applyL32), one worker:
//
//	go test -run '^$' -bench ApplyLPixel ./segment/eigen
func BenchmarkApplyLPixel(b *testing.B) {
	for _, c := range []struct {
		f    int
		form string
	}{{2, "csr"}, {2, "stencil"}, {2, "stencil32"}, {6, "csr"}, {6, "stencil"}, {6, "stencil32"}} {
		b.Run(fmt.Sprintf("x%d/%s", c.f, c.form), func(b *testing.B) {
			var lv *level
			if c.form == "csr" {
				g := coinsScaled(b, c.f)
				lv = newLevel(g.N, g.RowPtr, g.Col, g.Weight)
			} else {
				lv = newStencilLevel(coinsScaledStencil(b, c.f), 1)
			}
			x, y, tmp := newBlock(lv.n, 6), newBlock(lv.n, 6), newBlock(lv.n, 6)
			for k := range x.v {
				x.v[k] = float64(k%7) - 3
			}
			t32 := make([]float32, lv.n*6+single32Lanes)
			b.ResetTimer()
			for b.Loop() {
				if c.form == "stencil32" {
					lv.applyL32(y, x, t32, false, 1)
				} else {
					lv.applyL(y, x, tmp, 1)
				}
			}
			b.ReportMetric(float64(lv.nnz())*float64(b.N)/b.Elapsed().Seconds()/1e9, "Gentries/s")
		})
	}
}

// BenchmarkSmallestStencilScaled is BenchmarkSmallestPixelScaled with the
// input graph in stencil form (SmallestStencil with SinglePrecond, as
// segment's k-way cut of the pixel graph calls it):
//
//	go test -run '^$' -bench 'SmallestStencilScaled/x6' -benchtime 1x ./segment/eigen
func BenchmarkSmallestStencilScaled(b *testing.B) {
	for _, f := range []int{1, 2, 3, 4, 6} {
		b.Run(fmt.Sprintf("x%d", f), func(b *testing.B) {
			g := coinsScaledStencil(b, f)
			benchSolve(b, g.Nodes(), func() (*Result, error) {
				return SmallestStencil(context.Background(), g, 6, Options{SinglePrecond: true})
			})
		})
	}
}

// TestStencilAVXMatchesGo checks the AVX kernels of the products
// (stencil_amd64.s) against the Go loops bit for bit on the coins pixel
// graph in stencil form and in compressed rows and on its first coarse
// level (self loops, rows of every length), for block widths 1 to 13
// (every column grouping: the kernels of 6, 5, 3 and 2 columns and the
// single column in Go), with values of both signs, zeros and signed
// zeros in the block. Where the kernels are
// not available (another architecture, no AVX, the purego tag) there is
// nothing to compare and the test says so.
func TestStencilAVXMatchesGo(t *testing.T) {
	if !useAVX {
		t.Skip("no AVX kernels on this machine or build: the stencil product runs in Go alone")
	}
	g := coinsGraph(t)
	csr := newLevel(g.N, g.RowPtr, g.Col, g.Weight)
	for _, lv := range []*level{newStencilLevel(coinsStencil(t), 2), csr, coarsen(csr, 2)} {
		applyAVXMatchesGo(t, lv)
	}
}

// applyAVXMatchesGo compares lv.applyL with and without the AVX kernels
// bit for bit for block widths 1 to 13.
func applyAVXMatchesGo(t *testing.T, lv *level) {
	t.Helper()
	rng := rand.New(rand.NewPCG(3, 9))
	for m := 1; m <= 13; m++ {
		x := newBlock(lv.n, m)
		for k := range x.v {
			switch k % 17 {
			case 0:
				x.v[k] = 0
			case 1:
				x.v[k] = math.Copysign(0, -1)
			default:
				x.v[k] = rng.Float64() - 0.5
			}
		}
		ya, yb := newBlock(lv.n, m), newBlock(lv.n, m)
		lv.applyL(ya, x, newBlock(lv.n, m), 2)
		useAVX = false
		lv.applyL(yb, x, newBlock(lv.n, m), 2)
		useAVX = true
		for k := range ya.v {
			if math.Float64bits(ya.v[k]) != math.Float64bits(yb.v[k]) {
				t.Fatalf("%d nodes, m = %d, entry %d: AVX %v, Go %v", lv.n, m, k, ya.v[k], yb.v[k])
			}
		}
	}
}

// TestApplyL32 checks the preconditioner's single-precision product
// (applyL32) on the coins pixel graph, in stencil form and in compressed
// rows (one sum a column, as on the input graph), and on its first coarse
// level (self loops, rows of every length; four partial sums a column,
// as on the coarse levels), for block widths 1 to 13 (one and two groups
// of eight lanes), with values of both signs, zeros and signed zeros in
// the block: the AVX kernels against the Go loops bit for bit (where the
// kernels run), the stencil form against the compressed rows bit for
// bit, and every result against the double-precision product applyL
// within the error bound of floating-point summation in any order
// (Higham 2002, "Accuracy and Stability of Numerical Algorithms",
// section 4.2): a sum of k products rounded in float32 is off by at most
// (k+1)·u·Σ|w_ij t_j| with u = 2^-24, and rounding t_j = s_j x_j to
// float32 adds u·Σ|w_ij s_j x_j| more; the double-precision terms add
// their own (k+1)·2^-53 of the same sum and the subtraction from x_i one
// rounding of each result.
func TestApplyL32(t *testing.T) {
	g := coinsGraph(t)
	csr := newLevel(g.N, g.RowPtr, g.Col, g.Weight)
	st := newStencilLevel(coinsStencil(t), 2)
	coarse := coarsen(csr, 2)
	rng := rand.New(rand.NewPCG(5, 11))
	for m := 1; m <= 13; m++ {
		for _, c := range []struct {
			name    string
			lv      *level
			partial bool
		}{{"stencil", st, false}, {"compressed rows", csr, false}, {"coarse level", coarse, true}} {
			lv := c.lv
			x := newBlock(lv.n, m)
			for k := range x.v {
				switch k % 17 {
				case 0:
					x.v[k] = 0
				case 1:
					x.v[k] = math.Copysign(0, -1)
				default:
					x.v[k] = rng.Float64() - 0.5
				}
			}
			t32 := make([]float32, lv.n*m+single32Lanes)
			y, y64 := newBlock(lv.n, m), newBlock(lv.n, m)
			lv.applyL32(y, x, t32, c.partial, 2)
			lv.applyL(y64, x, newBlock(lv.n, m), 2)
			if useAVX {
				yg := newBlock(lv.n, m)
				useAVX = false
				lv.applyL32(yg, x, t32, c.partial, 2)
				useAVX = true
				for k := range y.v {
					if math.Float64bits(y.v[k]) != math.Float64bits(yg.v[k]) {
						t.Fatalf("%s, m = %d, entry %d: AVX %v, Go %v", c.name, m, k, y.v[k], yg.v[k])
					}
				}
			}
			if lv == st {
				yc := newBlock(csr.n, m)
				csr.applyL32(yc, x, t32, false, 2)
				for k := range y.v {
					if math.Float64bits(y.v[k]) != math.Float64bits(yc.v[k]) {
						t.Fatalf("m = %d, entry %d: stencil %v, compressed rows %v", m, k, y.v[k], yc.v[k])
					}
				}
			}
			// The rows as compressed rows (the stencil form's are the
			// input graph's).
			rl := lv
			if lv == st {
				rl = csr
			}
			for i := 0; i < lv.n; i++ {
				cols := rl.col[rl.rowPtr[i]:rl.rowPtr[i+1]]
				wts := rl.wt[rl.rowPtr[i]:rl.rowPtr[i+1]]
				k := float64(len(cols))
				for q := 0; q < m; q++ {
					e := i*m + q
					var mag float64 // Σ|w_ij s_j x_j|
					for p, j := range cols {
						mag += float64(wts[p]) * math.Abs(lv.s[j]*x.v[int(j)*m+q])
					}
					bound := lv.s[i]*mag*((k+2)*0x1p-24+(k+1)*0x1p-53)*(1+1e-6) +
						0x1p-52*(math.Abs(y.v[e])+math.Abs(y64.v[e]))
					if d := math.Abs(y.v[e] - y64.v[e]); d > bound {
						t.Fatalf("%s, m = %d, row %d column %d: single %v, double %v, off by %.3g > %.3g", c.name, m, i, q, y.v[e], y64.v[e], d, bound)
					}
				}
			}
		}
	}
}

// TestBlockKernelsAVXMatchGo checks the AVX kernels of the block
// operations (gramMulti's groups of four rows, combineMulti and subMul;
// blockops_amd64.s) against the Go loops bit for bit, on the chunks of
// the coins pixel graph (409 rows and fewer, so every chunk ends with
// rows outside the groups of four), for blocks of widths 1 to 13 taken
// one and several at a time (one of them empty), with zeros and signed
// zeros among the values; combineMulti also in place (its first output
// the first input), as LOBPCG calls it.
func TestBlockKernelsAVXMatchGo(t *testing.T) {
	if !useAVX {
		t.Skip("no AVX kernels on this machine or build: the block operations run in Go alone")
	}
	lv := newStencilLevel(coinsStencil(t), 2)
	o := &ops{lv: lv, workers: 2}
	rng := rand.New(rand.NewPCG(4, 11))
	blk := func(m int) *block {
		b := newBlock(lv.n, m)
		for k := range b.v {
			switch k % 19 {
			case 0:
				b.v[k] = 0
			case 1:
				b.v[k] = math.Copysign(0, -1)
			default:
				b.v[k] = rng.Float64() - 0.5
			}
		}
		return b
	}
	coef := func(r, c int) []float64 {
		v := make([]float64, r*c)
		for k := range v {
			v[k] = rng.Float64() - 0.5
		}
		return v
	}
	same := func(what string, a, b []float64) {
		t.Helper()
		if len(a) != len(b) {
			t.Fatalf("%s: lengths %d and %d", what, len(a), len(b))
		}
		for k := range a {
			if math.Float64bits(a[k]) != math.Float64bits(b[k]) {
				t.Fatalf("%s, entry %d: AVX %v, Go %v", what, k, a[k], b[k])
			}
		}
	}
	both := func(f func() []float64) (avx, plain []float64) {
		avx = f()
		useAVX = false
		defer func() { useAVX = true }()
		return avx, f()
	}
	for _, ws := range [][]int{{1}, {2}, {3}, {4}, {5}, {6}, {7}, {12}, {13}, {6, 6}, {6, 5, 3}, {1, 2}, {4, 6, 2}, {6, 0, 3}} {
		var in []*block
		ns := 0
		for _, w := range ws {
			in = append(in, blk(w))
			ns += w
		}
		name := fmt.Sprint(ws)
		for _, mb := range [][]int{{1}, {6}, {5, 6}, {13}} {
			var bs []*block
			for _, w := range mb {
				bs = append(bs, blk(w))
			}
			a, b := both(func() []float64 { return o.gramMulti(in, bs) })
			same("gramMulti "+name+fmt.Sprint(mb), a, b)
		}
		for _, mcs := range [][]int{{1}, {2}, {6}, {6, 6}, {12}, {5, 3}, {13, 1}} {
			var cs [][]float64
			for _, mc := range mcs {
				cs = append(cs, coef(ns, mc))
			}
			a, b := both(func() []float64 {
				var outs []*block
				for _, mc := range mcs {
					outs = append(outs, newBlock(lv.n, mc))
				}
				o.combineMulti(outs, in, cs)
				var all []float64
				for _, out := range outs {
					all = append(all, out.v...)
				}
				return all
			})
			same("combineMulti "+name+fmt.Sprint(mcs), a, b)
		}
		if w := ws[0]; w > 0 && len(ws) > 1 {
			// In place, as LOBPCG calls it: the first output is the
			// first input of several (each input row must be read
			// before that row of an output is written; the Go loop
			// reads a single input's rows where they lie, so LOBPCG
			// never combines one input in place).
			cs := [][]float64{coef(ns, w), coef(ns, 2)}
			a, b := both(func() []float64 {
				var cl []*block
				for _, bl := range in {
					cl = append(cl, &block{n: bl.n, m: bl.m, v: append([]float64(nil), bl.v...)})
				}
				outs := []*block{cl[0], newBlock(lv.n, 2)}
				o.combineMulti(outs, cl, cs)
				return append(append([]float64(nil), outs[0].v...), outs[1].v...)
			})
			same("combineMulti in place "+name, a, b)
		}
		for _, ma := range []int{1, 2, 4, 6, 7, 8, 12, 13} {
			c := coef(ns, ma)
			base := blk(ma)
			a, b := both(func() []float64 {
				d := newBlock(lv.n, ma)
				copy(d.v, base.v)
				o.subMul(d, in, c)
				return d.v
			})
			same(fmt.Sprintf("subMul %s into %d", name, ma), a, b)
		}
	}
}

// TestCombineRowsAgainstLoop checks the combineRows kernel directly
// against the running sums it documents (one sum a column, over p in
// order, from ini or +0, stored or subtracted), bit for bit, for 0 to 5
// rows (the pairs of rows and the single last row), widths 1 to 13, rows
// of s wider than ns (sstride > ns) and values with signed zeros.
func TestCombineRowsAgainstLoop(t *testing.T) {
	if !useAVX {
		t.Skip("no AVX kernels on this machine or build")
	}
	rng := rand.New(rand.NewPCG(8, 3))
	val := func(k int) float64 {
		switch k % 11 {
		case 0:
			return 0
		case 1:
			return math.Copysign(0, -1)
		}
		return rng.Float64() - 0.5
	}
	fill := func(n int) []float64 {
		v := make([]float64, n)
		for k := range v {
			v[k] = val(k)
		}
		return v
	}
	for rows := 0; rows <= 5; rows++ {
		for mc := 1; mc <= 13; mc++ {
			for _, ns := range []int{1, 2, 5, 18} {
				for _, sub := range []int{0, 1} {
					for _, withIni := range []bool{false, true} {
						sstride := ns + 1
						s := fill(max(1, rows*sstride))
						c := fill(ns * mc)
						ini := fill(max(1, rows*mc))
						dst0 := fill(max(1, rows*mc))
						want := append([]float64(nil), dst0...)
						for r := 0; r < rows; r++ {
							for q := 0; q < mc; q++ {
								var a float64
								if withIni {
									a = ini[r*mc+q]
								}
								for p := 0; p < ns; p++ {
									a += s[r*sstride+p] * c[p*mc+q]
								}
								if sub != 0 {
									want[r*mc+q] -= a
								} else {
									want[r*mc+q] = a
								}
							}
						}
						got := append([]float64(nil), dst0...)
						var ip *float64
						if withIni {
							ip = &ini[0]
						}
						combineRows(&got[0], mc, &s[0], ns, sstride, &c[0], sub, ip, rows)
						for k := range want {
							if math.Float64bits(got[k]) != math.Float64bits(want[k]) {
								t.Fatalf("rows %d, mc %d, ns %d, sub %d, ini %v: entry %d is %v, want %v", rows, mc, ns, sub, withIni, k, got[k], want[k])
							}
						}
					}
				}
			}
		}
	}
}
