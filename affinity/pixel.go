package affinity

import (
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// stencil is the list of neighbour offsets (dx, dy) with 0 < dx²+dy² <= r²,
// sorted by (dy, dx), so that for every pixel the neighbours it has come
// out in ascending node order. Offsets are grouped by dy; group g covers
// dx = -m[g]..m[g] (without dx = 0 when dy = 0) at start[g]..start[g+1].
type stencil struct {
	dy, m, start []int
	lin          []int     // dy*w + dx: node index difference
	spatial      []float64 // |X_i - X_j|² / sigma_X², per offset
}

// clampRadius limits r to the largest distance that can occur in a w x h
// image, so r² cannot overflow and the stencil stays within the image.
func clampRadius(w, h, r int) int {
	if r > w+h {
		return w + h
	}
	return r
}

// groupHalfWidth is m = floor(sqrt(r² - dy²)), limited to w-1.
func groupHalfWidth(r, dy, w int) int {
	m := int(math.Sqrt(float64(r*r - dy*dy)))
	for (m+1)*(m+1)+dy*dy <= r*r { // guard against sqrt rounding
		m++
	}
	for m*m+dy*dy > r*r {
		m--
	}
	if m > w-1 {
		m = w - 1
	}
	return m
}

func newStencil(w, h, r int, sigmaX float64) *stencil {
	r = clampRadius(w, h, r)
	ry := min(r, h-1)
	s := &stencil{}
	k := 0
	for dy := -ry; dy <= ry; dy++ {
		k += 2*groupHalfWidth(r, dy, w) + 1
	}
	k-- // dx = dy = 0
	s.dy = make([]int, 0, 2*ry+1)
	s.m = make([]int, 0, 2*ry+1)
	s.start = make([]int, 0, 2*ry+2)
	s.lin = make([]int, 0, k)
	s.spatial = make([]float64, 0, k)
	for dy := -ry; dy <= ry; dy++ {
		m := groupHalfWidth(r, dy, w)
		s.dy = append(s.dy, dy)
		s.m = append(s.m, m)
		s.start = append(s.start, len(s.lin))
		for dx := -m; dx <= m; dx++ {
			if dx == 0 && dy == 0 {
				continue
			}
			s.lin = append(s.lin, dy*w+dx)
			// Depends on dx², dy² only, so offsets (dx,dy) and (-dx,-dy)
			// get the same bits: the graph is exactly symmetric.
			s.spatial = append(s.spatial, float64(dx*dx+dy*dy)/(sigmaX*sigmaX))
		}
	}
	s.start = append(s.start, len(s.lin))
	return s
}

// span returns the stencil index range [a, b) of group g's offsets that
// stay inside the image for a pixel in column x.
func (s *stencil) span(g, x, w int) (a, b int) {
	m := s.m[g]
	lo := max(-m, -x)
	hi := min(m, w-1-x)
	a = s.start[g] + lo + m
	b = s.start[g] + hi + m + 1
	if s.dy[g] == 0 { // dx = 0 is absent from this group
		b--
	}
	return a, b
}

// rowLen is the number of in-image stencil neighbours of pixel (x, y).
func (s *stencil) rowLen(x, y, w, h int) int {
	n := 0
	for g, dy := range s.dy {
		if y+dy < 0 || y+dy >= h {
			continue
		}
		a, b := s.span(g, x, w)
		n += b - a
	}
	return n
}

// PixelGraph builds the affinity graph of Shi and Malik (2000) with one
// node per pixel, node index y*w + x (row-major, as the feature planes):
//
//	w_ij = exp(-‖F_i - F_j‖² / sigma_I²) · exp(-‖X_i - X_j‖² / sigma_X²)  if 0 < ‖X_i - X_j‖ <= r,
//	w_ij = 0                                                           otherwise,
//
// where F_i is the vector of feature values of pixel i across the planes
// of f (each plane w*h values, row-major) and X_i its (x, y) position.
// The two factors are evaluated as one exponential exp(-(a_F + a_X)) in
// float64 and rounded to float32 (relative error about 1e-7); edges with
// a_F + a_X > 86, whose weight would be below 4.5e-38, are not stored (see
// maxExpArg). 1/sigma_I² is clamped to [1e-30, 1e30] so that no product
// can be NaN; that changes no stored weight for features of order 1.
//
// Rows are built in parallel on workers goroutines (workers < 1: all
// cores). Each row is computed on its own by a formula symmetric in i and
// j, so W = Wᵀ bit for bit and the result is byte-identical for any
// worker count. It returns a *ParamError for bad parameters and an error
// for an empty image, planes of the wrong length or non-finite features.
func PixelGraph(f [][]float32, w, h int, p PixelParams, workers int) (*Graph, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	if err := checkPlanes(f, w, h); err != nil {
		return nil, err
	}
	n := w * h
	st := newStencil(w, h, p.Radius, p.SigmaX)
	invI2 := invSigma2(p.SigmaI)

	// Structural row pointers: every in-image stencil neighbour.
	rowPtr := make([]int, n+1)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			rowPtr[y*w+x+1] = st.rowLen(x, y, w, h)
		}
	}
	for i := 0; i < n; i++ {
		rowPtr[i+1] += rowPtr[i]
	}
	nnz := rowPtr[n]
	g := &Graph{N: n, RowPtr: rowPtr, Col: make([]int32, nnz), Weight: make([]float32, nnz)}
	kept := make([]int32, n) // entries kept per row (edges may be dropped)

	const rowsPerChunk = 4
	nchunks := (h + rowsPerChunk - 1) / rowsPerChunk
	dropped := make([]int, nchunks)
	parallel.For(nchunks, workers, func(c int) {
		y0, y1 := c*rowsPerChunk, min((c+1)*rowsPerChunk, h)
		for y := y0; y < y1; y++ {
			dropped[c] += fillPixelRows(g, f, w, h, y, st, invI2, kept)
		}
	})
	total := 0
	for _, d := range dropped {
		total += d
	}
	if total > 0 {
		compactRows(g, kept)
	}
	return g, nil
}

// invSigma2 is 1/σ² clamped to [1e-30, 1e30], so that no product with
// it can be NaN (PixelGraph's doc comment says why that changes no
// stored weight).
func invSigma2(sigma float64) float64 {
	return math.Min(math.Max(1/(sigma*sigma), 1e-30), 1e30)
}

// fillPixelRows writes the kept entries of the pixels in image row y at
// the start of their structural slots of g (its RowPtr set, Col and
// Weight allocated) and returns how many it dropped.
func fillPixelRows(g *Graph, f [][]float32, w, h, y int, st *stencil, invI2 float64, kept []int32) int {
	rowPtr, col, wt := g.RowPtr, g.Col, g.Weight
	dropped := 0
	f0 := f[0]
	for x := 0; x < w; x++ {
		i := y*w + x
		pos := rowPtr[i]
		start := pos
		for g, dy := range st.dy {
			if y+dy < 0 || y+dy >= h {
				continue
			}
			a, b := st.span(g, x, w)
			lin := st.lin[a:b]
			spatial := st.spatial[a:b]
			cols := col[pos : pos+len(lin)]
			wts := wt[pos : pos+len(lin)]
			k := 0
			if len(f) == 1 {
				fi := float64(f0[i])
				for o, d := range lin {
					j := i + d
					diff := float64(f0[j]) - fi
					arg := diff*diff*invI2 + spatial[o]
					if arg > maxExpArg {
						continue
					}
					cols[k] = int32(j)
					wts[k] = expNeg(arg)
					k++
				}
			} else {
				for o, d := range lin {
					j := i + d
					var d2 float64
					for _, pl := range f {
						diff := float64(pl[j]) - float64(pl[i])
						d2 += diff * diff
					}
					arg := d2*invI2 + spatial[o]
					if arg > maxExpArg {
						continue
					}
					cols[k] = int32(j)
					wts[k] = expNeg(arg)
					k++
				}
			}
			dropped += len(lin) - k
			pos += k
		}
		kept[i] = int32(pos - start)
	}
	return dropped
}

// compactRows moves each row's kept entries, which sit at the start of its
// structural slot, down to close the gaps, and rewrites RowPtr.
func compactRows(g *Graph, kept []int32) {
	out := 0
	for i := 0; i < g.N; i++ {
		src := g.RowPtr[i]
		k := int(kept[i])
		copy(g.Col[out:out+k], g.Col[src:src+k])
		copy(g.Weight[out:out+k], g.Weight[src:src+k])
		g.RowPtr[i] = out
		out += k
	}
	g.RowPtr[g.N] = out
	g.Col = g.Col[:out:out]
	g.Weight = g.Weight[:out:out]
}

// EstimatePixelGraphBytes returns the peak number of bytes PixelGraph
// allocates for a w x h image with the given radius: column indices and
// weights (8 bytes per stored entry, counted as if no edge were dropped),
// row pointers (8 per node), the per-row kept counts (4 per node) and the
// stencil. The feature planes themselves are the caller's and not
// included. Nonsensical sizes give 0; sides above 2^24 pixels and
// results too large for int64 saturate at math.MaxInt64.
func EstimatePixelGraphBytes(w, h, radius int) int64 {
	if w < 1 || h < 1 || radius < 1 {
		return 0
	}
	if w > 1<<24 || h > 1<<24 {
		return math.MaxInt64
	}
	r := clampRadius(w, h, radius)
	ry := min(r, h-1)
	var nnz, offsets float64
	for dy := -ry; dy <= ry; dy++ {
		m := float64(groupHalfWidth(r, dy, w))
		// sum over dx = -m..m of (w - |dx|) = w(2m+1) - m(m+1)
		rows := float64(h - abs(dy))
		nnz += rows * (float64(w)*(2*m+1) - m*(m+1))
		offsets += 2*m + 1
		if dy == 0 {
			nnz -= rows * float64(w) // dx = dy = 0 is no edge
			offsets--
		}
	}
	n := float64(w) * float64(h)
	chunks := float64((h + 3) / 4)
	groups := float64(2*ry + 2)
	b := allocBytes(4*nnz) + allocBytes(4*nnz) + // Col, Weight
		allocBytes(8*(n+1)) + allocBytes(4*n) + // RowPtr, kept counts
		2*allocBytes(8*offsets) + 3*allocBytes(8*groups) + // stencil
		allocBytes(8*chunks) + 16<<10 // per-chunk counters, headers, closures, slack
	if b >= math.MaxInt64 {
		return math.MaxInt64
	}
	return int64(b)
}

// allocBytes models what Go's allocator takes for an n-byte array: large
// objects (above 32 KiB) round up to whole 8 KiB pages; small ones to a
// size class, at most 12.5% above the request (runtime/sizeclasses.go).
func allocBytes(n float64) float64 {
	if n > 32<<10 {
		return math.Ceil(n/8192) * 8192
	}
	return n*1.125 + 16
}

func abs(a int) int {
	if a < 0 {
		return -a
	}
	return a
}

// PixelSubgraph is the graph PixelGraph(f, w, h, p, workers) induces on
// nodes (pixel indices y*w + x, strictly ascending): node k of the result
// is pixel nodes[k], and an edge of the pixel graph is kept when both its
// ends are in nodes, with the same weight bits and rows in the same
// (ascending) order as PixelGraph followed by Graph.Subgraph. It is built
// from the stencil of the listed pixels alone, so its cost is the nodes'
// count times the stencil's size, not the image's: the re-cut of one
// object (whose pixels may fill a small share of their bounding box) uses
// it. It returns a *ParamError for bad parameters and an error for an
// empty image, planes of the wrong length, non-finite features or nodes
// that are out of range or not strictly ascending.
func PixelSubgraph(f [][]float32, w, h int, nodes []int, p PixelParams) (*Graph, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	if err := checkPlanes(f, w, h); err != nil {
		return nil, err
	}
	for k, i := range nodes {
		if i < 0 || i >= w*h || (k > 0 && i <= nodes[k-1]) {
			return nil, fmt.Errorf("affinity: subgraph node %d (%d) out of range [0, %d) or not ascending", k, i, w*h)
		}
	}
	st := newStencil(w, h, p.Radius, p.SigmaX)
	invI2 := invSigma2(p.SigmaI)
	index := make([]int32, w*h)
	for i := range index {
		index[i] = -1
	}
	for k, i := range nodes {
		index[i] = int32(k)
	}
	g := &Graph{N: len(nodes), RowPtr: make([]int, len(nodes)+1)}
	// Capacity: the stored entries of a compact object (most of a
	// stencil a node); append grows it where needed.
	g.Col = make([]int32, 0, len(nodes)*len(st.lin))
	g.Weight = make([]float32, 0, len(nodes)*len(st.lin))
	// The weight of an edge to an earlier node q is the one row q already
	// stored for this node: the exponent depends on (F_i - F_j)² and on
	// dx², dy² alone, so both directions have the same bits (and the
	// same test against maxExpArg). Rows are made in node order and list
	// their columns ascending, so the entries of row q past its diagonal
	// are met in the order they were stored: next[q] is the first not
	// yet met, and it is this node's entry exactly when the edge exists.
	next := make([]int, len(nodes))
	for k, i := range nodes {
		x, y := i%w, i/w
		kk := int32(k)
		next[k] = -1
		for gr, dy := range st.dy {
			if y+dy < 0 || y+dy >= h {
				continue
			}
			a, b := st.span(gr, x, w)
			for o := a; o < b; o++ {
				j := i + st.lin[o]
				q := index[j]
				if q < 0 {
					continue
				}
				if q < kk {
					if p := next[q]; p < g.RowPtr[q+1] && g.Col[p] == kk {
						g.Col = append(g.Col, q)
						g.Weight = append(g.Weight, g.Weight[p])
						next[q] = p + 1
					}
					continue
				}
				if next[k] < 0 {
					next[k] = len(g.Col) // the row's first entry past its diagonal
				}
				arg := weightArg(f, i, j, invI2, st.spatial[o])
				if arg > maxExpArg {
					continue
				}
				g.Col = append(g.Col, q)
				g.Weight = append(g.Weight, expNeg(arg))
			}
		}
		if next[k] < 0 {
			next[k] = len(g.Col)
		}
		g.RowPtr[k+1] = len(g.Col)
	}
	return g, nil
}

// weightArg is the exponent of the affinity of pixels i and j of planes f
// at an offset whose spatial term is spatial: |F_i - F_j|²/σ_I² +
// spatial (invI2 = 1/σ_I²), in the order of fillPixelRows' operations, so
// that PixelSubgraph and the stencil graph store its weights bit for bit.
func weightArg(f [][]float32, i, j int, invI2, spatial float64) float64 {
	if len(f) == 1 {
		diff := float64(f[0][j]) - float64(f[0][i])
		return diff*diff*invI2 + spatial
	}
	var d2 float64
	for _, pl := range f {
		diff := float64(pl[j]) - float64(pl[i])
		d2 += diff * diff
	}
	return d2*invI2 + spatial
}
