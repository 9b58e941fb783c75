package measure

import (
	"fmt"
	"sort"

	"github.com/cleave-seg/cleave/segment/internal/unionfind"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Point is a pixel corner: pixel (x, y) has the corners (x, y),
// (x+1, y), (x+1, y+1) and (x, y+1).
type Point struct{ X, Y int }

// Polygon is one 4-connected piece of a region: its outer ring first,
// then its holes. Rings are listed without repeating the first vertex;
// every vertex is a corner where the ring turns. The outer ring has
// positive signed area by the shoelace formula, (1/2) sum (x_i y_{i+1} -
// x_{i+1} y_i) > 0, so it is counter-clockwise when the numbers are read
// as ordinary x, y coordinates (y up); on the image, with y pointing
// down, it runs clockwise. Holes have negative signed area.
type Polygon [][]Point

// Outline is the boundary of one label.
type Outline struct {
	Label    int32
	Polygons []Polygon // one per 4-connected piece, ordered by their first pixel in raster order
}

// Sides of a pixel, in the order a ring runs round a lone pixel (top
// eastwards, right southwards, bottom westwards, left northwards).
var (
	sideDir    = [4][2]int{{1, 0}, {0, 1}, {-1, 0}, {0, -1}} // direction of travel
	sideNormal = [4][2]int{{0, -1}, {1, 0}, {0, 1}, {-1, 0}} // outward normal
	sideStart  = [4][2]int{{0, 0}, {1, 0}, {1, 1}, {0, 1}}   // start corner, relative to the pixel
)

// Outlines traces the boundary of every label > 0 of the label map m
// along pixel edges and returns one Outline per label, in
// ascending label order.
//
// Method: crack following (the boundary as the edges between a label's
// pixels and the rest, Rosenfeld 1974, "Adjacency in digital pictures",
// Information and Control 26:24-33), each ring run with the region on
// the right of the direction of travel on the image. Where two pixels of
// the label meet only at a corner, the ring turns round the pixel it is
// following, so pieces of a region are 4-connected and the background
// between them 8-connected. A ring that passes such a corner twice is
// split there into two rings that touch at that corner: the outer ring
// and a hole, or two holes, each a simple closed curve. Rasterizing the
// polygons back (a pixel is in when its centre is inside by the even-odd
// rule) gives the label map exactly.
func Outlines(m labelmap.Map) ([]Outline, error) {
	labels, w, h := m.Pix, m.Width, m.Height
	if w <= 0 || h <= 0 || len(labels) != w*h {
		return nil, fmt.Errorf("%w: %d labels for %d x %d pixels", ErrSize, len(labels), w, h)
	}
	same := func(x, y int, l int32) bool {
		return x >= 0 && y >= 0 && x < w && y < h && labels[y*w+x] == l
	}
	// Boundary edges still to trace, 4 bits per pixel.
	edges := make([]uint8, w*h)
	// 4-connected pieces of each label (union-find).
	parent := make(unionfind.Forest, w*h)
	find := parent.Find
	union := parent.Union
	// The sides of a pixel are those of sideNormal: top, right, bottom,
	// left. Union links to the smaller root, so a piece's root is its
	// first pixel in raster order whatever unions built it, and the union
	// with the pixel above is left out where the pixels to the left and
	// above-left already join the two.
	for i := range parent {
		parent[i] = int32(i)
	}
	for y := 0; y < h; y++ {
		row := labels[y*w : (y+1)*w]
		var up, down []int32
		if y > 0 {
			up = labels[(y-1)*w : y*w]
		}
		if y+1 < h {
			down = labels[(y+1)*w : (y+2)*w]
		}
		for x, l := range row {
			if l <= 0 {
				continue
			}
			i := y*w + x
			var e uint8
			left, above := x > 0 && row[x-1] == l, up != nil && up[x] == l
			if !above {
				e |= 1
			}
			if x+1 == w || row[x+1] != l {
				e |= 2
			}
			if down == nil || down[x] != l {
				e |= 4
			}
			if !left {
				e |= 8
			}
			edges[i] = e
			if left {
				union(int32(i), int32(i-1))
			}
			if above && !(left && up[x-1] == l) {
				union(int32(i), int32(i-w))
			}
		}
	}
	type ring struct {
		pts   []Point
		piece int32 // root pixel of the piece the ring bounds
		area  int64 // twice the signed area
	}
	var rings []ring
	emit := func(pts []Point, pix []int32) {
		// pix[1] is the pixel of the edge from pts[0] to pts[1], part of
		// this ring.
		rings = append(rings, ring{pts: pts, piece: find(pix[1]), area: shoelace(pts)})
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			for edges[i] != 0 {
				s := 0
				for edges[i]&(1<<s) == 0 {
					s++
				}
				pts, pix, contact := traceRing(labels, edges, w, x, y, s, same)
				splitRing(pts, pix, contact, emit)
			}
		}
	}
	// Group the rings by piece: one outer ring (positive area) each.
	type piece struct {
		label int32
		first int32
		outer []Point
		holes [][]Point
	}
	pieces := map[int32]*piece{}
	for _, r := range rings {
		p := pieces[r.piece]
		if p == nil {
			p = &piece{label: labels[r.piece], first: r.piece}
			pieces[r.piece] = p
		}
		switch {
		case r.area > 0 && p.outer == nil:
			p.outer = r.pts
		case r.area < 0:
			p.holes = append(p.holes, r.pts)
		default:
			return nil, fmt.Errorf("measure: outline of label %d: a piece has two outer rings (tracing fault)", p.label)
		}
	}
	list := make([]*piece, 0, len(pieces))
	for _, p := range pieces {
		if p.outer == nil {
			return nil, fmt.Errorf("measure: outline of label %d: a piece has no outer ring (tracing fault)", p.label)
		}
		list = append(list, p)
	}
	sort.Slice(list, func(a, b int) bool {
		if list[a].label != list[b].label {
			return list[a].label < list[b].label
		}
		return list[a].first < list[b].first
	})
	var out []Outline
	for _, p := range list {
		if len(out) == 0 || out[len(out)-1].Label != p.label {
			out = append(out, Outline{Label: p.label})
		}
		o := &out[len(out)-1]
		poly := Polygon{p.outer}
		sort.Slice(p.holes, func(a, b int) bool { return less(minPoint(p.holes[a]), minPoint(p.holes[b])) })
		poly = append(poly, p.holes...)
		o.Polygons = append(o.Polygons, poly)
	}
	return out, nil
}

// traceRing follows one ring from side s of pixel (x, y), clearing the
// edges it runs along, and returns the corners where it turns (cyclic
// order) with, for each corner, the pixel whose edge ends there, and
// whether it turned round a corner contact (two pixels of the label
// meeting only at a corner): only there can a ring pass a corner twice.
func traceRing(labels []int32, edges []uint8, w, x, y, s int, same func(x, y int, l int32) bool) (pts []Point, pix []int32, contact bool) {
	l := labels[y*w+x]
	x0, y0, s0 := x, y, s
	for {
		i := y*w + x
		edges[i] &^= 1 << s
		d, nrm := sideDir[s], sideNormal[s]
		// The corner at the end of this edge.
		end := Point{x + sideStart[(s+1)%4][0], y + sideStart[(s+1)%4][1]}
		switch {
		case !same(x+d[0], y+d[1], l):
			// Turn right, round this pixel (also at a corner contact).
			contact = contact || same(x+d[0]+nrm[0], y+d[1]+nrm[1], l)
			s = (s + 1) % 4
			pts, pix = append(pts, end), append(pix, int32(i))
		case !same(x+d[0]+nrm[0], y+d[1]+nrm[1], l):
			x, y = x+d[0], y+d[1] // straight on, along the next pixel
		default:
			// Turn left, onto the diagonal pixel.
			x, y, s = x+d[0]+nrm[0], y+d[1]+nrm[1], (s+3)%4
			pts, pix = append(pts, end), append(pix, int32(i))
		}
		if x == x0 && y == y0 && s == s0 {
			return pts, pix, contact
		}
	}
}

// splitRing cuts a closed ring of corners at the corners it passes twice
// into simple rings and hands each to emit (with, for each corner, the
// pixel of the edge that ends there). Without a corner contact (contact
// false, see traceRing) no corner repeats and the ring is emitted whole,
// from its smallest corner.
func splitRing(pts []Point, pix []int32, contact bool, emit func([]Point, []int32)) {
	// Start at the smallest corner (top row, then left), which a ring
	// passes once: passing a corner twice uses all four of its edges,
	// one of them going up from it.
	k := 0
	for j := range pts {
		if less(pts[j], pts[k]) {
			k = j
		}
	}
	n := len(pts)
	if !contact {
		emit(append(pts[k:n:n], pts[:k]...), append(pix[k:n:n], pix[:k]...))
		return
	}
	seen := map[Point]int{}
	var path []Point
	var ppix []int32
	for j := range n {
		p, q := pts[(k+j)%n], pix[(k+j)%n]
		if at, ok := seen[p]; ok && at < len(path) && path[at] == p {
			// A loop from the earlier pass to this one: a ring of its own.
			loop, lpix := append([]Point(nil), path[at:]...), append([]int32(nil), ppix[at:]...)
			lpix[0] = q // the edge arriving at the loop's first corner now
			emit(loop, lpix)
			path, ppix = path[:at+1], ppix[:at+1]
			continue
		}
		seen[p] = len(path)
		path, ppix = append(path, p), append(ppix, q)
	}
	emit(path, ppix)
}

func less(a, b Point) bool { return a.Y < b.Y || (a.Y == b.Y && a.X < b.X) }

func minPoint(r []Point) Point {
	m := r[0]
	for _, p := range r[1:] {
		if less(p, m) {
			m = p
		}
	}
	return m
}

// shoelace is twice the signed area of a ring (the shoelace formula).
// Products may wrap around in int64 for huge images; the sum is still
// exact, since twice the area of a ring on the image fits in int64.
func shoelace(r []Point) int64 {
	var s int64
	for i, p := range r {
		q := r[(i+1)%len(r)]
		s += int64(p.X)*int64(q.Y) - int64(q.X)*int64(p.Y)
	}
	return s
}
