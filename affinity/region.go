package affinity

import (
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// Regions summarizes a labelling of a w x h image into N regions
// (superpixels): area in pixels, mean feature vector and centroid.
type Regions struct {
	N      int
	Area   []int       // pixels per region
	Mean   [][]float64 // Mean[c][r]: mean of feature plane c over region r
	CX, CY []float64   // centroid, in pixels (x right, y down; pixel centres at integers)
}

// Summarize computes area, mean features and centroid of each of the n
// regions of the label map m (values 0..n-1; f holds its feature planes). Sums run in raster order in float64,
// so the result is deterministic. It panics only on a label outside
// 0..n-1 (a programmer error: labels come from SLIC or a relabelling).
func Summarize(f [][]float32, m labelmap.Map, n int) *Regions {
	labels, w, h := m.Pix, m.Width, m.Height
	r := &Regions{N: n, Area: make([]int, n), Mean: make([][]float64, len(f)), CX: make([]float64, n), CY: make([]float64, n)}
	for c := range f {
		r.Mean[c] = make([]float64, n)
	}
	// A row is taken in runs of one label: area and coordinate sums of a
	// run are integers, exact in float64 (below 2^53), so adding them per
	// run gives what adding them per pixel gives; features are still
	// added pixel by pixel in raster order.
	for y := 0; y < h; y++ {
		row := labels[y*w : (y+1)*w]
		for x0 := 0; x0 < w; {
			l := row[x0]
			x1 := x0 + 1
			for x1 < w && row[x1] == l {
				x1++
			}
			n := x1 - x0
			r.Area[l] += n
			r.CX[l] += float64((x0 + x1 - 1) * n / 2)
			r.CY[l] += float64(y * n)
			for c := range f {
				acc := r.Mean[c][l]
				for _, v := range f[c][y*w+x0 : y*w+x1] {
					acc += float64(v)
				}
				r.Mean[c][l] = acc
			}
			x0 = x1
		}
	}
	for l := 0; l < n; l++ {
		if a := float64(r.Area[l]); a > 0 {
			r.CX[l] /= a
			r.CY[l] /= a
			for c := range f {
				r.Mean[c][l] /= a
			}
		}
	}
	return r
}

// adjRows is the number of image rows in one band of Adjacency.
const adjRows = 128

// Adjacency returns the region adjacency graph of the n regions of the
// label map m (values 0..n-1): w_ij is the number of 4-connected pixel
// pairs (horizontal and vertical unit edges) with one pixel in region i
// and the other in j, i.e. the length of their shared boundary in pixel
// edges.
//
// Bands of adjRows rows (fixed by h alone) are counted on workers
// goroutines (workers < 1: GOMAXPROCS), each band in a map of its own;
// the counts are small integers, exact in float32, so merging them in any
// order gives the same graph.
func Adjacency(m labelmap.Map, n, workers int) *Graph {
	labels, w, h := m.Pix, m.Width, m.Height
	nb := (h + adjRows - 1) / adjRows
	bands := make([]map[uint64]float32, nb)
	parallel.For(nb, workers, func(c int) {
		counts := make(map[uint64]float32)
		add := func(a, b int32) {
			if a > b {
				a, b = b, a
			}
			counts[uint64(a)<<32|uint64(b)]++
		}
		for y := c * adjRows; y < min(h, (c+1)*adjRows); y++ {
			row := labels[y*w : (y+1)*w]
			for x := 0; x+1 < w; x++ {
				if row[x] != row[x+1] {
					add(row[x], row[x+1])
				}
			}
			if y+1 < h {
				next := labels[(y+1)*w : (y+2)*w]
				for x, a := range row {
					if a != next[x] {
						add(a, next[x])
					}
				}
			}
		}
		bands[c] = counts
	})
	counts := make(map[uint64]float32)
	if nb > 0 {
		counts = bands[0]
	}
	for _, b := range bands[min(1, nb):] {
		for k, v := range b {
			counts[k] += v
		}
	}
	edges := make([]Edge, 0, len(counts))
	for k, c := range counts {
		edges = append(edges, Edge{I: int(k >> 32), J: int(k & 0xffffffff), W: c})
	}
	// FromEdges sorts every row, so map order does not reach the result;
	// no duplicates exist, so no sums depend on it either.
	g, err := FromEdges(n, edges)
	if err != nil {
		panic(fmt.Sprintf("affinity: adjacency of a valid labelling: %v", err))
	}
	return g
}

// RegionGraph builds the superpixel graph: regions i and j that share a
// boundary are joined with weight
//
//	w_ij = (b_ij / S) · exp(-‖F_i - F_j‖² / σ_I²) · exp(-‖X_i - X_j‖² / σ_X²)
//
// where F is the mean feature vector, X the centroid (pixels), b_ij the
// shared boundary length in pixel edges and S = sqrt(mean area) the mean
// superpixel side, so that b_ij/S is about 1 for two neighbouring
// superpixels of typical size. This is the kernel of Shi and Malik (2000)
// on region means, with the boundary factor making a long shared border
// a strong tie (region graphs weighted this way are common practice in
// superpixel-based normalized cuts). Non-adjacent regions are not joined.
//
// With p.Contour set, each weight is also multiplied by the
// intervening-contour factor exp(-IC_ij² / σ_C²), IC_ij the largest edge
// energy on the segment between the two centroids (Leung and Malik 1998;
// Malik, Belongie, Leung and Shi 2001): a thin boundary line between two
// packed objects, which barely moves the regions' means, still parts
// them.
//
// Edges negligible against the degrees of their ends are dropped (see
// dropNegligible).
//
// adj is Adjacency of the w x h labelling the regions come from (callers
// that also estimate sigma_I from it build it once).
func RegionGraph(r *Regions, adj *Graph, w, h int, p RegionParams) (*Graph, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	if adj.N != r.N {
		return nil, fmt.Errorf("affinity: adjacency of %d regions for %d regions", adj.N, r.N)
	}
	meanSide := math.Sqrt(float64(w*h) / float64(max(r.N, 1)))
	invI2 := 1 / (p.SigmaI * p.SigmaI)
	invX2 := 1 / (p.SigmaX * p.SigmaX)
	if p.Contour != nil && len(p.Contour) != w*h {
		return nil, fmt.Errorf("affinity: contour map of %d values for %dx%d", len(p.Contour), w, h)
	}
	var ic []float32
	if p.Contour != nil {
		ic = p.ContourIC
		if len(ic) != len(adj.Col) {
			ic = InterveningContour(p.Contour, w, h, r, adj, 1)
		}
	}
	invC2 := 1 / (p.SigmaC * p.SigmaC)
	g := &Graph{N: adj.N, RowPtr: adj.RowPtr, Col: adj.Col, Weight: make([]float32, len(adj.Weight))}
	for i := 0; i < adj.N; i++ {
		for q := adj.RowPtr[i]; q < adj.RowPtr[i+1]; q++ {
			j := int(adj.Col[q])
			var df float64
			for c := range r.Mean {
				d := r.Mean[c][i] - r.Mean[c][j]
				df += d * d
			}
			dx, dy := r.CX[i]-r.CX[j], r.CY[i]-r.CY[j]
			// The expression is symmetric in i and j term by term, so both
			// copies of the edge get bit-identical weights.
			v := float64(adj.Weight[q]) / meanSide * math.Exp(-df*invI2) * math.Exp(-(dx*dx+dy*dy)*invX2)
			if ic != nil {
				c := float64(ic[q])
				v *= math.Exp(-c * c * invC2)
			}
			g.Weight[q] = float32(v)
		}
	}
	g.DropNegligible()
	return g, nil
}

// Subgraph returns the graph induced by nodes (distinct, in range): node k
// of the result is nodes[k], and an edge is kept when both ends are in the
// set. Rows stay sorted when nodes is ascending. The position of each
// node in the result is looked up in a slice over the span of nodes when
// that span is at most subgraphDense times their number (the parts of a
// recursive cut, the pixels of one object), in a map otherwise; a row is
// sorted only when its entries come out of order. The result is the same
// either way.
func (g *Graph) Subgraph(nodes []int) *Graph {
	s := &Graph{N: len(nodes), RowPtr: make([]int, len(nodes)+1)}
	if len(nodes) == 0 {
		return s
	}
	lo, hi := nodes[0], nodes[0]
	stored := 0
	for _, v := range nodes {
		lo, hi = min(lo, v), max(hi, v)
		stored += g.RowPtr[v+1] - g.RowPtr[v]
	}
	s.Col = make([]int32, 0, stored)
	s.Weight = make([]float32, 0, stored)
	var dense []int32
	var pos map[int32]int32
	if hi-lo+1 <= subgraphDense*len(nodes) {
		dense = make([]int32, hi-lo+1)
		for i := range dense {
			dense[i] = -1
		}
		for k, v := range nodes {
			dense[v-lo] = int32(k)
		}
	} else {
		pos = make(map[int32]int32, len(nodes))
		for k, v := range nodes {
			pos[int32(v)] = int32(k)
		}
	}
	for k, v := range nodes {
		start := len(s.Col)
		ordered := true
		for p := g.RowPtr[v]; p < g.RowPtr[v+1]; p++ {
			q, ok := int32(-1), false
			if dense != nil {
				if c := int(g.Col[p]) - lo; c >= 0 && c < len(dense) {
					q = dense[c]
					ok = q >= 0
				}
			} else {
				q, ok = pos[g.Col[p]]
			}
			if !ok {
				continue
			}
			if n := len(s.Col); n > start && q < s.Col[n-1] {
				ordered = false
			}
			s.Col = append(s.Col, q)
			s.Weight = append(s.Weight, g.Weight[p])
		}
		s.RowPtr[k+1] = len(s.Col)
		if !ordered {
			sortRow(s.Col[start:], s.Weight[start:])
		}
	}
	return s
}

// subgraphDense bounds the span of Subgraph's nodes, in multiples of
// their number, up to which their positions are kept in a slice (4 bytes
// a node of the span) instead of a map.
const subgraphDense = 8
