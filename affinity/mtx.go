package affinity

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// WriteMatrixMarket writes W in the Matrix Market coordinate format (NIST
// Matrix Market exchange format): header "%%MatrixMarket matrix coordinate
// real symmetric", optional comment lines, "N N E", then one line "i j w"
// per edge with i > j (the lower triangle, 1-based). Row and column k+1
// are node k: for a pixel graph of a w x h image, pixel (x, y) is node
// y*w + x; for a superpixel graph, superpixel k. Weights are printed with
// the shortest decimal that reads back to the same float32.
func (g *Graph) WriteMatrixMarket(w io.Writer, comment string) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	fmt.Fprintln(bw, "%%MatrixMarket matrix coordinate real symmetric")
	for _, line := range strings.Split(strings.TrimRight(comment, "\n"), "\n") {
		if line != "" {
			fmt.Fprintf(bw, "%% %s\n", line)
		}
	}
	fmt.Fprintf(bw, "%d %d %d\n", g.N, g.N, g.NNZ()/2)
	buf := make([]byte, 0, 64)
	for i := 0; i < g.N; i++ {
		for p := g.RowPtr[i]; p < g.RowPtr[i+1]; p++ {
			j := int(g.Col[p])
			if j >= i {
				break // columns are sorted: the rest is the upper triangle
			}
			buf = strconv.AppendInt(buf[:0], int64(i+1), 10)
			buf = append(buf, ' ')
			buf = strconv.AppendInt(buf, int64(j+1), 10)
			buf = append(buf, ' ')
			buf = strconv.AppendFloat(buf, float64(g.Weight[p]), 'g', -1, 32)
			buf = append(buf, '\n')
			bw.Write(buf)
		}
	}
	return bw.Flush()
}

// ReadMatrixMarket reads a real symmetric (or general, if symmetric in
// content) coordinate Matrix Market file into a Graph. Diagonal entries
// are dropped; duplicates are summed.
func ReadMatrixMarket(r io.Reader) (*Graph, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 1<<16), 1<<20)
	if !sc.Scan() {
		return nil, fmt.Errorf("matrix market: empty input")
	}
	head := strings.Fields(strings.ToLower(sc.Text()))
	if len(head) != 5 || head[0] != "%%matrixmarket" || head[1] != "matrix" || head[2] != "coordinate" ||
		(head[3] != "real" && head[3] != "integer" && head[3] != "pattern") || (head[4] != "symmetric" && head[4] != "general") {
		return nil, fmt.Errorf("matrix market: unsupported header %q (want coordinate real symmetric)", sc.Text())
	}
	pattern, general := head[3] == "pattern", head[4] == "general"
	line := 1
	var n, m, nnz int
	for sc.Scan() {
		line++
		t := strings.TrimSpace(sc.Text())
		if t == "" || t[0] == '%' {
			continue
		}
		if _, err := fmt.Sscan(t, &n, &m, &nnz); err != nil || n != m || n < 0 || nnz < 0 {
			return nil, fmt.Errorf("matrix market: line %d: bad size line %q (want a square N N E)", line, t)
		}
		break
	}
	if n > math.MaxInt32 {
		return nil, fmt.Errorf("matrix market: %d rows is too many", n)
	}
	edges := make([]Edge, 0, min(nnz, 1<<24))
	for k := 0; k < nnz; k++ {
		if !sc.Scan() {
			return nil, fmt.Errorf("matrix market: %d entries, want %d", k, nnz)
		}
		line++
		f := strings.Fields(sc.Text())
		if len(f) < 2 || (!pattern && len(f) < 3) {
			return nil, fmt.Errorf("matrix market: line %d: want \"i j w\"", line)
		}
		i, err1 := strconv.Atoi(f[0])
		j, err2 := strconv.Atoi(f[1])
		wv := 1.0
		var err3 error
		if !pattern {
			wv, err3 = strconv.ParseFloat(f[2], 64)
		}
		if err1 != nil || err2 != nil || err3 != nil || i < 1 || j < 1 || i > n || j > n {
			return nil, fmt.Errorf("matrix market: line %d: bad entry %q", line, sc.Text())
		}
		if general && j > i {
			continue // a general file lists both triangles; keep one
		}
		edges = append(edges, Edge{I: i - 1, J: j - 1, W: float32(wv)})
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("matrix market: %w", err)
	}
	return FromEdges(n, edges)
}
