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
// (kept above fieldFloor), smoothed by the 3x3 mean as tightenObjects
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
// (DEVELOPERS.md, "Measured choices".)
func outshone(lum, field []float32, objects labelmap.Map, n, workers int) []bool {
	if n == 0 {
		return nil
	}
	labels, w, h := objects.Pix, objects.Width, objects.Height
	s := make([]float32, len(lum))
	parallel.Blocks(len(s), 1<<16, workers, func(_, lo, hi int) {
		for i := lo; i < hi; i++ {
			s[i] = float32(float64(lum[i])/math.Max(float64(field[i]), fieldFloor) - 1)
		}
	})
	sm := make([]float32, len(s))
	forRowBands(h, workers, func(y0, y1 int) { boxMean3Rows(s, sm, w, h, y0, y1) })
	lo, hi := labelRange(labels, w, h, tightenReach)
	_, next := labelRange(labels, w, h, 1) // next[i] > 0: i is next to an object
	// thick[l]: some pixel of l has a (2 thinReach+1)-square of l's
	// pixels around it (the image border counting as l's).
	lo2, hi2 := labelRange(labels, w, h, thinReach)
	bg := make([]int32, len(labels))
	for i, l := range labels {
		if l == 0 {
			bg[i] = 1
		}
	}
	_, nearBg := labelRange(bg, w, h, thinReach)
	thick := make([]bool, n+1)
	for i, l := range labels {
		if l > 0 && lo2[i] == l && hi2[i] == l && nearBg[i] == 0 {
			thick[l] = true
		}
	}
	boxes, pixels := objectPixels(labels, w, h, n)
	drop := make([]bool, n+1)
	any := false
	for l := 1; l <= n; l++ {
		px := pixels[l]
		if len(px) == 0 || thick[l] {
			continue
		}
		var sum float64
		for _, i := range px {
			sum += float64(s[i])
		}
		sign := float32(1)
		if sum < 0 {
			sign = -1
		}
		vals := make([]float32, len(px))
		for q, i := range px {
			vals[q] = sign * sm[i]
		}
		slices.Sort(vals)
		plateau := halfMaxLevel(vals) / tightenLevel
		level := tightenLevel * plateau
		b := boxes[l]
		if b.x0 == 0 || b.y0 == 0 || b.x1 == w-1 || b.y1 == h-1 {
			continue // cut by the frame: see outshone
		}
		x0, y0 := max(b.x0-tightenReach, 0), max(b.y0-tightenReach, 0)
		x1, y1 := min(b.x1+tightenReach, w-1), min(b.y1+tightenReach, h-1)
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
				if x < x0 || x > x1 || y < y0 || y > y1 || seen[(y-y0)*bw+x-x0] {
					return
				}
				if labels[j] != 0 || lo[j] != int32(l) || hi[j] != int32(l) || sign*sm[j] < level {
					return
				}
				seen[(y-y0)*bw+x-x0] = true
				queue = append(queue, j)
				if next[j] == 0 && sign*sm[j] >= plateau {
					count++
				}
			})
		}
		if count > 0 {
			drop[l], any = true, true
		}
	}
	if !any {
		return nil
	}
	return drop
}

// thinReach: objects with a pixel thinReach pixels (chessboard) from
// the background are thick, and outshone leaves them alone.
const thinReach = 2

// labelRange returns, for every pixel, the smallest and the largest
// object label (0 background ignored) within r pixels in chessboard
// distance, 0 for both where there is none: a separable running minimum
// and maximum over (2r+1)x(2r+1) windows (common practice for
// rectangular structuring elements). A pixel near one object only has
// lo = hi = its label.
func labelRange(labels []int32, w, h, r int) (lo, hi []int32) {
	const none = math.MaxInt32
	tlo := make([]int32, len(labels))
	thi := make([]int32, len(labels))
	for y := 0; y < h; y++ {
		row := labels[y*w : (y+1)*w]
		for x := 0; x < w; x++ {
			mn, mx := int32(none), int32(0)
			for xx := max(x-r, 0); xx <= min(x+r, w-1); xx++ {
				if v := row[xx]; v > 0 {
					mn, mx = min(mn, v), max(mx, v)
				}
			}
			tlo[y*w+x], thi[y*w+x] = mn, mx
		}
	}
	lo = make([]int32, len(labels))
	hi = make([]int32, len(labels))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			mn, mx := int32(none), int32(0)
			for yy := max(y-r, 0); yy <= min(y+r, h-1); yy++ {
				mn, mx = min(mn, tlo[yy*w+x]), max(mx, thi[yy*w+x])
			}
			if mx == 0 {
				mn = 0
			}
			lo[y*w+x], hi[y*w+x] = mn, mx
		}
	}
	return lo, hi
}
