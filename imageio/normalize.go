package imageio

import (
	"math"
	"math/bits"
	"slices"
)

// Percentiles used by the "percentile" normalization and the display plane.
const (
	lowPercentile  = 0.1
	highPercentile = 99.9
)

// percentiles returns the p-th and q-th percentiles (0..100) of v by linear
// interpolation between order statistics: with x(0) <= ... <= x(n-1) and
// h = (n-1) p/100, the value is x(floor h) + (h - floor h)(x(floor h + 1) -
// x(floor h)). This is definition 7 of Hyndman and Fan (1996), the default
// of numpy.percentile. The order statistics are exact: a 65536-bin
// histogram when every value is an integer in 0..65535 (8- and 16-bit
// samples), otherwise selection (Hoare's quickselect) on a copy.
func percentiles(v []float32, p, q float64) (float64, float64) {
	n := len(v)
	if n == 0 {
		return 0, 0
	}
	hp, hq := float64(n-1)*p/100, float64(n-1)*q/100
	want := []int{int(hp), min(int(hp)+1, n-1), int(hq), min(int(hq)+1, n-1)}
	ranks := slices.Compact(slices.Sorted(slices.Values(want)))
	var vals []float64
	if hist, ok := intHistogram(v); ok {
		vals = histRanks(hist, ranks)
	} else {
		vals = selectRanks(v, ranks)
	}
	x := make([]float64, len(want))
	for i, r := range want {
		x[i] = vals[slices.Index(ranks, r)]
	}
	interp := func(h, a, b float64) float64 { return a + (h-math.Floor(h))*(b-a) }
	return interp(hp, x[0], x[1]), interp(hq, x[2], x[3])
}

// intHistogram counts v into 65536 bins when every value is an integer in
// 0..65535; ok is false otherwise.
func intHistogram(v []float32) (hist []int, ok bool) {
	hist = make([]int, 65536)
	for _, x := range v {
		i := int(x)
		if float32(i) != x || i < 0 || i > 65535 {
			return nil, false
		}
		hist[i]++
	}
	return hist, true
}

// histRanks returns the values of the given strictly ascending ranks (0-based order
// statistics) from a histogram.
func histRanks(hist []int, ranks []int) []float64 {
	out := make([]float64, len(ranks))
	cum, k := 0, 0
	for val, c := range hist {
		cum += c
		for k < len(ranks) && ranks[k] < cum {
			out[k] = float64(val)
			k++
		}
		if k == len(ranks) {
			break
		}
	}
	return out
}

// selectRanks returns the values of strictly ascending ranks by repeated selection on
// a copy of v; each selection partitions the copy so later ranks search only
// the part to the right of the previous one.
func selectRanks(v []float32, ranks []int) []float64 {
	a := slices.Clone(v)
	out := make([]float64, len(ranks))
	lo := 0
	for k, r := range ranks {
		quickselect(a[lo:], r-lo)
		out[k] = float64(a[r])
		lo = r
	}
	return out
}

// quickselect reorders a so that a[k] is the k-th smallest value, everything
// before it is <= a[k] and everything after is >= a[k]. Hoare partitioning
// around a median of three; after 2 log2(n) rounds without convergence the
// remaining range is sorted, which bounds the worst case by O(n log n).
func quickselect(a []float32, k int) {
	lo, hi := 0, len(a)-1
	budget := 2 * bits.Len(uint(len(a)))
	for hi > lo {
		if hi-lo < 16 || budget == 0 {
			slices.Sort(a[lo : hi+1])
			return
		}
		budget--
		mid := lo + (hi-lo)/2
		if a[mid] < a[lo] {
			a[mid], a[lo] = a[lo], a[mid]
		}
		if a[hi] < a[lo] {
			a[hi], a[lo] = a[lo], a[hi]
		}
		if a[hi] < a[mid] {
			a[hi], a[mid] = a[mid], a[hi]
		}
		pivot := a[mid]
		i, j := lo, hi
		for i <= j {
			for a[i] < pivot {
				i++
			}
			for a[j] > pivot {
				j--
			}
			if i <= j {
				a[i], a[j] = a[j], a[i]
				i++
				j--
			}
		}
		// Now a[lo..j] <= pivot <= a[i..hi], and a[j+1..i-1] == pivot.
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return
		}
	}
}

// minMax returns the smallest and largest value of v.
func minMax(v []float32) (float64, float64) {
	if len(v) == 0 {
		return 0, 0
	}
	lo, hi := v[0], v[0]
	for _, x := range v[1:] {
		lo = min(lo, x)
		hi = max(hi, x)
	}
	return float64(lo), float64(hi)
}

// stretch maps v linearly so that lo -> 0 and hi -> 1, clipping to [0, 1],
// in place. When hi <= lo every value becomes 0 (a constant image carries
// no contrast; this avoids a division by zero).
func stretch(v []float32, lo, hi float64, workers int) {
	if !(hi > lo) {
		clear(v)
		return
	}
	s := 1 / (hi - lo)
	parallelRange(len(v), workers, func(a, b int) {
		for i := a; i < b; i++ {
			t := (float64(v[i]) - lo) * s
			v[i] = float32(min(max(t, 0), 1))
		}
	})
}

// percentileRange is the percentile window used for contrast stretching:
// the 0.1 and 99.9 percentiles, widened to min..max when they coincide (an
// image that is constant except for a few pixels keeps those pixels visible
// instead of collapsing to zero).
func percentileRange(v []float32) (float64, float64) {
	lo, hi := percentiles(v, lowPercentile, highPercentile)
	if !(hi > lo) {
		lo, hi = minMax(v)
	}
	return lo, hi
}

// normalize maps v to [0, 1] in place by the named method (see
// FeatureOptions.Normalize); maxValue is 2^bits - 1 for "bitdepth".
func normalize(v []float32, method string, maxValue float64, workers int) {
	var lo, hi float64
	switch method {
	case NormalizeRange:
		lo, hi = minMax(v)
	case NormalizeBitDepth:
		lo, hi = 0, maxValue
	default:
		lo, hi = percentileRange(v)
	}
	stretch(v, lo, hi, workers)
}
