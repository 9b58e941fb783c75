package segment

import "sort"

// otsuWeighted returns the threshold t that splits the weighted values v
// (weights wt) into {v <= t} and {v > t} with the largest between-class
// variance ω0 ω1 (μ0 - μ1)² (Otsu 1979, eq. 18), searching every gap
// between distinct sorted values exactly; t is the midpoint of the best gap.
// ok is false when fewer than two distinct values exist.
func otsuWeighted(v, wt []float64) (t float64, ok bool) {
	idx := make([]int, len(v))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return v[idx[a]] < v[idx[b]] })
	var W, S float64
	for _, i := range idx {
		W += wt[i]
		S += wt[i] * v[i]
	}
	var w0, s0 float64
	best := -1.0
	for k := 0; k+1 < len(idx); k++ {
		i := idx[k]
		w0 += wt[i]
		s0 += wt[i] * v[i]
		next := v[idx[k+1]]
		if next == v[i] {
			continue
		}
		w1 := W - w0
		if w0 <= 0 || w1 <= 0 {
			continue
		}
		d := s0/w0 - (S-s0)/w1
		if b := w0 * w1 * d * d; b > best {
			best, t, ok = b, (v[i]+next)/2, true
		}
	}
	return t, ok
}
