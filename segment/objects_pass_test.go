package segment

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// The whole-image passes of the object stages, checked against plain
// definitions written here (worked by hand, common practice): the 3x3
// mean as a loop over the window shrunk at the border, the 4-connected
// pieces of equal group by a breadth-first search, holes as background
// pieces that reach no border and touch one group.

// randomGroups is a w x h map of groups -1..k-1 in blobs: each pixel
// copies its upper or left neighbour with probability 0.8.
func randomGroups(rng *rand.Rand, w, h, k int) []int32 {
	g := make([]int32, w*h)
	for i := range g {
		x, y := i%w, i/w
		switch {
		case x > 0 && rng.Float64() < 0.4:
			g[i] = g[i-1]
		case y > 0 && rng.Float64() < 0.67:
			g[i] = g[i-w]
		default:
			g[i] = int32(rng.IntN(k+1)) - 1
		}
	}
	return g
}

// The 3x3 means tightenObjects takes of the float64 contrast on row
// bands (boxMean3Rows) are the window loop's over the values rounded to
// float32, whatever the number of workers.
func TestBoxMean3RowsMatchesWindowLoop(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, sz := range [][2]int{{1, 1}, {1, 7}, {7, 1}, {2, 2}, {3, 3}, {17, 9}, {64, 300}} {
		w, h := sz[0], sz[1]
		v := make([]float64, w*h)
		for i := range v {
			v[i] = rng.Float64()
		}
		v32 := make([]float32, len(v))
		for i, x := range v {
			v32[i] = float32(x)
		}
		want := boxMean3(v32, w, h) // the window loop
		for _, workers := range []int{1, 2, 5} {
			got := make([]float32, w*h)
			forRowBands(h, workers, func(y0, y1 int) { boxMean3Rows(v, got, w, h, y0, y1) })
			for i := range got {
				if got[i] != want[i] {
					t.Fatalf("%dx%d workers %d: (%d,%d) = %v, want %v", w, h, workers, i%w, i/w, got[i], want[i])
				}
			}
		}
	}
}

// TestComponentsOfGroupsMatchesSearch checks the labelling against a
// breadth-first search from each unlabelled pixel in raster order: small
// random maps in one band of rows, and maps of up to four bands (random
// groups, and columns with gaps, whose pieces run across the bands and
// join below them), for 1, 2 and 3 workers.
func TestComponentsOfGroupsMatchesSearch(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for trial := range 50 {
		w, h := 1+rng.IntN(40), 1+rng.IntN(40)
		if trial >= 30 {
			h = rowBand - 2 + rng.IntN(3*rowBand)
		}
		g := randomGroups(rng, w, h, 3)
		if trial >= 40 { // columns of two groups, a few gaps
			for i := range g {
				g[i] = int32(i % w / 3 % 2)
				if rng.IntN(50) == 0 {
					g[i] = -1
				}
			}
		}
		if trial%10 == 9 { // all background
			for i := range g {
				g[i] = -1
			}
		}
		minArea := trial % 6
		for _, workers := range []int{1, 2, 3} {
			checkComponentsOfGroups(t, fmt.Sprintf("trial %d, workers %d", trial, workers), g, w, h, minArea, workers)
		}
	}
}

func checkComponentsOfGroups(t *testing.T, name string, g []int32, w, h, minArea, workers int) {
	t.Helper()
	{
		trial := name
		got, n := componentsOfGroups(g, w, h, minArea, workers)
		// Breadth-first search from each unlabelled pixel in raster order.
		piece := make([]int, w*h)
		for i := range piece {
			piece[i] = -1
		}
		var members [][]int
		for s := range g {
			if g[s] < 0 || piece[s] >= 0 {
				continue
			}
			id := len(members)
			queue := []int{s}
			piece[s] = id
			for q := 0; q < len(queue); q++ {
				i := queue[q]
				x, y := i%w, i/w
				for _, d := range [4][2]int{{-1, 0}, {1, 0}, {0, -1}, {0, 1}} {
					xx, yy := x+d[0], y+d[1]
					if xx < 0 || yy < 0 || xx >= w || yy >= h {
						continue
					}
					j := yy*w + xx
					if g[j] == g[i] && piece[j] < 0 {
						piece[j] = id
						queue = append(queue, j)
					}
				}
			}
			members = append(members, queue)
		}
		want := make([]int32, w*h)
		m := 0
		for _, mem := range members {
			if len(mem) < minArea {
				continue
			}
			m++
			for _, i := range mem {
				want[i] = int32(m)
			}
		}
		if n != m {
			t.Fatalf("%s: %d pieces, want %d", trial, n, m)
		}
		for i := range want {
			if got[i] != want[i] {
				t.Fatalf("%s: pixel %d label %d, want %d", trial, i, got[i], want[i])
			}
		}
	}
}

func TestFillHolesMatchesDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for trial := range 30 {
		w, h := 1+rng.IntN(30), 1+rng.IntN(30)
		g := randomGroups(rng, w, h, 2)
		want := append([]int32(nil), g...)
		// Background pieces (group -1) by componentsOfGroups over a
		// mask, judged one by one.
		bgMask := make([]int32, w*h)
		for i, v := range g {
			bgMask[i] = -1
			if v < 0 {
				bgMask[i] = 0
			}
		}
		lab, n := componentsOfGroups(bgMask, w, h, 0, 1)
		for p := int32(1); p <= int32(n); p++ {
			border, owner := false, int32(-1)
			for i, l := range lab {
				if l != p {
					continue
				}
				x, y := i%w, i/w
				if x == 0 || y == 0 || x == w-1 || y == h-1 {
					border = true
				}
				for _, j := range []int{i - 1, i + 1, i - w, i + w} {
					if j < 0 || j >= w*h || (j == i-1 && x == 0) || (j == i+1 && x == w-1) {
						continue
					}
					if v := g[j]; v >= 0 {
						if owner == -1 {
							owner = v
						} else if owner != v {
							owner = -2
						}
					}
				}
			}
			if !border && owner >= 0 {
				for i, l := range lab {
					if l == p {
						want[i] = owner
					}
				}
			}
		}
		fillHoles(g, w, h)
		for i := range want {
			if g[i] != want[i] {
				t.Fatalf("trial %d (%dx%d): pixel %d group %d, want %d", trial, w, h, i, g[i], want[i])
			}
		}
	}
}

// The coarse energy read from its 2x2 blocks (edgeTest.coarseAt) is the
// pixel map coarseEnergy gives, pixel for pixel, at even and odd sizes
// and below the 4-pixel side where no blocks are made.
func TestCoarseEnergyBlocksMatchPixelMap(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for _, sz := range [][2]int{{3, 9}, {9, 3}, {16, 12}, {17, 13}, {40, 31}} {
		w, h := sz[0], sz[1]
		lum := make([]float32, w*h)
		for i := range lum {
			lum[i] = rng.Float32()
		}
		full := coarseEnergy(lum, w, h, 2)
		blocks, cw := coarseEnergyBlocks(lum, w, h, 2)
		et := &edgeTest{w: w, h: h, coarse: blocks, coarseW: cw}
		for i := range full {
			if got := et.coarseAt(i); got != full[i] {
				t.Fatalf("%dx%d pixel %d: %v, want %v", w, h, i, got, full[i])
			}
		}
	}
}

// floodOrder is the order of a sort by descending value, ties by
// ascending index (slices.SortFunc with that comparison, the standard
// library as reference), on maps with many ties and on random values,
// by the counting sort of small roots and by the radix sort.
func TestFloodOrderMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for trial := range 40 {
		n := rng.IntN(3000)
		d := make([]float64, n)
		for i := range d {
			switch trial % 4 {
			case 0: // distance-map values: square roots of small integers
				d[i] = math.Sqrt(float64(rng.IntN(60)))
			case 3: // square roots of integers too large to count (radix)
				d[i] = math.Sqrt(float64(rng.IntN(1 << 30)))
			case 1:
				d[i] = rng.Float64()*50 - 5
			default: // one value, or none inside
				d[i] = float64(trial%2) * 2.5
			}
		}
		var want []int32
		for i, v := range d {
			if v > 0 {
				want = append(want, int32(i))
			}
		}
		slices.SortFunc(want, floodFirst(d))
		got := floodOrder(d)
		if !slices.Equal(got, want) {
			t.Fatalf("trial %d: order differs from the sort", trial)
		}
		// The counting sort of the distance maps' values (floodOrderRadii)
		// takes the small roots and leaves the others to the radix sort.
		if _, ok := floodOrderRadii(d); ok != (trial%4 == 0 || len(want) == 0) {
			t.Fatalf("trial %d: floodOrderRadii ok = %v", trial, ok)
		}
	}
}

// mean3At, the 3x3 mean at one pixel that tightenObjects takes where it
// looks, is boxMean3Rows' plane to the bit at every pixel, border
// pixels included.
func TestMean3AtMatchesBoxMean3Rows(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 6))
	for _, sz := range [][2]int{{1, 1}, {1, 7}, {7, 1}, {2, 2}, {3, 3}, {17, 9}, {64, 300}} {
		w, h := sz[0], sz[1]
		v := make([]float64, w*h)
		for i := range v {
			v[i] = rng.ExpFloat64() * math.Pow(10, float64(rng.IntN(7)-3))
		}
		want := make([]float32, w*h)
		boxMean3Rows(v, want, w, h, 0, h)
		for i := range want {
			if got := mean3At(v, w, h, i%w, i/w); got != want[i] {
				t.Fatalf("%dx%d: (%d,%d) = %v, want %v", w, h, i%w, i/w, got, want[i])
			}
		}
	}
}

// TestTightenObjectsAnyWorkers: tightenObjects judges its objects'
// outlines on the workers, 256 objects at a time, and applies them in
// label order, so a background pixel within reach of two objects goes to
// the first as in one pass; the pieces must not depend on the workers.
// A field of small blurred discs (more than two chunks), packed so
// that their grown boxes overlap, with noise.
func TestTightenObjectsAnyWorkers(t *testing.T) {
	const w, h = 320, 300
	rng := rand.New(rand.NewPCG(15, 16))
	con := make([]float64, w*h)
	labels := make([]int32, w*h)
	n := 0
	for range 1500 {
		cx, cy, r := 6+rng.IntN(w-12), 6+rng.IntN(h-12), 2+rng.IntN(4)
		peak := 0.5 + rng.Float64()
		free := true
		for y := cy - r; y <= cy+r && free; y++ {
			for x := cx - r; x <= cx+r; x++ {
				if labels[y*w+x] != 0 {
					free = false
					break
				}
			}
		}
		if !free {
			continue
		}
		n++
		for y := max(cy-2*r, 0); y < min(cy+2*r+1, h); y++ {
			for x := max(cx-2*r, 0); x < min(cx+2*r+1, w); x++ {
				d2 := float64((x-cx)*(x-cx) + (y-cy)*(y-cy))
				con[y*w+x] += peak * math.Exp(-d2/float64(2*r*r))
				if d2 <= float64(r*r) {
					labels[y*w+x] = int32(n)
				}
			}
		}
	}
	for i := range con {
		con[i] += 0.05 * rng.NormFloat64()
	}
	if n <= 2*256 {
		t.Fatalf("only %d discs placed; the test needs more than two chunks", n)
	}
	var want []int32
	var wantN int
	for _, workers := range []int{1, 2, 3} {
		got, gotN := tightenObjects(con, labelmap.Map{Pix: slices.Clone(labels), Width: w, Height: h}, n, 5, workers)
		if want == nil {
			want, wantN = got, gotN
			continue
		}
		if gotN != wantN || !slices.Equal(got, want) {
			t.Fatalf("%d workers: %d pieces, %d with one worker, or other labels", workers, gotN, wantN)
		}
	}
}
