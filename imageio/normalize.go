package imageio

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/segment/parallel"
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
// of numpy.percentile. The order statistics are exact (see orderStats).
func percentiles(v []float32, p, q float64, workers int) (float64, float64) {
	n := len(v)
	if n == 0 {
		return 0, 0
	}
	hp, hq := float64(n-1)*p/100, float64(n-1)*q/100
	want := []int{int(hp), min(int(hp)+1, n-1), int(hq), min(int(hq)+1, n-1)}
	ranks := slices.Compact(slices.Sorted(slices.Values(want)))
	vals := orderStats(v, ranks, workers)
	x := make([]float64, len(want))
	for i, r := range want {
		x[i] = vals[slices.Index(ranks, r)]
	}
	interp := func(h, a, b float64) float64 { return a + (h-math.Floor(h))*(b-a) }
	return interp(hp, x[0], x[1]), interp(hq, x[2], x[3])
}

// sortKey maps a float32 to a uint32 whose unsigned order is the numeric
// order of the floats (NaN excepted): flip all bits of negatives, set the
// sign bit of the rest.
func sortKey(x float32) uint32 {
	b := math.Float32bits(x)
	if b&0x80000000 != 0 {
		return ^b
	}
	return b | 0x80000000
}

func fromSortKey(k uint32) float32 {
	if k&0x80000000 != 0 {
		return math.Float32frombits(k &^ 0x80000000)
	}
	return math.Float32frombits(^k)
}

// orderStats returns the values of the given strictly ascending ranks
// (0-based order statistics) of v, exactly, by a two-pass radix selection
// on order-preserving 32-bit keys: a histogram of the high 16 bits finds
// the bucket holding each rank, a histogram of the low 16 bits inside that
// bucket finds the key itself. O(n) per pass; the histograms are integer
// counts, so the result does not depend on the worker count.
func orderStats(v []float32, ranks []int, workers int) []float64 {
	out := make([]float64, len(ranks))
	if len(v) <= 1<<12 {
		a := slices.Clone(v)
		slices.Sort(a)
		for i, r := range ranks {
			out[i] = float64(a[r])
		}
		return out
	}
	high := keyHistogram(v, workers, false, 0)
	buckets := make([]uint32, len(ranks))
	within := make([]int, len(ranks))
	for i, r := range ranks {
		cum := 0
		for b, c := range high {
			if r < cum+c {
				buckets[i], within[i] = uint32(b), r-cum
				break
			}
			cum += c
		}
	}
	for i := range ranks {
		if i > 0 && buckets[i] == buckets[i-1] {
			continue // histogram shared with the previous rank below
		}
		bucket := buckets[i]
		low := keyHistogram(v, workers, true, bucket)
		for j := i; j < len(ranks) && buckets[j] == bucket; j++ {
			cum := 0
			for b, c := range low {
				if within[j] < cum+c {
					out[j] = float64(fromSortKey(bucket<<16 | uint32(b)))
					break
				}
				cum += c
			}
		}
	}
	return out
}

// keyHistogram counts the keys (sortKey) of v over 65536 bins: by their
// high 16 bits, or, when low is true, by their low 16 bits among the keys
// whose high 16 bits equal bucket. Per-worker histograms are added in a
// fixed order.
func keyHistogram(v []float32, workers int, low bool, bucket uint32) []int {
	nw := min(parallel.Workers(workers), 8)
	parts := make([][]int, nw)
	chunk := (len(v) + nw - 1) / nw
	parallel.For(nw, nw, func(p int) {
		h := make([]int, 65536)
		part := v[min(p*chunk, len(v)):min((p+1)*chunk, len(v))]
		if low {
			for _, x := range part {
				if k := sortKey(x); k>>16 == bucket {
					h[k&0xffff]++
				}
			}
		} else {
			for _, x := range part {
				h[sortKey(x)>>16]++
			}
		}
		parts[p] = h
	})
	total := parts[0]
	for _, h := range parts[1:] {
		for b, c := range h {
			total[b] += c
		}
	}
	return total
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
	stretchInto(v, v, lo, hi, workers)
}

// stretchInto is stretch of src written into dst (of src's length; dst
// may be src): the same values, in one pass.
func stretchInto(dst, src []float32, lo, hi float64, workers int) {
	if !(hi > lo) {
		clear(dst)
		return
	}
	s := 1 / (hi - lo)
	parallel.Blocks(len(src), pixelBlock, workers, func(_, a, b int) {
		d := dst[a:b]
		for i, v := range src[a:b] {
			t := (float64(v) - lo) * s
			d[i] = float32(min(max(t, 0), 1))
		}
	})
}

// percentileRange is the percentile window used for contrast stretching:
// the 0.1 and 99.9 percentiles, widened to min..max when they coincide (an
// image that is constant except for a few pixels keeps those pixels visible
// instead of collapsing to zero).
func percentileRange(v []float32, workers int) (float64, float64) {
	lo, hi := percentiles(v, lowPercentile, highPercentile, workers)
	if !(hi > lo) {
		lo, hi = minMax(v)
	}
	return lo, hi
}

// normalize maps v to [0, 1] in place by the named method (see
// FeatureOptions.Normalize); maxValue is 2^bits - 1 for "bitdepth".
func normalize(v []float32, method Normalization, maxValue float64, workers int) {
	var lo, hi float64
	switch method {
	case NormalizeRange:
		lo, hi = minMax(v)
	case NormalizeBitDepth:
		lo, hi = 0, maxValue
	default:
		lo, hi = percentileRange(v, workers)
	}
	stretch(v, lo, hi, workers)
}
