package affinity

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// Sparse is W in one of its stored forms: the compressed rows of Graph
// or the per-offset weights of StencilGraph. It is what the readers of a
// finished graph need: its size and its Matrix Market export.
type Sparse interface {
	// Nodes is the number of nodes n (W is n x n).
	Nodes() int
	// NNZ is the number of stored entries (twice the number of edges).
	NNZ() int
	// WriteMatrixMarket writes W as Graph.WriteMatrixMarket does.
	WriteMatrixMarket(w io.Writer, comment string) error
}

// Nodes returns g.N.
func (g *Graph) Nodes() int { return g.N }

// StencilGraph is the pixel graph of PixelGraph stored by neighbour
// offset instead of by compressed rows. The neighbours of a pixel lie at
// the fixed offsets (dx_f, dy_f), 0 < dx² + dy² <= r², f = 0..K-1 in the
// order of (dy, dx), so no column index is needed: weight[i·K + f] is
// w_ij of pixel i = y·w + x and its neighbour j = i + dy_f·w + dx_f, 4
// bytes an entry against 8 (a 4-byte column index and a 4-byte weight)
// in compressed rows. A slot whose neighbour falls outside the image, or
// whose edge PixelGraph leaves out (kernel argument above maxExpArg),
// holds 0; every stored weight is positive, so 0 means "no edge"
// exactly. Row i is read in one contiguous run of K weights, its
// neighbours inside the image in ascending node order as in compressed
// rows. The weights are computed by the formula of PixelGraph with the
// same arithmetic, so CSR returns PixelGraph's graph bit for bit.
//
// Storing each edge once (only the offsets with dy > 0, or dy = 0 and
// dx > 0, the other half read from the neighbour's slots) would halve
// the weights again, but the product then gathers half of every row
// from K/2 other rows: on the coins photograph enlarged to 116,736 and
// 1,050,624 nodes such products took 1.3-2.9 times as long as the
// compressed rows' (weights offset-major or node-major), while the full
// node-major stencil takes about as long as they do (README, "Measured
// speed and accuracy").
type StencilGraph struct {
	w, h   int
	dx, dy []int     // the K offsets, in (dy, dx) order
	lin    []int     // dy*w + dx
	weight []float32 // node-major: weight[i*K + f]
	nnz    int
}

// PixelStencilGraph builds the graph of PixelGraph (same parameters,
// checks and errors) in stencil form. Each edge is computed once, by
// the pixel it leaves in the forward direction (dy > 0, or dy = 0 and
// dx > 0), and written to both of its slots. Rows of the image are
// computed in parallel on workers goroutines (workers < 1: all cores);
// every slot is written by one goroutine only, so the result is
// byte-identical for any worker count.
func PixelStencilGraph(f [][]float32, w, h int, p PixelParams, workers int) (*StencilGraph, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	if err := checkPlanes(f, w, h); err != nil {
		return nil, err
	}
	n := w * h
	st := newStencil(w, h, p.Radius, p.SigmaX)
	K := len(st.lin)
	sg := &StencilGraph{w: w, h: h, dx: make([]int, 0, K), dy: make([]int, 0, K)}
	for g, dy := range st.dy {
		m := st.m[g]
		for dx := -m; dx <= m; dx++ {
			if dx != 0 || dy != 0 {
				sg.dx = append(sg.dx, dx)
				sg.dy = append(sg.dy, dy)
				sg.lin = append(sg.lin, dy*w+dx)
			}
		}
	}
	if len(sg.dx) != K || K%2 != 0 {
		return nil, fmt.Errorf("affinity: internal error: stencil of %d offsets listed as %d", K, len(sg.dx))
	}
	half := K / 2 // offsets half.. are the forward ones; K-1-f mirrors f
	invI2 := invSigma2(p.SigmaI)
	sg.weight = make([]float32, K*n)

	const rowsPerChunk = 4
	nchunks := (h + rowsPerChunk - 1) / rowsPerChunk
	kept := make([]int, nchunks)
	parallel.For(nchunks, workers, func(c int) {
		y0, y1 := c*rowsPerChunk, min((c+1)*rowsPerChunk, h)
		cnt := 0
		for y := y0; y < y1; y++ {
			for x := 0; x < w; x++ {
				i := y*w + x
				for o := half; o < K; o++ {
					dx, dy := sg.dx[o], sg.dy[o]
					if x+dx < 0 || x+dx >= w || y+dy >= h {
						continue
					}
					j := i + dy*w + dx
					arg := weightArg(f, i, j, invI2, st.spatial[o])
					if arg > maxExpArg {
						continue
					}
					v := expNeg(arg)
					sg.weight[i*K+o] = v
					sg.weight[j*K+K-1-o] = v
					cnt++
				}
			}
		}
		kept[c] = cnt
	})
	for _, k := range kept {
		sg.nnz += 2 * k
	}
	return sg, nil
}

// EstimateStencilGraphBytes returns the peak number of bytes
// PixelStencilGraph allocates for a w x h image with the given radius:
// the K float32 weights of every pixel (4·K bytes a node, K the offsets
// of the radius, every slot stored whether or not its edge is kept), the
// offsets (three arrays of K ints, the last grown by appending), the
// stencil of PixelGraph and the per-chunk counts. The feature planes are
// the caller's and not included. Nonsensical sizes give 0; sides above
// 2^24 pixels and results too large for int64 saturate at math.MaxInt64.
func EstimateStencilGraphBytes(w, h, radius int) int64 {
	if w < 1 || h < 1 || radius < 1 {
		return 0
	}
	if w > 1<<24 || h > 1<<24 {
		return math.MaxInt64
	}
	r := clampRadius(w, h, radius)
	ry := min(r, h-1)
	k := -1.0 // dx = dy = 0 is no offset
	for dy := -ry; dy <= ry; dy++ {
		k += float64(2*groupHalfWidth(r, dy, w) + 1)
	}
	n := float64(w) * float64(h)
	groups := float64(2*ry + 2)
	b := allocBytes(4*k*n) + // the weights
		2*allocBytes(8*k) + 2*allocBytes(8*k) + // dx, dy; lin grown by append
		2*allocBytes(8*k) + 3*allocBytes(8*groups) + // PixelGraph's stencil
		allocBytes(8*float64((h+3)/4)) + 8<<10 // per-chunk counts, headers, closures, slack
	if b >= math.MaxInt64 {
		return math.MaxInt64
	}
	return int64(b)
}

// Nodes returns the number of pixels w·h.
func (s *StencilGraph) Nodes() int { return s.w * s.h }

// NNZ is the number of entries compressed rows would store (twice the
// number of edges).
func (s *StencilGraph) NNZ() int { return s.nnz }

// Size returns the image width and height.
func (s *StencilGraph) Size() (w, h int) { return s.w, s.h }

// Offsets returns the K offsets (dx, dy) in the order of (dy, dx). The
// slices are the graph's own: do not modify them.
func (s *StencilGraph) Offsets() (dx, dy []int) { return s.dx, s.dy }

// Weights returns the node-major weights: Weights()[i·K + f] is the
// weight between pixel i and pixel i + dy_f·w + dx_f, 0 where that
// neighbour is outside the image or the edge is absent. The slice is the
// graph's own: do not modify it.
func (s *StencilGraph) Weights() []float32 { return s.weight }

// Row appends the neighbours of node i and their weights to col and wt
// in ascending column order, as row i of CSR, and returns both.
func (s *StencilGraph) Row(i int, col []int32, wt []float32) ([]int32, []float32) {
	K := len(s.lin)
	ws := s.weight[i*K : i*K+K]
	lin := s.lin[:len(ws)]
	for f, v := range ws {
		if v == 0 {
			continue
		}
		// A positive weight is an edge inside the image.
		col = append(col, int32(i+lin[f]))
		wt = append(wt, v)
	}
	return col, wt
}

// Degrees returns d_i = Σ_j w_ij in float64, summed in ascending column
// order as Graph.Degrees does.
func (s *StencilGraph) Degrees() []float64 {
	n := s.Nodes()
	d := make([]float64, n)
	var col []int32
	var wt []float32
	for i := range d {
		col, wt = s.Row(i, col[:0], wt[:0])
		var sum float64
		for _, v := range wt {
			sum += float64(v)
		}
		d[i] = sum
	}
	return d
}

// CSR returns the graph in compressed rows: PixelGraph's result for the
// same image and parameters, bit for bit.
func (s *StencilGraph) CSR() *Graph {
	n := s.Nodes()
	g := &Graph{N: n, RowPtr: make([]int, n+1), Col: make([]int32, 0, s.nnz), Weight: make([]float32, 0, s.nnz)}
	for i := 0; i < n; i++ {
		g.Col, g.Weight = s.Row(i, g.Col, g.Weight)
		g.RowPtr[i+1] = len(g.Col)
	}
	return g
}

// WriteMatrixMarket writes W in the format of Graph.WriteMatrixMarket,
// byte for byte the same file as the compressed rows would give, without
// building them.
func (s *StencilGraph) WriteMatrixMarket(w io.Writer, comment string) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	fmt.Fprintln(bw, "%%MatrixMarket matrix coordinate real symmetric")
	for _, line := range strings.Split(strings.TrimRight(comment, "\n"), "\n") {
		if line != "" {
			fmt.Fprintf(bw, "%% %s\n", line)
		}
	}
	n := s.Nodes()
	fmt.Fprintf(bw, "%d %d %d\n", n, n, s.nnz/2)
	buf := make([]byte, 0, 64)
	var col []int32
	var wt []float32
	for i := 0; i < n; i++ {
		col, wt = s.Row(i, col[:0], wt[:0])
		for p, j := range col {
			if int(j) >= i {
				break // the rest is the upper triangle
			}
			buf = strconv.AppendInt(buf[:0], int64(i+1), 10)
			buf = append(buf, ' ')
			buf = strconv.AppendInt(buf, int64(j+1), 10)
			buf = append(buf, ' ')
			buf = strconv.AppendFloat(buf, float64(wt[p]), 'g', -1, 32)
			buf = append(buf, '\n')
			bw.Write(buf)
		}
	}
	return bw.Flush()
}
