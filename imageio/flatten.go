package imageio

import (
	"context"
	"math"

	"github.com/cleave-seg/cleave/imageio/noise"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// boxWidths returns the widths of n successive box filters whose combined
// variance is closest to sigma^2 (Kovesi 2010, "Fast almost-Gaussian
// filtering", DICTA): a box of odd width w has variance (w^2-1)/12, so with
// w_l the largest odd width not above sqrt(12 sigma^2/n + 1), m boxes of w_l
// and n-m of w_l+2 where m = round((12 sigma^2 - n w_l^2 - 4 n w_l - 3n) /
// (-4 w_l - 4)).
func boxWidths(sigma float64, n int) []int {
	wIdeal := math.Sqrt(12*sigma*sigma/float64(n) + 1)
	wl := int(math.Floor(wIdeal))
	if wl%2 == 0 {
		wl--
	}
	if wl < 1 {
		wl = 1
	}
	fn, fw := float64(n), float64(wl)
	m := int(math.Round((12*sigma*sigma - fn*fw*fw - 4*fn*fw - 3*fn) / (-4*fw - 4)))
	m = min(max(m, 0), n)
	ws := make([]int, n)
	for i := range ws {
		if i < m {
			ws[i] = wl
		} else {
			ws[i] = wl + 2
		}
	}
	return ws
}

// reflect maps an index of the infinitely extended signal of length n onto
// 0..n-1 by half-sample symmetric reflection (... c b a | a b c ... x y z |
// z y x ...), period 2n.
func reflect(j, n int) int {
	p := 2 * n
	j %= p
	if j < 0 {
		j += p
	}
	if j >= n {
		j = p - 1 - j
	}
	return j
}

// gaussianBlur approximates convolution with a Gaussian of standard
// deviation sigma (pixels) by three successive box filters along x and then
// along y (Wells 1986, "Efficient synthesis of Gaussian filters by cascaded
// uniform filters", IEEE TPAMI 8(2); widths by Kovesi 2010). Each box pass
// is a running sum, O(1) per pixel whatever sigma; edges are extended by
// symmetric reflection. By the central limit theorem three boxes are close
// to the Gaussian (their combined variance matches sigma^2 to within the
// granularity of odd widths). Every output column and row is computed by
// the same sequence of operations for any worker count.
func gaussianBlur(v []float32, w, h int, sigma float64, workers int) []float32 {
	out, _ := gaussianBlurContext(context.Background(), v, w, h, sigma, workers)
	return out
}

// gaussianBlurContext is gaussianBlur that checks ctx before each of its
// six passes and returns ctx's error once it is done.
func gaussianBlurContext(ctx context.Context, v []float32, w, h int, sigma float64, workers int) ([]float32, error) {
	a, b := v, make([]float32, len(v))
	for k, bw := range boxWidths(sigma, 3) {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		boxRows(a, b, w, h, bw/2, workers)
		if k == 0 {
			a = make([]float32, len(v)) // v itself is never written
		}
		a, b = b, a
	}
	for _, bw := range boxWidths(sigma, 3) {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		boxCols(a, b, w, h, bw/2, workers)
		a, b = b, a
	}
	return a, nil
}

// boxRows writes to dst the mean of src over the window [x-r, x+r] of each
// row. Each row is first copied into a buffer padded by r+1 reflected
// samples on both sides so the running sum needs no index arithmetic.
func boxRows(src, dst []float32, w, h, r, workers int) {
	if r == 0 {
		copy(dst, src)
		return
	}
	inv := 1 / float64(2*r+1)
	parallel.Blocks(h, rowBlock, workers, func(_, y0, y1 int) {
		pad := make([]float32, w+2*r+2) // pad[j] = row[reflect(j-r-1)]
		for y := y0; y < y1; y++ {
			row, out := src[y*w:(y+1)*w], dst[y*w:(y+1)*w]
			for j := 0; j <= r; j++ {
				pad[j] = row[reflect(j-r-1, w)]
				pad[w+r+1+j] = row[reflect(w+j, w)]
			}
			copy(pad[r+1:], row)
			var s float64
			for _, v := range pad[1 : 2*r+2] {
				s += float64(v)
			}
			out[0] = float32(s * inv)
			add, sub := pad[2*r+2:], pad[1:]
			for x := 1; x < w; x++ {
				s += float64(add[x-1]) - float64(sub[x-1])
				out[x] = float32(s * inv)
			}
		}
	})
}

// boxCols writes to dst the mean of src over the window [y-r, y+r] of each
// column, sweeping whole rows so memory is read in order.
func boxCols(src, dst []float32, w, h, r, workers int) {
	if r == 0 {
		copy(dst, src)
		return
	}
	inv := 1 / float64(2*r+1)
	parallel.Blocks(w, colBlock, workers, func(_, x0, x1 int) {
		s := make([]float64, x1-x0)
		for j := -r; j <= r; j++ {
			row := src[reflect(j, h)*w:]
			for x := x0; x < x1; x++ {
				s[x-x0] += float64(row[x])
			}
		}
		out := dst[x0:x1]
		for x := range out {
			out[x] = float32(s[x] * inv)
		}
		for y := 1; y < h; y++ {
			add, sub := src[reflect(y+r, h)*w:], src[reflect(y-r-1, h)*w:]
			out := dst[y*w+x0 : y*w+x1]
			for x := x0; x < x1; x++ {
				s[x-x0] += float64(add[x]) - float64(sub[x])
				out[x-x0] = float32(s[x-x0] * inv)
			}
		}
	})
}

// meanOf is the arithmetic mean with per-row partial sums added in row
// order, so the result does not depend on the worker count.
func meanOf(v []float32, w, h, workers int) float64 {
	rows := make([]float64, h)
	parallel.Blocks(h, rowBlock, workers, func(_, y0, y1 int) {
		for y := y0; y < y1; y++ {
			var s float64
			for _, x := range v[y*w : (y+1)*w] {
				s += float64(x)
			}
			rows[y] = s
		}
	})
	var s float64
	for _, r := range rows {
		s += r
	}
	return s / float64(len(v))
}

// flatten removes slow shading from f (w x h, in the image's units). The
// background B is estimated by Gaussian smoothing of f at scale sigma = R
// pixels (common practice for uneven illumination when objects are much
// smaller than R; the rolling ball of Sternberg 1983, IEEE Computer 16(1),
// is a morphological alternative not used here). With m the mean of B:
//
//	divide:   f' = f m / max(B, eps),  eps = 1e-3 m   (flat-field correction, common practice)
//	subtract: f' = (f - B) s / max(s(x), s/maxNoiseGain) + m
//
// where s is the pixel noise of the whole image and s(x) the noise around
// x (noise.Pixel, and noise.Local interpolated between its 32-pixel cells).
// Subtraction takes off an additive glow (haze, out-of-focus light), but
// the glow's photon noise stays: under a glow sixteen times the dark
// field's level the noise is four times as large, and superpixels carved
// from it stood out from the flat level as much as dim nuclei did in the
// dark. Scaling the residual f - B to one noise level everywhere makes a
// contrast of k noise deviations count the same across the field; with
// noise of one level throughout s(x) is s within the estimate's error
// (about 4 % a cell) and this is plain subtraction. Dividing does this by
// itself for noise that grows in proportion to the signal.
// Multiplying by, or adding back, m keeps f' in the image's units, so any
// normalization applies afterwards; eps only guards near-black background.
// An image whose mean is zero stays zero. It stops with ctx's error
// once ctx is done.
// maxNoiseGain bounds the gain s/s(x) of the noise-levelled subtraction:
// where the image is clipped or quantized to a few levels s(x) can be near
// 0, and an unbounded gain would blow up rounding steps. 8 spans a noise
// range of 1 to 8, a range of 1 to 64 in photon level. Our choice.
const maxNoiseGain = 8

func flatten(ctx context.Context, f []float32, w, h int, R float64, mode FlattenMode, workers int) ([]float32, error) {
	bg, err := gaussianBlurContext(ctx, f, w, h, R, workers)
	if err != nil {
		return nil, err
	}
	m := meanOf(bg, w, h, workers)
	out := make([]float32, len(f))
	if mode == FlattenSubtract {
		sg := noise.Pixel(f, w, h)
		if !(sg > 0) || math.IsInf(sg, 0) {
			parallel.Blocks(len(f), pixelBlock, workers, func(_, lo, hi int) {
				for i := lo; i < hi; i++ {
					out[i] = float32(float64(f[i]) - float64(bg[i]) + m)
				}
			})
			return out, nil
		}
		local := noise.Local(f, w, h, sg/maxNoiseGain, workers)
		// Whole rows (the noise is interpolated a row at a time), about
		// a per-pixel pass's chunk of them (chunks.go).
		parallel.Blocks(h, max(1, pixelBlock/w), workers, func(_, y0, y1 int) {
			s := make([]float64, w)
			for y := y0; y < y1; y++ {
				local.Smooth(y, s)
				for x, i := 0, y*w; x < w; x, i = x+1, i+1 {
					out[i] = float32((float64(f[i])-float64(bg[i]))*sg/s[x] + m)
				}
			}
		})
		return out, nil
	}
	if !(m > 0) {
		return out, nil
	}
	eps := 1e-3 * m
	parallel.Blocks(len(f), pixelBlock, workers, func(_, lo, hi int) {
		for i := lo; i < hi; i++ {
			out[i] = float32(float64(f[i]) * m / max(float64(bg[i]), eps))
		}
	})
	return out, nil
}
