package eigen

import (
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
)

// coinsPath is the committed 152x192 reduction of scikit-image's coins.png
// (see testdata/eigen/README.txt).
var coinsPath = filepath.Join("..", "..", "testdata", "eigen", "coins152x192.png")

// coinsParams are the pixel-graph parameters of the scipy comparison
// (testdata/eigen/scipy_compare.sh: r = 5, sigma_I = 0.1, sigma_X = 4).
var coinsParams = affinity.PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: 4}

// coinsGraph loads the coins image (intensities / 255) and builds its
// pixel graph.
func coinsGraph(tb testing.TB) *affinity.Graph {
	tb.Helper()
	plane, w, h := coinsPlane(tb)
	g, err := affinity.PixelGraph([][]float32{plane}, w, h, coinsParams, 0)
	if err != nil {
		tb.Fatal(err)
	}
	return g
}

// coinsStencil is coinsGraph in stencil form.
func coinsStencil(tb testing.TB) *affinity.StencilGraph {
	tb.Helper()
	plane, w, h := coinsPlane(tb)
	g, err := affinity.PixelStencilGraph([][]float32{plane}, w, h, coinsParams, 0)
	if err != nil {
		tb.Fatal(err)
	}
	return g
}

// coinsPlane loads the coins image, intensities / 255.
func coinsPlane(tb testing.TB) ([]float32, int, int) {
	tb.Helper()
	f, err := os.Open(coinsPath)
	if err != nil {
		tb.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		tb.Fatalf("%s: %v", coinsPath, err)
	}
	gray, ok := img.(*image.Gray)
	if !ok {
		tb.Fatalf("%s: want 8-bit gray, got %T", coinsPath, img)
	}
	b := gray.Bounds()
	w, h := b.Dx(), b.Dy()
	plane := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			plane[y*w+x] = float32(gray.Pix[y*gray.Stride+x]) / 255
		}
	}
	return plane, w, h
}

// planarGraph is a superpixel-like graph: n random points in the unit
// square, each joined to its nearest neighbours (up to 6, within a grid
// cell search), with weights exp(-(f_i - f_j)²/0.01) for a random
// piecewise-constant feature plus noise, and a chain through all points
// in grid order so that it is connected.
func planarGraph(n int, seed uint64) *affinity.Graph {
	rng := rand.New(rand.NewPCG(seed, 99))
	side := int(math.Ceil(math.Sqrt(float64(n))))
	type pt struct{ x, y, f float64 }
	pts := make([]pt, n)
	cells := make([][]int, side*side)
	for i := range pts {
		x, y := rng.Float64(), rng.Float64()
		f := 0.0
		if (x-0.5)*(x-0.5)+(y-0.4)*(y-0.4) < 0.08 {
			f = 0.6
		}
		if x > 0.75 {
			f = 0.3
		}
		pts[i] = pt{x, y, f + 0.05*rng.NormFloat64()}
		c := min(int(y*float64(side)), side-1)*side + min(int(x*float64(side)), side-1)
		cells[c] = append(cells[c], i)
	}
	var edges []affinity.Edge
	weight := func(i, j int) float32 {
		d := pts[i].f - pts[j].f
		return float32(math.Exp(-d * d / 0.01))
	}
	for i, p := range pts {
		cx, cy := min(int(p.x*float64(side)), side-1), min(int(p.y*float64(side)), side-1)
		type cand struct {
			j int
			d float64
		}
		var best []cand
		for dy := -1; dy <= 1; dy++ {
			for dx := -1; dx <= 1; dx++ {
				x, y := cx+dx, cy+dy
				if x < 0 || y < 0 || x >= side || y >= side {
					continue
				}
				for _, j := range cells[y*side+x] {
					if j == i {
						continue
					}
					d := (pts[j].x-p.x)*(pts[j].x-p.x) + (pts[j].y-p.y)*(pts[j].y-p.y)
					best = append(best, cand{j, d})
				}
			}
		}
		for a := 1; a < len(best); a++ {
			for b := a; b > 0 && (best[b].d < best[b-1].d || best[b].d == best[b-1].d && best[b].j < best[b-1].j); b-- {
				best[b], best[b-1] = best[b-1], best[b]
			}
		}
		for _, c := range best[:min(6, len(best))] {
			if i < c.j {
				edges = append(edges, affinity.Edge{I: i, J: c.j, W: weight(i, c.j)})
			} else {
				edges = append(edges, affinity.Edge{I: c.j, J: i, W: weight(i, c.j)})
			}
		}
	}
	// Chain in cell order keeps it connected; duplicates are summed.
	prev := -1
	for _, cell := range cells {
		for _, j := range cell {
			if prev >= 0 {
				edges = append(edges, affinity.Edge{I: prev, J: j, W: 0.5 * weight(prev, j)})
			}
			prev = j
		}
	}
	// Each nearest-neighbour edge was added from both ends when mutual;
	// FromEdges sums duplicates, which keeps W symmetric.
	g, err := affinity.FromEdges(n, edges)
	if err != nil {
		panic(err)
	}
	return g
}
