// Package noise estimates the pixel noise of an image plane: one figure
// for the whole plane (Pixel) and a field of local figures (Local) for
// noise that changes across it, as photon noise does under uneven light.
//
// Both use the robust rule of common practice: for white noise of
// standard deviation s, the difference of two adjacent pixels has
// standard deviation s√2, and the median absolute deviation times 1.4826
// estimates the standard deviation of normal data, so
//
//	s = 1.4826 · median|I(x+1, y) - I(x, y)| / √2.
//
// Smooth image content (shading, the interior of objects) adds little to
// adjacent differences, and edges are few beside the pixels between them,
// so the median follows the noise.
package noise

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// madScale is 1/Φ⁻¹(3/4), the factor that turns a median absolute
// deviation into a standard deviation for normal data (common practice).
const madScale = 1.4826

// Pixel estimates the standard deviation of white pixel noise in v
// (w x h, row-major) from at most about 2^17 horizontally adjacent pairs
// on evenly spaced rows. It is 0 for an image less than 2 pixels wide.
// Non-finite values take part by their sorted order (NaN first).
func Pixel(v []float32, w, h int) float64 {
	if w < 2 {
		return 0
	}
	step := max(1, (w-1)*h/(1<<17))
	d := make([]float32, 0, (w-1)*h/step+w)
	finite := true
	for y := 0; y < h; y += step {
		row := v[y*w : (y+1)*w]
		for x := 1; x < w; x++ {
			a := float32(math.Abs(float64(row[x]) - float64(row[x-1])))
			finite = finite && a <= math.MaxFloat32 // false for NaN and +Inf
			d = append(d, a)
		}
	}
	if len(d) == 0 {
		return 0
	}
	if !finite {
		// Rank needs finite values; the sorted order (NaN first) is the
		// rank's meaning here.
		slices.Sort(d)
		return madScale * float64(d[len(d)/2]) / math.Sqrt2
	}
	return madScale * float64(Rank(d, len(d)/2)) / math.Sqrt2
}

// Cell is the side, in pixels, of the square cells over which Local
// estimates the noise: 1024 pixels give about 990 differences, whose
// median estimates the noise to about 4 % (the median of n normal samples
// has a relative standard error of about 1.25/√n, common practice), while
// the cell stays small beside the broad glows and light falloff over
// which photon noise changes.
const Cell = 32

// Field holds the pixel noise of each cell of an image: a grid of GW x GH
// cells (row-major in S), each Cell pixels on a side except the last of a
// row or column, which takes the remainder (merged into the one before
// when under half a cell).
type Field struct {
	W, H   int       // image size, pixels
	GW, GH int       // cells across and down
	S      []float64 // noise standard deviation per cell
}

// Local estimates the noise of every cell of v (w x h, finite values) by
// Pixel's rule on all the horizontally adjacent pairs inside the cell,
// each at least floor. Cell rows run on workers goroutines; the result is
// the same for any worker count.
func Local(v []float32, w, h int, floor float64, workers int) *Field {
	f := &Field{W: w, H: h, GW: cells(w), GH: cells(h)}
	f.S = make([]float64, f.GW*f.GH)
	parallel.For(f.GH, workers, func(r int) {
		var d []float32
		y0, y1 := span(r, f.GH, h)
		for c := range f.GW {
			x0, x1 := span(c, f.GW, w)
			d = d[:0]
			for y := y0; y < y1; y++ {
				row := v[y*w : (y+1)*w]
				for x := max(x0, 1); x < x1; x++ {
					// A difference beyond float32's range (samples near
					// ±3.4e38) is held at its largest value: Rank needs
					// finite values.
					a := math.Abs(float64(row[x]) - float64(row[x-1]))
					if a > math.MaxFloat32 {
						a = math.MaxFloat32
					}
					d = append(d, float32(a))
				}
			}
			s := floor
			if len(d) > 0 {
				s = max(s, madScale*float64(Rank(d, len(d)/2))/math.Sqrt2)
			}
			f.S[r*f.GW+c] = s
		}
	})
	return f
}

// cells is the number of cells along a side of n pixels.
func cells(n int) int { return max(1, (n+Cell/2)/Cell) }

// span is the pixel range [lo, hi) of cell i of k along a side of n.
func span(i, k, n int) (lo, hi int) {
	lo = i * Cell
	if i == k-1 {
		return lo, n
	}
	return lo, lo + Cell
}

// Row returns the cells of the cell row that holds pixel row y.
func (f *Field) Row(y int) []float64 {
	r := min(y/Cell, f.GH-1)
	return f.S[r*f.GW : (r+1)*f.GW]
}

// Col is the cell column that holds pixel column x.
func (f *Field) Col(x int) int { return min(x/Cell, f.GW-1) }

// Smooth fills dst (length W) with the noise of pixel row y interpolated
// bilinearly between the cells' centres (constant beyond the outer
// centres), so that a map made from it has no steps at cell borders.
func (f *Field) Smooth(y int, dst []float64) {
	gy, ty := f.at(y, f.GH, f.H)
	r0, r1 := f.S[gy*f.GW:(gy+1)*f.GW], f.S[min(gy+1, f.GH-1)*f.GW:]
	for x := range dst {
		gx, tx := f.at(x, f.GW, f.W)
		gx1 := min(gx+1, f.GW-1)
		top := (1-tx)*r0[gx] + tx*r0[gx1]
		bot := (1-tx)*r1[gx] + tx*r1[gx1]
		dst[x] = (1-ty)*top + ty*bot
	}
}

// at locates pixel p among the centres of k cells along a side of n: the
// cell whose centre is at or before p and the fraction of the way to the
// next centre (0 before the first centre and after the last).
func (f *Field) at(p, k, n int) (int, float64) {
	centre := func(i int) float64 {
		lo, hi := span(i, k, n)
		return float64(lo+hi) / 2
	}
	q := float64(p) + 0.5
	i := min(p/Cell, k-1)
	if q < centre(i) {
		i--
	}
	if i < 0 {
		return 0, 0
	}
	if i >= k-1 {
		return k - 1, 0
	}
	c0, c1 := centre(i), centre(i+1)
	return i, (q - c0) / (c1 - c0)
}

// Rank returns the element of rank k (0-based: v[k] once v is sorted) of
// v, non-negative finite values, 0 <= k < len(v), in O(len): a histogram
// of 4096 bins locates the bin that holds that rank, and only the values
// of that bin are sorted. v is reordered.
func Rank(v []float32, k int) float32 {
	// A comparison rather than max, whose handling of NaN and signed
	// zeros made this pass a chain of dependent steps, a third of
	// Local's time (the values are non-negative and finite, so both give
	// the same top).
	var top float32
	for _, x := range v {
		if x > top {
			top = x
		}
	}
	if top == 0 {
		return 0
	}
	const bins = 4096
	scale := float64(bins) / float64(top)
	bin := func(x float32) int { return min(int(float64(x)*scale), bins-1) }
	var hist [bins]int
	for _, x := range v {
		hist[bin(x)]++
	}
	b, below := 0, 0
	for ; below+hist[b] <= k; b++ {
		below += hist[b]
	}
	in := v[:0]
	for _, x := range v {
		if bin(x) == b {
			in = append(in, x)
		}
	}
	slices.Sort(in)
	return in[k-below]
}
