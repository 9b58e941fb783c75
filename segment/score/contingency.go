package score

import (
	"fmt"
	"slices"
)

// Cell is one nonzero entry n_ij of a contingency table: Count samples carry
// label A[Row] in the first labelling and B[Col] in the second.
type Cell struct {
	Row, Col int32
	Count    int64
}

// Table is the sparse contingency table of two labellings a and b of the
// same n samples: n_ij = |{k : a_k = A[i], b_k = B[j]}|. Only nonzero cells
// are stored, sorted by (Row, Col). RowSum[i] = sum_j n_ij is the size of
// cluster A[i], ColSum[j] = sum_i n_ij the size of cluster B[j].
type Table struct {
	N      int64   // number of samples
	A, B   []int32 // distinct labels of a and of b, ascending
	RowSum []int64 // cluster sizes of a, aligned with A
	ColSum []int64 // cluster sizes of b, aligned with B
	Cells  []Cell  // nonzero cells sorted by (Row, Col)
}

// Contingency builds the sparse contingency table of a and b. Labels may be
// any int32 values, negative or sparse; they are not renumbered in meaning,
// only indexed. The work is O(n) plus the cost of sorting the distinct labels
// when they are spread far wider than n.
//
// It panics if len(a) != len(b): comparing maps of different sizes is a
// programmer error here; callers that read files check sizes first.
func Contingency(a, b []int32) *Table {
	if len(a) != len(b) {
		panic(fmt.Sprintf("score: label maps of different lengths %d and %d", len(a), len(b)))
	}
	t := &Table{N: int64(len(a))}
	if len(a) == 0 {
		return t
	}
	ia, labelsA, sumA := index(a)
	ib, labelsB, sumB := index(b)
	t.A, t.RowSum = labelsA, sumA
	t.B, t.ColSum = labelsB, sumB
	na, nb := len(labelsA), len(labelsB)
	if na*nb <= max(len(a), 1<<16) {
		// Few clusters: a dense table is one pass with no indirection.
		dense := make([]int64, na*nb)
		for k := range ia {
			dense[int(ia[k])*nb+int(ib[k])]++
		}
		for i := 0; i < na; i++ {
			for j, c := range dense[i*nb : (i+1)*nb] {
				if c != 0 {
					t.Cells = append(t.Cells, Cell{Row: int32(i), Col: int32(j), Count: c})
				}
			}
		}
		return t
	}
	// Many clusters: bucket the samples by row (counting sort), then count
	// the columns of each row in a scratch array, visiting only touched ones.
	start := make([]int64, na+1)
	for i, s := range sumA {
		start[i+1] = start[i] + s
	}
	next := slices.Clone(start[:na])
	byRow := make([]int32, len(ib))
	for k, r := range ia {
		byRow[next[r]] = ib[k]
		next[r]++
	}
	scratch := make([]int64, nb)
	var touched []int32
	for i := 0; i < na; i++ {
		touched = touched[:0]
		for _, j := range byRow[start[i]:start[i+1]] {
			if scratch[j] == 0 {
				touched = append(touched, j)
			}
			scratch[j]++
		}
		slices.Sort(touched)
		for _, j := range touched {
			t.Cells = append(t.Cells, Cell{Row: int32(i), Col: j, Count: scratch[j]})
			scratch[j] = 0
		}
	}
	return t
}

// index maps every label to the position of its value among the distinct
// labels (ascending) and counts each cluster's size.
func index(x []int32) (idx []int32, labels []int32, sizes []int64) {
	lo, hi := x[0], x[0]
	for _, v := range x {
		lo = min(lo, v)
		hi = max(hi, v)
	}
	idx = make([]int32, len(x))
	span := int64(hi) - int64(lo) + 1
	if span <= 2*int64(len(x))+1024 {
		// Compact range: a lookup table indexed by value.
		pos := make([]int32, span)
		for _, v := range x {
			pos[v-lo] = 1
		}
		var n int32
		for k, seen := range pos {
			if seen != 0 {
				labels = append(labels, int32(int64(lo)+int64(k)))
				pos[k] = n
				n++
			} else {
				pos[k] = -1
			}
		}
		sizes = make([]int64, n)
		for k, v := range x {
			p := pos[v-lo]
			idx[k] = p
			sizes[p]++
		}
		return idx, labels, sizes
	}
	// Sparse range: sort the distinct values, then binary search.
	labels = slices.Clone(x)
	slices.Sort(labels)
	labels = slices.Compact(labels)
	sizes = make([]int64, len(labels))
	for k, v := range x {
		p, _ := slices.BinarySearch(labels, v)
		idx[k] = int32(p)
		sizes[p]++
	}
	return idx, labels, sizes
}
