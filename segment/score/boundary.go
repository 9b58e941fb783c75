package score

import (
	"fmt"
	"math"
)

// BoundaryMatch is the boundary agreement of a prediction and a truth:
//
//	Precision = |{p in B_pred : d(p, B_truth) <= tol}| / |B_pred|
//	Recall    = |{t in B_truth : d(t, B_pred) <= tol}| / |B_truth|
//	F         = 2 Precision Recall / (Precision + Recall)
//
// with B the boundary pixels of a label map and d the Euclidean distance
// between pixel centres.
type BoundaryMatch struct {
	Precision, Recall, F float64
	PredPixels           int // |B_pred|
	TruthPixels          int // |B_truth|
}

// BoundaryPixels marks the boundary pixels of a width x height label map: a
// pixel is on the boundary when one of its 4-neighbours inside the image
// carries another label. Both sides of an edge between two regions are
// marked, so a one-pixel shift of an edge is within a tolerance of 1. It
// panics if len(labels) != width*height.
func BoundaryPixels(labels []int32, width, height int) []bool {
	if width < 0 || height < 0 || len(labels) != width*height {
		panic(fmt.Sprintf("score: label map of length %d is not %d x %d", len(labels), width, height))
	}
	b := make([]bool, len(labels))
	for y := 0; y < height; y++ {
		row := labels[y*width : (y+1)*width]
		for x, l := range row {
			k := y*width + x
			if x+1 < width && row[x+1] != l {
				b[k], b[k+1] = true, true
			}
			if y+1 < height && labels[k+width] != l {
				b[k], b[k+width] = true, true
			}
		}
	}
	return b
}

// Boundary compares the region boundaries of a predicted and a true label
// map (width x height, row-major) with a tolerance of tol pixels, after
// Martin, Fowlkes and Malik (2004), Learning to detect natural image
// boundaries using local brightness, color and texture cues, IEEE TPAMI
// 26(5). Their benchmark pairs boundary pixels one-to-one by a bipartite
// assignment; this is the common distance approximation instead: a boundary
// pixel counts as matched when a boundary pixel of the other map lies within
// Euclidean distance tol (a disc of offsets dx² + dy² <= tol²), so several
// pixels may be matched by the same one and the scores are at least the
// one-to-one ones. tol = 0 demands the same pixel.
//
// Degenerate cases follow MatchObjects: a ratio whose denominator is zero is
// 1 when neither map has a boundary and 0 otherwise; F is 0 when precision
// and recall are both 0. It panics if the lengths do not match width*height
// or tol is negative or not finite.
func Boundary(pred, truth []int32, width, height int, tol float64) BoundaryMatch {
	if len(pred) != len(truth) {
		panic(fmt.Sprintf("score: label maps of different lengths %d and %d", len(pred), len(truth)))
	}
	if tol < 0 || math.IsNaN(tol) || math.IsInf(tol, 0) {
		panic(fmt.Sprintf("score: boundary tolerance %v is not a finite number >= 0", tol))
	}
	bp := BoundaryPixels(pred, width, height)
	bt := BoundaryPixels(truth, width, height)
	offs := discOffsets(tol)
	hitP, np := within(bp, bt, width, height, offs)
	hitT, nt := within(bt, bp, width, height, offs)
	empty := np == 0 && nt == 0
	m := BoundaryMatch{
		Precision:   ratio(hitP, np, empty),
		Recall:      ratio(hitT, nt, empty),
		PredPixels:  np,
		TruthPixels: nt,
	}
	if s := m.Precision + m.Recall; s > 0 {
		m.F = 2 * m.Precision * m.Recall / s
	}
	return m
}

// discOffsets lists the integer offsets with dx² + dy² <= tol², in a fixed
// order.
func discOffsets(tol float64) [][2]int {
	r := int(math.Floor(tol))
	t2 := tol * tol
	var offs [][2]int
	for dy := -r; dy <= r; dy++ {
		for dx := -r; dx <= r; dx++ {
			if float64(dx*dx+dy*dy) <= t2 {
				offs = append(offs, [2]int{dx, dy})
			}
		}
	}
	return offs
}

// within counts the marked pixels of a that have a marked pixel of b within
// the offsets, and the marked pixels of a.
func within(a, b []bool, width, height int, offs [][2]int) (hits, total int) {
	for k, on := range a {
		if !on {
			continue
		}
		total++
		x, y := k%width, k/width
		for _, o := range offs {
			xx, yy := x+o[0], y+o[1]
			if xx >= 0 && xx < width && yy >= 0 && yy < height && b[yy*width+xx] {
				hits++
				break
			}
		}
	}
	return hits, total
}
