package measure

// Outlines as it was before its first pass read rows and left out
// redundant unions and its rings were split only at corner contacts
// (as on main at 608075e), kept verbatim for
// TestOutlinesMatchFormer.

import (
	"fmt"
	"sort"

	"github.com/cleave-seg/cleave/segment/internal/unionfind"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

func outlinesOld(m labelmap.Map) ([]Outline, error) {
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
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			l := labels[i]
			parent[i] = int32(i)
			if l <= 0 {
				continue
			}
			for s := range 4 {
				if !same(x+sideNormal[s][0], y+sideNormal[s][1], l) {
					edges[i] |= 1 << s
				}
			}
			if x > 0 && labels[i-1] == l {
				union(int32(i), int32(i-1))
			}
			if y > 0 && labels[i-w] == l {
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
				pts, pix := traceRingOld(labels, edges, w, x, y, s, same)
				splitRingOld(pts, pix, emit)
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

// traceRingOld follows one ring from side s of pixel (x, y), clearing the
// edges it runs along, and returns the corners where it turns (cyclic
// order) with, for each corner, the pixel whose edge ends there.
func traceRingOld(labels []int32, edges []uint8, w, x, y, s int, same func(x, y int, l int32) bool) ([]Point, []int32) {
	l := labels[y*w+x]
	x0, y0, s0 := x, y, s
	var pts []Point
	var pix []int32
	for {
		i := y*w + x
		edges[i] &^= 1 << s
		d, nrm := sideDir[s], sideNormal[s]
		// The corner at the end of this edge.
		end := Point{x + sideStart[(s+1)%4][0], y + sideStart[(s+1)%4][1]}
		switch {
		case !same(x+d[0], y+d[1], l):
			// Turn right, round this pixel (also at a corner contact).
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
			return pts, pix
		}
	}
}

// splitRingOld cuts a closed ring of corners at the corners it passes twice
// into simple rings and hands each to emit (with, for each corner, the
// pixel of the edge that ends there).
func splitRingOld(pts []Point, pix []int32, emit func([]Point, []int32)) {
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
