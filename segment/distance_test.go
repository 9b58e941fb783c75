package segment

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// The transform against its definition: the distance from each inside
// pixel's centre to the nearest outside pixel centre (the crop border
// counting as outside), by brute force over random masks.
func TestDistanceInsideDefinition(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	for trial := 0; trial < 20; trial++ {
		cw, ch := 3+r.IntN(20), 3+r.IntN(20)
		mask := make([]bool, cw*ch)
		for i := range mask {
			mask[i] = r.Float64() < 0.8
		}
		d := distanceInside(mask, cw, ch)
		for y := 0; y < ch; y++ {
			for x := 0; x < cw; x++ {
				want := 0.0
				if mask[y*cw+x] {
					want = math.Inf(1)
					for yy := -1; yy <= ch; yy++ {
						for xx := -1; xx <= cw; xx++ {
							in := xx >= 0 && yy >= 0 && xx < cw && yy < ch && mask[yy*cw+xx]
							if !in {
								want = math.Min(want, math.Hypot(float64(x-xx), float64(y-yy)))
							}
						}
					}
				}
				if got := d[y*cw+x]; math.Abs(got-want) > 1e-12 {
					t.Fatalf("trial %d (%dx%d): d(%d,%d) = %v, want %v", trial, cw, ch, x, y, got, want)
				}
			}
		}
	}
}

// discRow draws the union of discs of radius R centred on a horizontal line
// sep apart, in a crop with a margin.
func discRow(R, sep float64, k int) ([]bool, int, int) {
	cw := int(2*R+sep*float64(k-1)) + 6
	ch := int(2*R) + 6
	mask := make([]bool, cw*ch)
	for y := 0; y < ch; y++ {
		for x := 0; x < cw; x++ {
			for c := 0; c < k; c++ {
				cx, cy := 3+R+sep*float64(c), 3+R
				if math.Hypot(float64(x)+0.5-cx, float64(y)+0.5-cy) < R {
					mask[y*cw+x] = true
				}
			}
		}
	}
	return mask, cw, ch
}

// Two overlapping discs of radius R, centres s apart: the saddle of the
// distance map lies at half the chord, sqrt(R² - s²/4), so the relative
// depth is 1 - sqrt(1 - (s/2R)²) (plane geometry). Digitization moves the
// peak and the saddle by up to a pixel (the cusp at the neck is blunted,
// so the measured depth falls short), hence a tolerance of 1.5/R; a
// single disc and an ellipse have one maximum (up to digitization ties)
// and a depth near 0.
func TestNeckDepthDiscs(t *testing.T) {
	cases := []struct {
		R, sep float64
		k      int
	}{
		{20, 30, 2},
		{20, 36, 2},
		{12, 20, 2},
		{8, 14, 2},
		{15, 24, 3},
		{25, 30, 2},
	}
	for _, c := range cases {
		mask, cw, ch := discRow(c.R, c.sep, c.k)
		got := neckDepth(distanceInside(mask, cw, ch), cw, ch)
		want := 1 - math.Sqrt(1-c.sep*c.sep/(4*c.R*c.R))
		if tol := 1.5 / c.R; math.Abs(got-want) > tol {
			t.Errorf("R=%v sep=%v k=%d: depth %.3f, want %.3f ± %.3f", c.R, c.sep, c.k, got, want, tol)
		}
	}
	for _, R := range []float64{6, 15, 30} {
		mask, cw, ch := discRow(R, 0, 1)
		if got := neckDepth(distanceInside(mask, cw, ch), cw, ch); got > 0.1 {
			t.Errorf("single disc R=%v: depth %.3f, want about 0", R, got)
		}
	}
	// An ellipse with semi-axes 30 and 12.
	cw, ch := 70, 32
	mask := make([]bool, cw*ch)
	for y := 0; y < ch; y++ {
		for x := 0; x < cw; x++ {
			dx, dy := (float64(x)+0.5-35)/30, (float64(y)+0.5-16)/12
			mask[y*cw+x] = dx*dx+dy*dy < 1
		}
	}
	if got := neckDepth(distanceInside(mask, cw, ch), cw, ch); got > 0.1 {
		t.Errorf("ellipse: depth %.3f, want about 0", got)
	}
}

// Two overlapping discs split at their neck: the watershed from the two
// peaks puts each disc centre on its own side and the cut on the
// perpendicular bisector of the centres (by symmetry, plane geometry):
// every pixel nearer one centre than the other by more than a pixel lies
// on that centre's side.
func TestSplitAtNeckDiscs(t *testing.T) {
	for _, c := range []struct{ R, sep float64 }{{20, 30}, {12, 20}, {15, 16}} {
		mask, cw, ch := discRow(c.R, c.sep, 2)
		d := distanceInside(mask, cw, ch)
		nk := deepestNeck(d, cw, ch, 0)
		if nk.peakA < 0 || nk.peakB < 0 {
			t.Fatalf("R=%v sep=%v: no neck found", c.R, c.sep)
		}
		side := splitAtNeck(d, cw, ch, nk)
		ax, bx := 3+c.R, 3+c.R+c.sep
		wrong := 0
		for y := 0; y < ch; y++ {
			for x := 0; x < cw; x++ {
				i := y*cw + x
				if !mask[i] {
					if side[i] != 0 {
						t.Fatalf("R=%v sep=%v: pixel (%d,%d) outside the shape got side %d", c.R, c.sep, x, y, side[i])
					}
					continue
				}
				px := float64(x) + 0.5
				da, db := math.Abs(px-ax), math.Abs(px-bx)
				switch {
				case side[i] == 0:
					t.Fatalf("R=%v sep=%v: pixel (%d,%d) of the shape has no side", c.R, c.sep, x, y)
				case da+1 < db && side[i] != side[pixelAt(cw, ax, ch)]:
					wrong++
				case db+1 < da && side[i] != side[pixelAt(cw, bx, ch)]:
					wrong++
				}
			}
		}
		if side[pixelAt(cw, ax, ch)] == side[pixelAt(cw, bx, ch)] {
			t.Errorf("R=%v sep=%v: both centres on one side", c.R, c.sep)
		}
		if wrong > 0 {
			t.Errorf("R=%v sep=%v: %d pixels on the far side of the bisector", c.R, c.sep, wrong)
		}
	}
}

// pixelAt is the pixel index of the point (x, mid-height) of a cw x ch crop.
func pixelAt(cw int, x float64, ch int) int { return (ch/2)*cw + int(x) }

// neckNoise bounds the dip that digitizing a shape without a neck leaves
// in its distance map: capsules (a rod: a segment of length L thickened
// by r) of every angle and sub-pixel offset have one ridge of constant
// height r in the plane (plane geometry), so every neck found in their
// digitized distance map is digitization. Two overlapping discs of
// radius R >= 8, centres 1.6 R apart, have a neck R (1 - sqrt(1 - 0.8²))
// = 0.4 R deep in the plane (TestNeckDepthDiscs) and keep one above the
// bound once digitized (blunted, never deepened by more than a pixel);
// at R = 5 the digitized neck no longer clears it, and such a pair needs
// a contrast cue (refineOne). Shapes are drawn here; the seed is arbitrary.
func TestNeckNoiseBoundsDigitizedCapsules(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	deepest := 0.0
	for it := 0; it < 400; it++ {
		r := 2 + rng.Float64()*16
		L := rng.Float64() * 70
		th := rng.Float64() * math.Pi
		n := int(L+2*r) + 6
		cx, cy := float64(n)/2+rng.Float64(), float64(n)/2+rng.Float64()
		dy, dx := math.Sin(th), math.Cos(th)
		mask := make([]bool, n*n)
		for y := 0; y < n; y++ {
			for x := 0; x < n; x++ {
				py, px := float64(y)-cy, float64(x)-cx
				s := math.Max(-L/2, math.Min(L/2, py*dy+px*dx))
				mask[y*n+x] = math.Hypot(py-s*dy, px-s*dx) <= r
			}
		}
		nk := deepestNeck(distanceInside(mask, n, n), n, n, 0)
		deepest = math.Max(deepest, nk.drop)
		if nk := deepestNeck(distanceInside(mask, n, n), n, n, neckNoise); nk.peakA >= 0 {
			t.Fatalf("capsule r=%.2f L=%.2f angle %.3f: a neck %.3f px deep passes the floor %v", r, L, th, nk.drop, neckNoise)
		}
	}
	if deepest == 0 {
		t.Fatal("no capsule had a digitization dip: the test shows nothing")
	}
	for _, R := range []float64{8, 12, 20} {
		mask, cw, ch := discRow(R, 1.6*R, 2)
		nk := deepestNeck(distanceInside(mask, cw, ch), cw, ch, neckNoise)
		plane := R * (1 - math.Sqrt(1-0.64))
		if nk.peakA < 0 || nk.drop > plane+1 {
			t.Errorf("discs R=%v, centres 1.6 R apart: neck %.2f px deep above the floor %v, want at most %.2f + 1", R, nk.drop, neckNoise, plane)
		}
	}
}

// floodQueue pops pixels by descending distance, ties by ascending
// index: each pop is the first of the pixels pushed and not yet popped
// in the order of slices.SortFunc with that comparison (the standard
// library as reference), with pushes and pops interleaved as a flood
// makes them.
func TestFloodQueueOrder(t *testing.T) {
	r := rand.New(rand.NewPCG(21, 22))
	for trial := range 30 {
		n := 1 + r.IntN(300)
		d := make([]float64, n)
		for i := range d {
			d[i] = math.Sqrt(float64(r.IntN(1 + trial)))
		}
		first := floodFirst(d)
		q := floodQueue{d: d}
		var in []int32 // pushed, not popped
		check := func() {
			want := slices.MinFunc(in, first)
			if got := q.pop(); got != want {
				t.Fatalf("trial %d: popped %d, want %d", trial, got, want)
			}
			in = slices.DeleteFunc(in, func(p int32) bool { return p == want })
		}
		for _, i := range r.Perm(n) {
			q.push(int32(i))
			in = append(in, int32(i))
			if r.IntN(3) == 0 {
				check()
			}
		}
		for len(in) > 0 {
			check()
		}
		if len(q.pix) != 0 {
			t.Fatalf("trial %d: %d pixels left", trial, len(q.pix))
		}
	}
}

// floodFirst compares two pixels of d in flood order: the larger value
// first, ties by ascending index (floodOrder's and floodQueue's order).
func floodFirst(d []float64) func(a, b int32) int {
	return func(a, b int32) int {
		switch {
		case d[a] > d[b]:
			return -1
		case d[a] < d[b]:
			return 1
		}
		return int(a - b)
	}
}
