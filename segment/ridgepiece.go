package segment

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// outshone returns drop[l] true for every thin object l (labels 1..n, 0
// background; no pixel of it thinReach pixels, chessboard, from the
// background) that does not stand out from its own surround: some
// background pixel of its surround, reached from the object through
// background at or above its outline level (tightenLevel times its
// plateau), has a smoothed contrast of the object's sign at least the
// object's plateau: the structure goes on out of the object as strong
// as in it. It returns nil when nothing is dropped.
//
// The contrast is the signed s = I/B - 1 against the background field B
// (I/B the backgroundRatio), smoothed by the 3x3 mean as tightenObjects
// smooths it; an object's sign is that of its summed s, its plateau P
// is halfMaxLevel of its smoothed values divided by tightenLevel (the
// plateau its outline was drawn at half of). Its surround is the
// background within tightenReach pixels of it (chessboard distance) but
// not next to any object, and not within tightenReach of another
// object: the pixels next to its outline hold its own blurred rim (a
// bright rim around a dim interior, as hollow cells have, is above the
// plateau there), and those near another object that object's rim,
// which may be brighter than a dim neighbour's plateau.
//
// An object is a part of the image stronger than what surrounds it: its
// outline is where its contrast falls to half its plateau. A piece
// whose surround holds background at its plateau or above was bounded
// by the class map, not by a fall of contrast. This is what a thin line
// gives when its superpixels are classed by their mean: a superpixel
// whose border runs along a dark grain boundary is dark enough to be an
// object, the straddling ones around it are not, and the stretch is
// taken for an object while the same line, as dark or darker, goes on
// as background beyond its ends. The path above the outline level
// keeps apart what merely lies near: a letter of printed text beside
// another letter, across paper, is not judged by it. Only thin objects
// are judged: a thick one with background above its plateau beside it
// is mostly an object whose outline left part of it out (a coin of
// scikit-image's coins.png), which dropping would not mend. Nor are
// objects that touch the frame: the frame cuts them and their
// surround, so what lies around the part in view says little about the
// whole (scikit-image's astronaut.png, `--classes 2 --background dark`:
// four of the flag's stars cut by the left edge were dropped).
// (DEVELOPERS.md, "Measured choices".) The objects are judged on
// workers goroutines (parallel's rules), each on its own, so the result
// does not depend on workers.
func outshone(lum, field []float32, objects labelmap.Map, n, workers int) []bool {
	if n == 0 {
		return nil
	}
	labels, w, h := objects.Pix, objects.Width, objects.Height
	// The signed contrast and its 3x3 mean (as boxMean3Rows takes it) are
	// computed only at the pixels looked at: the thin objects and their
	// surrounds are a small part of the frame.
	contrast := func(i int) float32 {
		return float32(backgroundRatio(float64(lum[i]), float64(field[i])) - 1)
	}
	smoothed := func(i int) float32 {
		x, y := i%w, i/w
		var s float32
		var c int
		for yy := max(y-1, 0); yy <= min(y+1, h-1); yy++ {
			for xx := max(x-1, 0); xx <= min(x+1, w-1); xx++ {
				s += contrast(yy*w + xx)
				c++
			}
		}
		return s / float32(c)
	}
	// Each object's pixels are gathered from its box when it is judged,
	// not all held at once (a 16 MP frame has millions of them). The
	// boxes are found on bands of rows (a run of one label at a time),
	// and merged: a box's least and largest coordinates do not depend on
	// the order they are met in.
	nb := min(h, 8)
	bandBoxes := make([][]box, nb)
	parallel.Blocks(h, (h+nb-1)/nb, workers, func(c, ya, yb int) {
		boxes := make([]box, n+1)
		for i := range boxes {
			boxes[i] = box{w, h, -1, -1}
		}
		for y := ya; y < yb; y++ {
			row := labels[y*w : (y+1)*w]
			for x := 0; x < w; {
				l := row[x]
				e := x + 1
				for e < w && row[e] == l {
					e++
				}
				if l > 0 {
					b := &boxes[l]
					b.x0, b.y0, b.x1, b.y1 = min(b.x0, x), min(b.y0, y), max(b.x1, e-1), max(b.y1, y)
				}
				x = e
			}
		}
		bandBoxes[c] = boxes
	})
	boxes := bandBoxes[0]
	for _, bb := range bandBoxes[1:] {
		for l, b := range bb {
			a := &boxes[l]
			a.x0, a.y0, a.x1, a.y1 = min(a.x0, b.x0), min(a.y0, b.y0), max(a.x1, b.x1), max(a.y1, b.y1)
		}
	}
	// The objects are judged on workers goroutines, each on its own: an
	// object's verdict reads the maps only.
	drop := make([]bool, n+1)
	scratch := make([][]int, parallel.Goroutines(n, workers))
	parallel.ForErr(n, workers, func(g, c int) error {
		l := c + 1
		b := boxes[l]
		if b.x1 < 0 || b.x0 == 0 || b.y0 == 0 || b.x1 == w-1 || b.y1 == h-1 {
			return nil // none, or cut by the frame (see above)
		}
		px := scratch[g][:0]
		defer func() { scratch[g] = px }()
		for y := b.y0; y <= b.y1; y++ {
			for x := b.x0; x <= b.x1; x++ {
				if labels[y*w+x] == int32(l) {
					px = append(px, y*w+x)
				}
			}
		}
		if thick(labels, w, h, px) {
			return nil
		}
		var sum float64
		for _, i := range px {
			sum += float64(contrast(i))
		}
		sign := float32(1)
		if sum < 0 {
			sign = -1
		}
		vals := make([]float32, len(px))
		for q, i := range px {
			vals[q] = sign * smoothed(i)
		}
		slices.Sort(vals)
		plateau := halfMaxLevel(vals) / tightenLevel
		level := tightenLevel * plateau
		r := b.grown(tightenReach, w, h)
		x0, y0, x1, y1 := r.x0, r.y0, r.x1, r.y1
		bw := x1 - x0 + 1
		seen := make([]bool, bw*(y1-y0+1))
		queue := append([]int(nil), px...)
		for _, i := range px {
			seen[(i/w-y0)*bw+i%w-x0] = true
		}
		count := 0
		for len(queue) > 0 {
			i := queue[len(queue)-1]
			queue = queue[:len(queue)-1]
			neighbours4(i, w, h, func(j int) {
				x, y := j%w, j/w
				if x < x0 || x > x1 || y < y0 || y > y1 || seen[(y-y0)*bw+x-x0] || labels[j] != 0 {
					return
				}
				// Background within tightenReach of this object only,
				// at or above its outline level.
				if lo, hi := labelsNear(labels, w, h, j, tightenReach); lo != int32(l) || hi != int32(l) {
					return
				}
				v := sign * smoothed(j)
				if v < level {
					return
				}
				seen[(y-y0)*bw+x-x0] = true
				queue = append(queue, j)
				if _, next := labelsNear(labels, w, h, j, 1); next == 0 && v >= plateau {
					count++
				}
			})
		}
		if count > 0 {
			drop[l] = true
		}
		return nil
	})
	if !slices.Contains(drop, true) {
		return nil
	}
	return drop
}

// thick reports whether some pixel of the object (its pixels px) has a
// (2 thinReach+1)-square of the object's pixels around it, the image
// border counting as the object's.
func thick(labels []int32, w, h int, px []int) bool {
	l := labels[px[0]]
	for _, i := range px {
		x, y := i%w, i/w
		inside := true
		for yy := max(y-thinReach, 0); yy <= min(y+thinReach, h-1) && inside; yy++ {
			for xx := max(x-thinReach, 0); xx <= min(x+thinReach, w-1); xx++ {
				if labels[yy*w+xx] != l {
					inside = false
					break
				}
			}
		}
		if inside {
			return true
		}
	}
	return false
}

// labelsNear returns the smallest and the largest object label (0
// background ignored) within r pixels of pixel i in chessboard distance,
// 0 for both where there is none.
func labelsNear(labels []int32, w, h, i, r int) (lo, hi int32) {
	x, y := i%w, i/w
	lo = math.MaxInt32
	for yy := max(y-r, 0); yy <= min(y+r, h-1); yy++ {
		for _, v := range labels[yy*w+max(x-r, 0) : yy*w+min(x+r, w-1)+1] {
			if v > 0 {
				lo, hi = min(lo, v), max(hi, v)
			}
		}
	}
	if hi == 0 {
		lo = 0
	}
	return lo, hi
}

// thinReach: objects with a pixel thinReach pixels (chessboard) from
// the background are thick, and outshone leaves them alone.
const thinReach = 2
