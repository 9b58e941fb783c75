package segment

import (
	"math"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Ring rule constants.
const (
	// ringWidth is the width in pixels (chessboard distance) of the ring
	// of background pixels around a region that ringObjects compares the
	// region with: a few times the scale of the edge-energy filter
	// (affinity.ContourScale, 1.5 px), so that the ring lies mostly off
	// a blurred edge, and narrow enough that shading varies little
	// across it.
	ringWidth = 4
	// ringMaxShare bounds the regions ringObjects examines to those whose
	// bounding box covers at most this share of the image: the large
	// background parts of the cut are no candidates, and their rings
	// would cost a pass over most of the image each.
	ringMaxShare = 1.0 / 16
)

// ringObjects moves background-class regions that are objects by their
// own surroundings into the object class. The class grouping judges a
// region against a smooth background field B a sizeable fraction of the
// image across; under a mottled glow B is off by more than a faint
// object's contrast, and the noise rule's spread of I/B around B holds
// that shading too, so a dim object with a clear outline is left in the
// background. Here a region r of the background class is compared with
// the ring R of background-class pixels within ringWidth pixels
// (chessboard distance) outside it:
//
//	z = (mean_r I - median_R I) / σ_R,
//
// σ_R the spread of the ring's pixels, madScale times their median
// absolute deviation from median_R (robust; common practice): pixel
// noise, and the texture of the background where it has one (grain,
// mottled stain), which a dim object must also clear. The region
// becomes an object when z exceeds detectSigmas on the objects' side
// (above for a dark background, below for a bright one; the usual
// detection rule, k noise standard deviations over the local
// background) and its outline carries an edge: the median edge energy
// along its outline pixels reaches the floor and the edge is not
// diffuse (edgeTest, as for edgeless). Shading (a glow, a ghost of
// another focal plane) may stand out from its ring too, but has no
// sharp edge; noise has neither. Regions
// that touch an object-class region are left alone (their ring would
// be the dark side of a blurred object's rim), and so are regions whose
// bounding box exceeds ringMaxShare of the image. It returns whether a
// region changed class.
func ringObjects(lum []float32, t *edgeTest, regions labelmap.Map, cls []int32, bg int32, background Background) bool {
	w, h, reg := regions.Width, regions.Height, regions.Pix
	if background != "dark" && background != "bright" {
		return false
	}
	n := len(cls)
	obj := bg + 1
	sign := 1.0
	if background == "bright" {
		obj, sign = bg-1, -1
	}
	x0 := make([]int, n)
	y0 := make([]int, n)
	x1 := make([]int, n)
	y1 := make([]int, n)
	for r := range x0 {
		x0[r], y0[r], x1[r], y1[r] = w, h, -1, -1
	}
	touches := make([]bool, n)
	// Row by row in runs of one region: a run widens its region's box
	// once, and its pixels are tested for an object neighbour only
	// while the region is a background one not yet known to touch one.
	for y := 0; y < h; y++ {
		row := reg[y*w : (y+1)*w]
		for xa := 0; xa < w; {
			xb := runEnd(row, xa)
			r := row[xa]
			x0[r], y0[r] = min(x0[r], xa), min(y0[r], y)
			x1[r], y1[r] = max(x1[r], xb-1), max(y1[r], y)
			for x := xa; x < xb && cls[r] == bg && !touches[r]; x++ {
				i := y*w + x
				if (x > 0 && cls[reg[i-1]] != bg) || (x+1 < w && cls[reg[i+1]] != bg) || (y > 0 && cls[reg[i-w]] != bg) || (y+1 < h && cls[reg[i+w]] != bg) {
					touches[r] = true
				}
			}
			xa = xb
		}
	}
	maxBox := ringMaxShare * float64(w*h)
	changed := false
	var inside, ring, diff []float64
	var near []bool
	var outline outlineEnergy
	for r := 0; r < n; r++ {
		if cls[r] != bg || touches[r] || x1[r] < 0 || float64((x1[r]-x0[r]+1)*(y1[r]-y0[r]+1)) > maxBox {
			continue
		}
		inside, ring = inside[:0], ring[:0]
		outline.reset()
		bx0, by0 := max(0, x0[r]-ringWidth), max(0, y0[r]-ringWidth)
		bx1, by1 := min(w-1, x1[r]+ringWidth), min(h-1, y1[r]+ringWidth)
		bw, bh := bx1-bx0+1, by1-by0+1
		near = dilateBox(near[:0], reg, int32(r), w, bx0, by0, bw, bh, ringWidth)
		for y := by0; y <= by1; y++ {
			for x := bx0; x <= bx1; x++ {
				i := y*w + x
				switch {
				case reg[i] == int32(r):
					inside = append(inside, float64(lum[i]))
					outline.addPixel(t, i)
					if onOutline(reg, i, w, h) {
						outline.add(t, i)
					}
				case near[(y-by0)*bw+x-bx0] && cls[reg[i]] == bg:
					ring = append(ring, float64(lum[i]))
				}
			}
		}
		if len(ring) < 16 || len(outline.fine) == 0 {
			continue
		}
		m := kthSmallest(ring, len(ring)/2)
		diff = diff[:0]
		for _, v := range ring {
			diff = append(diff, math.Abs(v-m))
		}
		sigma := madScale * kthSmallest(diff, len(diff)/2)
		if !(sigma > 0) {
			continue
		}
		z := sign * (mean(inside) - m) / sigma
		if z > detectSigmas && t.edge(&outline) {
			cls[r] = obj
			changed = true
		}
	}
	return changed
}

// dilateBox marks, in the bw x bh box at (bx0, by0) of a label map of
// width w, the pixels within chessboard distance d of a pixel labelled
// r: the maximum filter of the region's mask over a (2d+1)² square,
// separable into a pass along rows and one along columns. It reuses buf.
func dilateBox(buf []bool, reg []int32, r int32, w, bx0, by0, bw, bh, d int) []bool {
	n := bw * bh
	if cap(buf) < 2*n {
		buf = make([]bool, 2*n)
	}
	buf = buf[:2*n]
	rows, out := buf[:n], buf[n:]
	for y := 0; y < bh; y++ {
		last := -d - 1 // last column at or left of x holding a pixel of r
		for x := 0; x < bw; x++ {
			if reg[(by0+y)*w+bx0+x] == r {
				last = x
			}
			rows[y*bw+x] = x-last <= d
		}
	}
	// rows now marks pixels within d to the right of a pixel of r; add
	// those within d to the left.
	for y := 0; y < bh; y++ {
		next := bw + d + 1
		for x := bw - 1; x >= 0; x-- {
			if reg[(by0+y)*w+bx0+x] == r {
				next = x
			}
			if next-x <= d {
				rows[y*bw+x] = true
			}
		}
	}
	for x := 0; x < bw; x++ {
		last := -d - 1
		for y := 0; y < bh; y++ {
			if rows[y*bw+x] {
				last = y
			}
			out[y*bw+x] = y-last <= d
		}
		next := bh + d + 1
		for y := bh - 1; y >= 0; y-- {
			if rows[y*bw+x] {
				next = y
			}
			if next-y <= d {
				out[y*bw+x] = true
			}
		}
	}
	return out
}

func mean(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}
