package score

import (
	"context"
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/segment/labelmap"
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

// BoundaryPixels marks the boundary pixels of a label map: a
// pixel is on the boundary when one of its 4-neighbours inside the image
// carries another label. Both sides of an edge between two regions are
// marked, so a one-pixel shift of an edge is within a tolerance of 1. It
// panics if the map's pixels do not fill its width x height.
func BoundaryPixels(m labelmap.Map) []bool {
	labels, width, height := m.Pix, m.Width, m.Height
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
// map of the same size with a tolerance of tol pixels, after
// Martin, Fowlkes and Malik (2004), Learning to detect natural image
// boundaries using local brightness, color and texture cues, IEEE TPAMI
// 26(5). Their benchmark pairs boundary pixels one-to-one by a bipartite
// assignment; this is the common distance approximation instead: a boundary
// pixel counts as matched when a boundary pixel of the other map lies within
// Euclidean distance tol (a disc of offsets dx² + dy² <= tol²), so several
// pixels may be matched by the same one and the scores are at least the
// one-to-one ones. tol = 0 demands the same pixel. The distances come from
// an exact Euclidean distance transform, so time and memory are linear in
// the pixels for any tol.
//
// Degenerate cases follow MatchObjects: a ratio whose denominator is zero is
// 1 when neither map has a boundary and 0 otherwise; F is 0 when precision
// and recall are both 0. It panics if the maps differ in size, their pixels
// do not fill it, or tol is negative or not finite.
func Boundary(pred, truth labelmap.Map, tol float64) BoundaryMatch {
	m, _ := BoundaryContext(context.Background(), pred, truth, tol)
	return m
}

// BoundaryContext is Boundary that stops when ctx is done: it checks ctx
// every few thousand boundary pixels and returns ctx's error with a zero
// result.
func BoundaryContext(ctx context.Context, pred, truth labelmap.Map, tol float64) (BoundaryMatch, error) {
	if !pred.SameSize(truth) || len(pred.Pix) != len(truth.Pix) {
		panic(fmt.Sprintf("score: label maps of different sizes %dx%d (%d labels) and %dx%d (%d labels)", pred.Width, pred.Height, len(pred.Pix), truth.Width, truth.Height, len(truth.Pix)))
	}
	width, height := pred.Width, pred.Height
	if tol < 0 || math.IsNaN(tol) || math.IsInf(tol, 0) {
		panic(fmt.Sprintf("score: boundary tolerance %v is not a finite number >= 0", tol))
	}
	bp := BoundaryPixels(pred)
	bt := BoundaryPixels(truth)
	hitP, np, err := within(ctx, bp, bt, width, height, tol)
	if err != nil {
		return BoundaryMatch{}, err
	}
	hitT, nt, err := within(ctx, bt, bp, width, height, tol)
	if err != nil {
		return BoundaryMatch{}, err
	}
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
	return m, nil
}

// within counts the marked pixels of a that have a marked pixel of b within
// Euclidean distance tol, and the marked pixels of a. The distances come
// from the exact transform of b (sqDistance), so the work is linear in
// the pixels whatever tol is. It checks ctx after the transform and every
// 4096 marked pixels.
func within(ctx context.Context, a, b []bool, width, height int, tol float64) (hits, total int, err error) {
	d := sqDistance(b, width, height)
	t2 := tol * tol
	for k, on := range a {
		if !on {
			continue
		}
		if total%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return 0, 0, err
			}
		}
		total++
		if d[k] <= t2 && !math.IsInf(d[k], 1) {
			hits++
		}
	}
	return hits, total, nil
}

// sqDistance returns, for every pixel of a width x height grid, the
// squared Euclidean distance to the nearest marked pixel (+Inf when none
// is marked). It is the exact distance transform of Felzenszwalb and
// Huttenlocher (2012), Distance transforms of sampled functions, Theory
// of Computing 8: the lower envelope of parabolas along every column, then
// along every row of the result, O(width x height). Squared distances are
// whole numbers, exact in float64.
func sqDistance(marked []bool, width, height int) []float64 {
	inf := math.Inf(1)
	d := make([]float64, len(marked))
	for k, m := range marked {
		if !m {
			d[k] = inf
		}
	}
	n := max(width, height)
	f, out := make([]float64, n), make([]float64, n)
	v, z := make([]int, n), make([]float64, n+1)
	for x := 0; x < width; x++ {
		for y := 0; y < height; y++ {
			f[y] = d[y*width+x]
		}
		envelope(f[:height], out[:height], v, z)
		for y := 0; y < height; y++ {
			d[y*width+x] = out[y]
		}
	}
	for y := 0; y < height; y++ {
		row := d[y*width : (y+1)*width]
		copy(f, row)
		envelope(f[:width], row, v, z)
	}
	return d
}

// envelope is the one-dimensional transform: out[q] = min_p (q-p)² + f[p]
// over the finite samples f[p] (+Inf when there is none), by the lower
// envelope of the parabolas rooted at them; v and z are scratch of
// lengths len(f) and len(f)+1.
func envelope(f, out []float64, v []int, z []float64) {
	k := -1
	for q := range f {
		if math.IsInf(f[q], 1) {
			continue
		}
		s := math.Inf(-1)
		for k >= 0 {
			p := v[k]
			// Where the parabola from q starts to lie below the one from p.
			s = ((f[q] + float64(q*q)) - (f[p] + float64(p*p))) / float64(2*(q-p))
			if s > z[k] {
				break
			}
			k--
			s = math.Inf(-1)
		}
		k++
		v[k], z[k] = q, s
	}
	if k < 0 {
		for q := range out {
			out[q] = math.Inf(1)
		}
		return
	}
	z[k+1] = math.Inf(1)
	j := 0
	for q := range out {
		for z[j+1] < float64(q) {
			j++
		}
		p := v[j]
		out[q] = float64((q-p)*(q-p)) + f[p]
	}
}
