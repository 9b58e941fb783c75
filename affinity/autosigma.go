package affinity

import (
	"fmt"
	"github.com/cleave-seg/cleave/imageio/noise"
	"math"
)

// minSigmaI is the smallest sigma_I AutoSigmaI returns, in normalized
// feature units: about a quarter of one step of 8-bit data on a 0..1 scale.
const minSigmaI = 1e-3

// AutoSigmaI estimates the feature scale sigma_I of the pixel graph from
// the image itself:
//
//	sigma_I = max(2 · median(‖F_i - F_j‖) / 0.6745,  0.01 · spread,  1e-3)
//
// where the median runs over all horizontally and vertically adjacent
// pixel pairs and spread = ‖max F - min F‖ over the planes.
//
// Why: the kernel width should match a typical distance between
// neighbours, the idea behind the local scaling of Zelnik-Manor and Perona
// (2004), who set sigma to the distance to a near neighbour. Most
// adjacent pairs lie inside regions, so their differences are noise; the
// few that straddle a boundary barely move a median. For one plane with
// Gaussian noise of standard deviation s, F_i - F_j ~ N(0, 2s²) and its
// absolute value has median 0.6745·√2·s, so median/0.6745 estimates the
// root-mean-square neighbour difference √2·s (the median absolute
// deviation as a robust scale, common practice). Twice that keeps
// within-region weights near 1 (mean exp(-d²/sigma_I²) ≈ 0.82 under that
// model) while a step of ten noise levels weighs exp(-12.5) ≈ 4e-6.
// Clean or coarsely quantized images, where over half the pairs are
// equal, have a zero median; the floor at 1% of the feature spread then
// still separates their steps, and the absolute floor of 1e-3 makes the
// result positive and finite for a constant image.
//
// f holds feature planes of w*h values each (row-major). Pairs with a
// non-finite difference are skipped. It panics if f is empty or a plane
// has the wrong length (programmer error).
func AutoSigmaI(f [][]float32, w, h int) float64 {
	if len(f) == 0 || w < 1 || h < 1 {
		panic(fmt.Sprintf("affinity: AutoSigmaI on %d planes of %dx%d", len(f), w, h))
	}
	for c, pl := range f {
		if len(pl) != w*h {
			panic(fmt.Sprintf("affinity: AutoSigmaI: plane %d has %d values, want %d", c, len(pl), w*h))
		}
	}
	dist := make([]float32, 0, (w-1)*h+w*(h-1))
	pair := func(i, j int) {
		var d2 float64
		for _, pl := range f {
			d := float64(pl[i]) - float64(pl[j])
			d2 += d * d
		}
		if d := math.Sqrt(d2); !math.IsInf(d, 0) && !math.IsNaN(d) {
			dist = append(dist, float32(d))
		}
	}
	AdjacentPairs(w, h, pair)
	var spread2 float64
	for _, pl := range f {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range pl {
			if v := float64(v); !math.IsInf(v, 0) && !math.IsNaN(v) {
				lo, hi = min(lo, v), max(hi, v)
			}
		}
		if hi > lo {
			spread2 += (hi - lo) * (hi - lo)
		}
	}
	s := max(0.01*math.Sqrt(spread2), minSigmaI)
	if len(dist) > 0 {
		s = max(s, 2*float64(lowerMedian(dist))/0.6745)
	}
	if math.IsInf(s, 0) {
		return math.MaxFloat64
	}
	return s
}

// lowerMedian returns the element of rank (len-1)/2 of v (non-negative,
// finite values) in O(len) (noise.Rank). v is reordered.
func lowerMedian(v []float32) float32 {
	return noise.Rank(v, (len(v)-1)/2)
}

// AutoRegionSigmaI estimates sigma_I of the superpixel graph the same way
// AutoSigmaI does for pixels, from the differences of mean features of
// adjacent regions (adj is Adjacency of the labelling):
//
//	sigma_I = max(median(‖F_i - F_j‖),  0.01 · spread,  1e-3)
//
// with spread the range of the region means. Region means average the
// pixel noise away, so the pixel estimate would be far too wide for them;
// most adjacent regions lie inside one object or the background, so the
// median difference measures what "alike" means at the superpixel scale
// (local scaling after Zelnik-Manor and Perona 2004). Unlike pixel noise,
// differences of region means carry texture and shading too, so no
// widening factor is applied: a factor of 1 was chosen on the project's
// nuclei and plate scenes (plates lost their defects at 2; nuclei did not
// change between 0.7 and 3).
func AutoRegionSigmaI(r *Regions, adj *Graph) float64 {
	var dist []float32
	for i := 0; i < adj.N; i++ {
		for p := adj.RowPtr[i]; p < adj.RowPtr[i+1]; p++ {
			j := int(adj.Col[p])
			if j <= i {
				continue
			}
			var d2 float64
			for c := range r.Mean {
				d := r.Mean[c][i] - r.Mean[c][j]
				d2 += d * d
			}
			if d := math.Sqrt(d2); !math.IsNaN(d) && !math.IsInf(d, 0) {
				dist = append(dist, float32(d))
			}
		}
	}
	var spread2 float64
	for c := range r.Mean {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range r.Mean[c] {
			lo, hi = min(lo, v), max(hi, v)
		}
		if hi > lo {
			spread2 += (hi - lo) * (hi - lo)
		}
	}
	s := max(0.01*math.Sqrt(spread2), minSigmaI)
	if len(dist) > 0 {
		s = max(s, float64(lowerMedian(dist)))
	}
	return s
}

// AdjacentPairs calls f(i, j) once for every pair of 4-adjacent pixels
// of a w x h image, j the right or lower neighbour of i, in raster order
// of i and the right neighbour first (sums over the pairs are then
// deterministic).
func AdjacentPairs(w, h int, f func(i, j int)) {
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			if x+1 < w {
				f(i, i+1)
			}
			if y+1 < h {
				f(i, i+w)
			}
		}
	}
}
