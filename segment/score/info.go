package score

import "math"

// Entropies returns the Shannon entropies, in nats (natural log), of the
// two labellings and of their joint labelling:
//
//	H(A) = -sum_i p_i log p_i, H(B) = -sum_j p_j log p_j,
//	H(A,B) = -sum_ij p_ij log p_ij, with p_ij = n_ij / n.
//
// All are 0 for an empty table.
func (t *Table) Entropies() (ha, hb, hab float64) {
	return entropy(t.RowSum, t.N), entropy(t.ColSum, t.N), entropyCells(t.Cells, t.N)
}

func entropy(sizes []int64, n int64) float64 {
	var h float64
	logN := math.Log(float64(n))
	for _, s := range sizes {
		if s > 0 {
			h -= float64(s) / float64(n) * (math.Log(float64(s)) - logN)
		}
	}
	return h
}

func entropyCells(cells []Cell, n int64) float64 {
	var h float64
	logN := math.Log(float64(n))
	for _, c := range cells {
		h -= float64(c.Count) / float64(n) * (math.Log(float64(c.Count)) - logN)
	}
	return h
}

// MutualInfo is the mutual information of the two labellings in nats,
//
//	I(A;B) = sum_ij p_ij log(p_ij / (p_i p_j)),
//
// summed over the nonzero cells (Cover and Thomas, Elements of Information
// Theory, ch. 2). It is never negative; rounding below zero is clamped.
func (t *Table) MutualInfo() float64 {
	if len(t.A) <= 1 || len(t.B) <= 1 {
		return 0 // one labelling is a single cluster: I = 0 exactly
	}
	n := float64(t.N)
	var mi float64
	for _, c := range t.Cells {
		x := float64(c.Count)
		mi += x / n * (math.Log(x) + math.Log(n) - math.Log(float64(t.RowSum[c.Row])) - math.Log(float64(t.ColSum[c.Col])))
	}
	return max(mi, 0)
}

// VI is the variation of information (Meila 2007, Comparing clusterings: an
// information based distance, J. Multivariate Analysis 98), in nats:
//
//	VI(A,B) = H(A|B) + H(B|A) = H(A) + H(B) - 2 I(A;B),
//
// a metric on partitions with 0 <= VI <= log n. Reading A as a segmentation
// and B as the truth, split = H(A|B) = -sum_ij p_ij log(n_ij / b_j) grows as
// true regions are cut into several predicted ones (over-segmentation) and
// merge = H(B|A) = -sum_ij p_ij log(n_ij / a_i) grows as predicted regions
// swallow several true ones (under-segmentation). Both are summed directly
// over the nonzero cells, so neither is a difference of larger numbers.
func (t *Table) VI() (vi, split, merge float64) {
	n := float64(t.N)
	for _, c := range t.Cells {
		x := float64(c.Count)
		p := x / n
		split -= p * (math.Log(x) - math.Log(float64(t.ColSum[c.Col])))
		merge -= p * (math.Log(x) - math.Log(float64(t.RowSum[c.Row])))
	}
	split, merge = max(split, 0), max(merge, 0)
	return split + merge, split, merge
}

// VI is the variation of information between a segmentation a and a truth b
// (Meila 2007), natural log; see Table.VI for the split and merge parts. It
// panics if the lengths differ.
func VI(a, b []int32) (vi, split, merge float64) { return Contingency(a, b).VI() }
