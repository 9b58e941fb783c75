package eigen

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
)

// BenchmarkSmallestPixel152x192 solves for the 6 smallest eigenpairs of
// the pixel graph of the coins image (29184 nodes, r = 5, about 2.3M
// stored entries), the graph testdata/eigen/scipy_compare.sh times scipy's eigsh on.
func BenchmarkSmallestPixel152x192(b *testing.B) {
	g := coinsGraph(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 6, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

func benchPlanar(b *testing.B, n int) {
	g := planarGraph(n, 7)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 2, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSmallestN500 is one recursive two-way cut on a superpixel-like
// graph of 500 nodes (k = 2).
func BenchmarkSmallestN500(b *testing.B) { benchPlanar(b, 500) }

// BenchmarkSmallestN3000 is the same on 3000 nodes.
func BenchmarkSmallestN3000(b *testing.B) { benchPlanar(b, 3000) }

// BenchmarkCrossover times the dense and the coarse-to-fine paths for
// k = 2 on superpixel-like graphs around the dense limit (denseMax).
func BenchmarkCrossover(b *testing.B) {
	for _, n := range []int{40, 60, 80, 100, 200} {
		g := planarGraph(n, 3)
		for _, path := range []struct {
			name  string
			limit int
		}{{"dense", n}, {"multilevel", 0}} {
			b.Run(fmt.Sprintf("n=%d/%s", n, path.name), func(b *testing.B) {
				for i := 0; i < b.N; i++ {
					if _, err := smallest(g, 2, Options{Workers: 1}, path.limit); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

// objectGraph is the pixel graph of one image object as segment's object
// refinement builds it (radius 2, sigma_X 2, sigma_I 0.12 on a contrast
// feature scaled so the bright core is about 1, then restricted to the
// object's pixels): two touching discs of radius rad whose centres are
// 1.8 rad apart, each with a contrast falling from 1 at its centre to 0.6
// at its rim, plus seeded noise of 0.03. With rad = 16 it has about 1500
// nodes.
func objectGraph(tb testing.TB, rad float64) *affinity.Graph {
	tb.Helper()
	w := int(math.Ceil(3.8*rad)) + 2
	h := int(math.Ceil(2*rad)) + 2
	cy := float64(h-1) / 2
	cx1 := float64(w-1)/2 - 0.9*rad
	cx2 := float64(w-1)/2 + 0.9*rad
	rng := rand.New(rand.NewPCG(17, 3))
	feat := make([]float32, w*h)
	var nodes []int
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			d1 := math.Hypot(float64(x)-cx1, float64(y)-cy) / rad
			d2 := math.Hypot(float64(x)-cx2, float64(y)-cy) / rad
			d := math.Min(d1, d2)
			if d > 1 {
				continue
			}
			feat[y*w+x] = float32(1 - 0.4*d*d + 0.03*rng.NormFloat64())
			nodes = append(nodes, y*w+x)
		}
	}
	g, err := affinity.PixelGraph([][]float32{feat}, w, h, affinity.PixelParams{Radius: 2, SigmaI: 0.12, SigmaX: 2}, 1)
	if err != nil {
		tb.Fatal(err)
	}
	return g.Subgraph(nodes)
}

// BenchmarkSmallestObject1500 is one split of segment's object refinement:
// the Fiedler pair (k = 2) of a ~1500-node object pixel graph at residual
// 1e-4, on one worker as segment calls it.
func BenchmarkSmallestObject1500(b *testing.B) {
	g := objectGraph(b, 16)
	b.ReportMetric(float64(g.N), "nodes")
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 2, Options{Tol: 1e-4, Workers: 1}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSmallestObject400 is the same on a ~400-node object.
func BenchmarkSmallestObject400(b *testing.B) {
	g := objectGraph(b, 8)
	b.ReportMetric(float64(g.N), "nodes")
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 2, Options{Tol: 1e-4, Workers: 1}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSmallestSuperpixel3000Tol4 is a sub-part split of the
// superpixel path: k = 2 at residual 1e-4 on a superpixel-like graph of
// 3000 nodes.
func BenchmarkSmallestSuperpixel3000Tol4(b *testing.B) {
	g := planarGraph(3000, 7)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 2, Options{Tol: 1e-4}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSmallestSuperpixel3000K6 is the top-level solve of the
// superpixel path: k = 6 at the default residual 1e-6.
func BenchmarkSmallestSuperpixel3000K6(b *testing.B) {
	g := planarGraph(3000, 7)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 6, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkBlockCombine times the dense block combinations of one LOBPCG
// step of the top-level superpixel solve (k = 6, block width 6) on a
// superpixel-like graph of 3500 nodes, one worker: combineMulti forming
// the new X and P (width 6 each) from [X, W, P] (width 18), subMul
// removing [X, P] from a residual block of width 5, and combine of a
// width-6 block (svqb's rotation). On amd64 they run in the AVX kernel
// combineRows.
func BenchmarkBlockCombine(b *testing.B) {
	g := planarGraph(3500, 7)
	lv := newLevel(g.N, g.RowPtr, g.Col, g.Weight)
	o := &ops{lv: lv, workers: 1}
	rng := rand.New(rand.NewPCG(5, 1))
	fill := func(v []float64) []float64 {
		for k := range v {
			v[k] = rng.Float64() - 0.5
		}
		return v
	}
	blk := func(m int) *block {
		x := newBlock(lv.n, m)
		fill(x.v)
		return x
	}
	x, w, p := blk(6), blk(6), blk(6)
	in := []*block{x, w, p}
	outs := []*block{newBlock(lv.n, 6), newBlock(lv.n, 6)}
	cs := [][]float64{fill(make([]float64, 18*6)), fill(make([]float64, 18*6))}
	r := blk(5)
	cxp := fill(make([]float64, 12*5))
	rot := fill(make([]float64, 6*6))
	rotOut := newBlock(lv.n, 6)
	b.Run("combineMulti18to12", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			o.combineMulti(outs, in, cs)
		}
	})
	b.Run("subMul12into5", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			o.subMul(r, []*block{x, p}, cxp)
		}
	})
	b.Run("combine6to6", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			o.combine(rotOut, []*block{w}, rot)
		}
	})
}

// BenchmarkSmallSolves is one sub-part split of segment's re-cut of a
// single object: the Fiedler pair (k = 2) at residual 1e-4 on one worker,
// on object pixel graphs (objectGraph) of about 40, 130, 400 and 1500
// nodes. The re-cut makes hundreds of such solves per photograph
// (scikit-image's bw_text.png: 367 solves of 129 nodes on average), so
// the cost per call (allocations, building the levels) matters as much
// as the arithmetic; run with -benchmem. cpu-us/op is the process's CPU
// time (user + system, the collector's included) per solve, which other
// work on a shared machine does not inflate as it does the wall time.
func BenchmarkSmallSolves(b *testing.B) {
	for _, rad := range []float64{2.6, 4.8, 8, 16} {
		g := objectGraph(b, rad)
		b.Run(fmt.Sprintf("n=%d", g.N), func(b *testing.B) {
			b.ReportAllocs()
			c0 := cpuSeconds()
			for b.Loop() {
				if _, err := Smallest(g, 2, Options{Tol: 1e-4, Workers: 1}); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N)*1e6, "cpu-us/op")
		})
	}
}
