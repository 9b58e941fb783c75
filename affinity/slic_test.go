package affinity

import (
	"errors"
	"math"
	"runtime"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// checkPartition verifies the SLIC guarantees: every pixel has exactly one
// label in 0..n-1, each label is one 4-connected piece, and labels are
// numbered in raster order of their first pixel.
func checkPartition(t *testing.T, labels []int32, w, h, n int) {
	t.Helper()
	if len(labels) != w*h {
		t.Fatalf("%d labels for %d pixels", len(labels), w*h)
	}
	next := int32(0)
	for i, l := range labels {
		if l < 0 || int(l) >= n {
			t.Fatalf("pixel %d has label %d outside 0..%d", i, l, n-1)
		}
		if l > next {
			t.Fatalf("label %d first appears at pixel %d before label %d", l, i, next)
		}
		if l == next {
			next++
		}
	}
	if int(next) != n {
		t.Fatalf("%d labels used, n = %d", next, n)
	}
	// Count 4-connected pieces per label by flood fill.
	seen := make([]bool, w*h)
	pieces := make([]int, n)
	for p := range labels {
		if seen[p] {
			continue
		}
		pieces[labels[p]]++
		stack := []int{p}
		seen[p] = true
		for len(stack) > 0 {
			q := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			x, y := q%w, q/w
			for _, nb := range [][2]int{{x - 1, y}, {x + 1, y}, {x, y - 1}, {x, y + 1}} {
				if nb[0] < 0 || nb[0] >= w || nb[1] < 0 || nb[1] >= h {
					continue
				}
				r := nb[1]*w + nb[0]
				if !seen[r] && labels[r] == labels[q] {
					seen[r] = true
					stack = append(stack, r)
				}
			}
		}
	}
	for l, c := range pieces {
		if c != 1 {
			t.Fatalf("label %d has %d pieces", l, c)
		}
	}
}

func TestSLICPartition(t *testing.T) {
	blobs3 := append(append(blobImage(11, 256, 256, 0.03), blobImage(12, 256, 256, 0.03)...), blobImage(13, 256, 256, 0.03)...)
	cases := []struct {
		name        string
		f           [][]float32
		w, h        int
		count       int
		compactness float64
		checkCount  bool
	}{
		{"blobs 256", blobImage(1, 256, 256, 0.03), 256, 256, 400, 10, true},
		{"blobs 256 noisy, compact", blobImage(1, 256, 256, 0.1), 256, 256, 400, 30, true},
		{"three planes 256", blobs3, 256, 256, 1000, 10, true},
		// Uniform noise over the whole range fragments every cluster at
		// this compactness; only the partition guarantees are checked.
		{"pure noise 256", noiseImage(2, 256, 256, 1), 256, 256, 400, 10, false},
		{"pure noise, 3 planes", noiseImage(3, 256, 256, 3), 256, 256, 1000, 10, false},
		{"wide strip", noiseImage(4, 300, 7, 1), 300, 7, 50, 10, false},
		{"one column", noiseImage(4, 1, 90, 1), 1, 90, 10, 10, false},
		{"1x1", [][]float32{{0.5}}, 1, 1, 5, 10, false},
		{"more than pixels", noiseImage(5, 5, 4, 1), 5, 4, 100, 10, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			labelsMap, n, err := SLIC(c.f, c.w, c.h, SLICParams{Count: c.count, Compactness: c.compactness}, 2)
			if err != nil {
				t.Fatal(err)
			}
			labels := labelsMap.Pix
			checkPartition(t, labels, c.w, c.h, n)
			if c.checkCount {
				// Achanta et al. (2012) produce about K superpixels; allow ±30%.
				if lo, hi := 0.7*float64(c.count), 1.3*float64(c.count); float64(n) < lo || float64(n) > hi {
					t.Errorf("%d superpixels, want %d ± 30%%", n, c.count)
				}
				t.Logf("%d superpixels for %d wanted", n, c.count)
			}
		})
	}
}

// TestSLICStepEdge: superpixels must not straddle a high-contrast step
// (the boundary adherence SLIC is designed for, Achanta et al. 2012, sec.
// 4). The step is at a column the seed grid does not align with. We count
// the pixels that lie on the other side of the step from the majority of
// their superpixel; with contrast 0.6 against noise 0.05, none should.
// As a control, the same count for a plain grid of cells of the same size
// is far from zero, so the measure can fail.
func TestSLICStepEdge(t *testing.T) {
	const w, h, edge = 256, 256, 101
	f := noiseImage(6, w, h, 1)
	for i, v := range f[0] {
		base := float32(0.2)
		if i%w >= edge {
			base = 0.8
		}
		f[0][i] = base + 0.1*(v-0.5) // uniform noise, standard deviation 0.029
	}
	labelsMap, n, err := SLIC(f, w, h, SLICParams{Count: 300, Compactness: 10}, 2)
	if err != nil {
		t.Fatal(err)
	}
	labels := labelsMap.Pix
	straddle := func(labels []int32, n int) int {
		right := make([]int, n)
		area := make([]int, n)
		for i, l := range labels {
			area[l]++
			if i%w >= edge {
				right[l]++
			}
		}
		bad := 0
		for l := range area {
			bad += min(right[l], area[l]-right[l])
		}
		return bad
	}
	if bad := straddle(labels, n); bad != 0 {
		t.Errorf("%d pixels on the wrong side of the step", bad)
	}
	grid := make([]int32, w*h)
	for i := range grid {
		grid[i] = int32(i/w/15*100 + i%w/15)
	}
	if bad := straddle(grid, 100*100); bad < 100 {
		t.Errorf("control grid has only %d straddling pixels; the measure is too weak", bad)
	}
}

func TestSLICWorkersIdentical(t *testing.T) {
	for _, planes := range []int{1, 3} {
		f := noiseImage(uint64(20+planes), 203, 157, planes)
		p := SLICParams{Count: 250, Compactness: 20, Iterations: 6}
		wantMap, n1, err := SLIC(f, 203, 157, p, 1)
		if err != nil {
			t.Fatal(err)
		}
		if wantMap.Width != 203 || wantMap.Height != 157 || wantMap.Check() != nil {
			t.Fatalf("planes=%d: label map %dx%d with %d labels, want 203x157", planes, wantMap.Width, wantMap.Height, len(wantMap.Pix))
		}
		want := wantMap.Pix
		for _, workers := range []int{2, 3, 16} {
			gotMap, n, err := SLIC(f, 203, 157, p, workers)
			if err != nil {
				t.Fatal(err)
			}
			got := gotMap.Pix
			if n != n1 || !slices.Equal(got, want) {
				t.Fatalf("planes=%d workers=%d: labels differ from workers=1", planes, workers)
			}
		}
	}
}

func TestSLICParamsValidate(t *testing.T) {
	cases := []struct {
		p    SLICParams
		want string
	}{
		{SLICParams{Count: 1, Compactness: 10}, ""},
		{SLICParams{Count: 3000, Compactness: 0.5, Iterations: 3}, ""},
		{SLICParams{Count: 0, Compactness: 10}, "superpixels must be at least 1, got 0"},
		{SLICParams{Count: -5, Compactness: 10}, "superpixels must be at least 1, got -5"},
		{SLICParams{Count: 10, Compactness: 0}, "compactness must be a positive number, got 0"},
		{SLICParams{Count: 10, Compactness: math.NaN()}, "compactness must be a positive number, got NaN"},
		{SLICParams{Count: 10, Compactness: math.Inf(1)}, "compactness must be a positive number, got +Inf"},
		{SLICParams{Count: 10, Compactness: 10, Iterations: -1}, "slic-iterations must be between 0 (default 10) and 1000, got -1"},
	}
	f := noiseImage(1, 8, 8, 1)
	for _, c := range cases {
		err := c.p.Validate()
		_, _, serr := SLIC(f, 8, 8, c.p, 1)
		if c.want == "" {
			if err != nil || serr != nil {
				t.Errorf("%+v: unexpected error %v / %v", c.p, err, serr)
			}
			continue
		}
		var pe *ParamError
		if err == nil || err.Error() != c.want || !errors.As(serr, &pe) || pe.Error() != c.want {
			t.Errorf("%+v: error %v / %v, want %q", c.p, err, serr, c.want)
		}
	}
	if _, _, err := SLIC([][]float32{make([]float32, 10)}, 4, 4, SLICParams{Count: 2, Compactness: 10}, 1); err == nil {
		t.Error("plane of the wrong length accepted")
	}
}

// TestEnforceConnectivity works a small case by hand: label 1 is split in
// two pieces, and a one-pixel orphan of label 2 sits inside label 0.
func TestEnforceConnectivity(t *testing.T) {
	old := []int32{
		0, 0, 1, 1,
		0, 2, 0, 1,
		1, 0, 0, 0,
	}
	// minSize 0: every piece is kept. Raster order of first pixels:
	// 0 at (0,0), 1 at (2,0), 2 at (1,1) [label-2 orphan], 3 at (2,1)
	// [the piece of label 0 right of it is joined to 0 through (2,2)? no:
	// (2,1) touches (2,2), which touches (1,2) and (1,1) is label 2, so
	// the lower piece of 0 is (2,1),(1,2),(2,2),(3,2) and is separate
	// from the top-left piece], 4 at (0,2) [second piece of label 1].
	want0 := []int32{
		0, 0, 1, 1,
		0, 2, 3, 1,
		4, 3, 3, 3,
	}
	got, n := enforceConnectivity(labelmap.Map{Pix: old, Width: 4, Height: 3}, 0, nil)
	if n != 5 || !slices.Equal(got.Pix, want0) || got.Width != 4 || got.Height != 3 {
		t.Errorf("minSize 0: got %v %dx%d (n=%d), want %v 4x3", got.Pix, got.Width, got.Height, n, want0)
	}
	// minSize 1: the orphan at (1,1) and the single pixel at (0,2) merge
	// into their left neighbour's new label (0 and, for (0,2) at x = 0,
	// the label above it, 0).
	want1 := []int32{
		0, 0, 1, 1,
		0, 0, 2, 1,
		0, 2, 2, 2,
	}
	got, n = enforceConnectivity(labelmap.Map{Pix: old, Width: 4, Height: 3}, 1, make([]uint32, 12))
	if n != 3 || !slices.Equal(got.Pix, want1) {
		t.Errorf("minSize 1: got %v (n=%d), want %v", got.Pix, n, want1)
	}
}

// TestEstimateSLICBytes: the estimate covers what SLIC allocates.
func TestEstimateSLICBytes(t *testing.T) {
	for _, c := range []struct{ w, h, planes, count int }{{256, 256, 1, 400}, {128, 96, 3, 3072}, {64, 64, 1, 100000}} {
		f := noiseImage(7, c.w, c.h, c.planes)
		var m0, m1 runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&m0)
		_, _, err := SLIC(f, c.w, c.h, SLICParams{Count: c.count, Compactness: 10}, 1)
		runtime.ReadMemStats(&m1)
		if err != nil {
			t.Fatal(err)
		}
		used := int64(m1.TotalAlloc - m0.TotalAlloc)
		est := EstimateSLICBytes(c.w, c.h, c.planes)
		if used > est {
			t.Errorf("%dx%dx%d K=%d: allocated %d bytes, estimate %d", c.w, c.h, c.planes, c.count, used, est)
		}
		t.Logf("%dx%dx%d K=%d: allocated %d bytes, estimate %d", c.w, c.h, c.planes, c.count, used, est)
	}
}
