package eigen

import (
	"fmt"
	"image"
	"image/png"
	"math"
	"os"
	"runtime"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/internal/heappeak"
)

// coinsScaled returns the coins pixel graph (r = 5, sigma_I = 0.1,
// sigma_X = 4, intensities / 255) of the committed 152x192 photograph
// enlarged f times by bilinear interpolation (pixel centres aligned,
// edges clamped): f = 2, 4 and 6 give 116,736, 466,944 and 1,050,624
// nodes, the sizes of the pixel-graph speed figures.
func coinsScaled(tb testing.TB, f int) *affinity.Graph {
	tb.Helper()
	plane, w, h := coinsScaledPlane(tb, f)
	g, err := affinity.PixelGraph([][]float32{plane}, w, h, coinsParams, 0)
	if err != nil {
		tb.Fatal(err)
	}
	return g
}

// coinsScaledStencil is coinsScaled in stencil form.
func coinsScaledStencil(tb testing.TB, f int) *affinity.StencilGraph {
	tb.Helper()
	plane, w, h := coinsScaledPlane(tb, f)
	g, err := affinity.PixelStencilGraph([][]float32{plane}, w, h, coinsParams, 0)
	if err != nil {
		tb.Fatal(err)
	}
	return g
}

// coinsScaledPlane is the enlarged photograph of coinsScaled.
func coinsScaledPlane(tb testing.TB, f int) ([]float32, int, int) {
	tb.Helper()
	fh, err := os.Open(coinsPath)
	if err != nil {
		tb.Fatal(err)
	}
	defer fh.Close()
	img, err := png.Decode(fh)
	if err != nil {
		tb.Fatalf("%s: %v", coinsPath, err)
	}
	gray, ok := img.(*image.Gray)
	if !ok {
		tb.Fatalf("%s: want 8-bit gray, got %T", coinsPath, img)
	}
	w0, h0 := gray.Bounds().Dx(), gray.Bounds().Dy()
	at := func(x, y int) float64 {
		x = min(max(x, 0), w0-1)
		y = min(max(y, 0), h0-1)
		return float64(gray.Pix[y*gray.Stride+x]) / 255
	}
	w, h := w0*f, h0*f
	plane := make([]float32, w*h)
	for y := 0; y < h; y++ {
		sy := (float64(y)+0.5)/float64(f) - 0.5
		y0 := int(math.Floor(sy))
		fy := sy - float64(y0)
		for x := 0; x < w; x++ {
			sx := (float64(x)+0.5)/float64(f) - 0.5
			x0 := int(math.Floor(sx))
			fx := sx - float64(x0)
			v := (1-fy)*((1-fx)*at(x0, y0)+fx*at(x0+1, y0)) + fy*((1-fx)*at(x0, y0+1)+fx*at(x0+1, y0+1))
			plane[y*w+x] = float32(v)
		}
	}
	return plane, w, h
}

// heapPeak samples the live heap every 2 ms until stop is called, which
// returns the largest value seen (heappeak.Watch).
func heapPeak() (stop func() uint64) { return heappeak.Watch(2 * time.Millisecond) }

// BenchmarkSmallestPixelScaled solves for the 6 smallest eigenpairs
// (tol 1e-6) of the coins pixel graph enlarged 1, 2, 3, 4 and 6 times
// (29,184 to 1,050,624 nodes, 80 neighbours a node inside the image), so
// that the growth exponent of the solve can be fitted. Besides ns/op it
// reports the LOBPCG steps on the input graph, the peak of the live heap
// during a solve (graph included, sampled every 2 ms after a collection)
// and that peak per node. Run each size on its own with -benchtime 1x:
//
//	go test -run '^$' -bench 'SmallestPixelScaled/x6' -benchtime 1x ./segment/eigen
func BenchmarkSmallestPixelScaled(b *testing.B) {
	for _, f := range []int{1, 2, 3, 4, 6} {
		b.Run(fmt.Sprintf("x%d", f), func(b *testing.B) {
			g := coinsScaled(b, f)
			benchSolve(b, g.N, func() (*Result, error) { return Smallest(g, 6, Options{}) })
		})
	}
}

// benchSolve times solve b.N times on a graph of the given nodes, a
// collection before each run, and reports the LOBPCG steps of the last
// run and the peak of the live heap (sampled by heapPeak) in MiB and per
// node.
func benchSolve(b *testing.B, nodes int, solve func() (*Result, error)) {
	b.ResetTimer()
	var peak uint64
	steps := 0
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		runtime.GC()
		stop := heapPeak()
		b.StartTimer()
		r, err := solve()
		b.StopTimer()
		peak = max(peak, stop())
		b.StartTimer()
		if err != nil {
			b.Fatal(err)
		}
		steps = r.Iterations
	}
	b.ReportMetric(float64(nodes), "nodes")
	b.ReportMetric(float64(steps), "steps")
	b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MiB")
	b.ReportMetric(float64(peak)/float64(nodes), "peak-heap-B/node")
}
