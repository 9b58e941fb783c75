package affinity

import (
	"fmt"
	"math"
	"slices"
	"testing"
)

// assignByCentre is the assignment step as SLIC made it before rows were
// swept (Achanta et al. 2012's loop: centre by centre, each window's rows
// in turn), followed by the band's sums in raster order; the reference
// for TestSweepMatchesCentreOrder.
func (s *slicState) assignByCentre(b int) {
	by0, by1 := s.band(b)
	w := s.w
	dist := s.dist[by0*w : by1*w]
	inf := math.Float32bits(float32(math.Inf(1)))
	for i := range dist {
		dist[i] = inf
	}
	planes := len(s.f)
	fb0, fb1 := float64(by0), float64(by1-1)
	for c := 0; c < s.k; c++ {
		if cy := float64(s.cy[c]); cy+s.s < fb0 || cy-s.s > fb1 {
			continue
		}
		x0, x1, y0, y1 := s.window(c)
		y0, y1 = max(y0, by0), min(y1, by1-1)
		if y0 > y1 || x0 > x1 {
			continue
		}
		cx, cy := s.cx[c], s.cy[c]
		var dx2 []float32
		for x := x0; x <= x1; x++ {
			d := float32(x) - cx
			dx2 = append(dx2, d*d*s.ms)
		}
		for y := y0; y <= y1; y++ {
			dy := float32(y) - cy
			dy2 := dy * dy * s.ms
			row := y*w + x0
			for x, d2 := range dx2 {
				D := d2 + dy2
				if planes == 1 {
					d := s.f[0][row+x] - s.cf[c]
					D = d*d + d2 + dy2
				} else {
					for pl := 0; pl < planes; pl++ {
						d := s.f[pl][row+x] - s.cf[c*planes+pl]
						D += d * d
					}
				}
				if Db := math.Float32bits(D); Db < s.dist[row+x] {
					s.dist[row+x] = Db
					s.label[row+x] = int32(c)
				}
			}
		}
	}
	sums := s.startSums(b)
	for y := by0; y < by1; y++ {
		sums.row(y)
	}
	s.span[b] = [2]int32{sums.lo, sums.hi}
}

// TestSweepMatchesCentreOrder: assign's sweep by rows, in one batch and
// in batches of a few windows, gives the labels, distances and band sums
// of the sweep centre by centre (assignByCentre) bit for bit, through
// every iteration, with one and three feature planes. The two orders
// meet each pixel's centres in the same order (assign's comment), so any
// difference is a fault.
func TestSweepMatchesCentreOrder(t *testing.T) {
	for _, c := range []struct {
		w, h, planes, count, maxWindows, maxEntries int
	}{
		{97, 61, 1, 150, slicBatchWindows, slicBatch},
		{97, 61, 1, 150, 3, slicBatch},
		{97, 61, 1, 150, slicBatchWindows, 40},
		{64, 80, 3, 90, 5, 200},
		{50, 50, 1, 625, 7, slicBatch},
	} {
		t.Run(fmt.Sprintf("%dx%dx%d_K%d_w%d_e%d", c.w, c.h, c.planes, c.count, c.maxWindows, c.maxEntries), func(t *testing.T) {
			f := blobImage(5, c.w, c.h, 0.05)
			if c.planes > 1 {
				f = noiseImage(5, c.w, c.h, c.planes)
			}
			got := newSLICState(f, c.w, c.h, c.count, 0.2, 1)
			want := newSLICState(f, c.w, c.h, c.count, 0.2, 1)
			got.sweeps[0].maxWindows, got.sweeps[0].maxEntries = c.maxWindows, c.maxEntries
			for it := 0; it < 6; it++ {
				for b := 0; b < got.nb; b++ {
					got.assign(b, &got.sweeps[0])
					want.assignByCentre(b)
				}
				if !slices.Equal(got.label, want.label) || !slices.Equal(got.dist, want.dist) {
					t.Fatalf("iteration %d: labels or distances differ", it)
				}
				if !slices.Equal(got.bandSums, want.bandSums) || !slices.Equal(got.span, want.span) {
					t.Fatalf("iteration %d: band sums differ", it)
				}
				got.update()
				want.update()
			}
		})
	}
}

// TestSLICAfterIterations: the hook is called once, and the superpixels
// are those of a run without it.
func TestSLICAfterIterations(t *testing.T) {
	f := blobImage(3, 90, 70, 0.05)
	want, n0, err := SLIC(f, 90, 70, SLICParams{Count: 60, Compactness: 20}, 2)
	if err != nil {
		t.Fatal(err)
	}
	calls := 0
	got, n1, err := SLIC(f, 90, 70, SLICParams{Count: 60, Compactness: 20, AfterIterations: func() { calls++ }}, 2)
	if err != nil {
		t.Fatal(err)
	}
	if calls != 1 || n0 != n1 || !slices.Equal(got.Pix, want.Pix) {
		t.Fatalf("hook called %d times, %d and %d superpixels, labels equal %v", calls, n0, n1, slices.Equal(got.Pix, want.Pix))
	}
}
