package scenes

import "math"

// Surface defects (pits, scratches, cracks, inclusions) as Plate and
// Surface place and draw them: each is a shape with an inside test and a
// factor on the reflectance of the metal inside it.

// defect is one flaw of a surface: its signed margin (positive inside, the
// test of both the rendering and the truth), its pixel box x0, y0, x1, y1
// (inclusive) and the factor by which it multiplies the reflectance at a
// point inside.
type defect struct {
	margin func(x, y float64) float64
	box    [4]int
	factor func(x, y float64) float64
}

// defectSet is a truth mask with the defects placed in it so far, labelled
// 1, 2, ... in placement order.
type defectSet struct {
	w, h  int
	truth []int32
	list  []defect
	whole bool // refuse a defect whose pixels are not one 4-connected piece
}

func newDefectSet(w, h int, whole bool) *defectSet {
	return &defectSet{w: w, h: h, truth: make([]int32, w*h), whole: whole}
}

// add clips the defect's box to the field and labels its pixels as the
// next object, unless it covers no pixel centre, comes within 2 px of the
// border or within 4 px (Chebyshev) of an earlier defect, or, when the set
// wants whole defects, falls apart into several 4-connected pieces. It
// reports whether the defect was kept; a refused one leaves the set as it
// was.
func (s *defectSet) add(d defect) bool {
	w, h := s.w, s.h
	d.box = [4]int{max(0, d.box[0]), max(0, d.box[1]), min(w-1, d.box[2]), min(h-1, d.box[3])}
	pix, ok := insidePixels(d.margin, d.box, w, h)
	if !ok || len(pix) == 0 || touchesLabelled(s.truth, w, h, pix, 4) {
		return false
	}
	if s.whole && !onePiece(pix, w) {
		return false
	}
	l := int32(len(s.list) + 1)
	for _, p := range pix {
		s.truth[p] = l
	}
	s.list = append(s.list, d)
	return true
}

// darken multiplies the reflectance refl (w x h) over each defect, in
// placement order, by 1 - c·(1 - f), c the pixel's coverage of the defect
// (anti-aliased edges, see coverage) and f its factor there, at least 0.05.
func (s *defectSet) darken(refl []float64) {
	w, h := s.w, s.h
	for _, d := range s.list {
		for y := max(0, d.box[1]-1); y <= min(h-1, d.box[3]+1); y++ {
			for x := max(0, d.box[0]-1); x <= min(w-1, d.box[2]+1); x++ {
				px, py := float64(x)+0.5, float64(y)+0.5
				c := coverage(d.margin(px, py))
				if c == 0 {
					continue
				}
				f := max(0.05, d.factor(px, py))
				refl[y*w+x] *= 1 - c*(1-f)
			}
		}
	}
}

// pitWall returns the reflectance factor depth·(1 - tilt·(p - c)·l/r0) of
// a pit b at the point p, l = (lx, ly) the direction the light comes from:
// the wall facing the light (on the far side from it) is brighter, the
// wall under the near rim darker.
func pitWall(b blob, depth, tilt, lx, ly float64) func(x, y float64) float64 {
	return func(x, y float64) float64 {
		return depth * (1 - tilt*((x-b.cx)*lx+(y-b.cy)*ly)/b.r0)
	}
}

// nearestOnSegment returns the parameter t in [0, 1] of the point
// a + t·(b - a) of the segment from (ax, ay) to (bx, by) nearest to
// (x, y), and the Euclidean distance d to it.
func nearestOnSegment(x, y, ax, ay, bx, by float64) (t, d float64) {
	vx, vy := bx-ax, by-ay
	t = ((x-ax)*vx + (y-ay)*vy) / (vx*vx + vy*vy)
	t = max(0, min(1, t))
	return t, math.Hypot(x-ax-t*vx, y-ay-t*vy)
}
