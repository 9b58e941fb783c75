package scenes

import (
	"math"
	"math/rand/v2"
)

// gaussKernel returns the normalized 1-D Gaussian exp(-x²/2σ²) sampled at
// integer offsets -r..r with r = ceil(3σ).
func gaussKernel(sigma float64) []float64 {
	r := int(math.Ceil(3 * sigma))
	if r < 1 {
		r = 1
	}
	k := make([]float64, 2*r+1)
	var sum float64
	for i := range k {
		x := float64(i - r)
		k[i] = math.Exp(-x * x / (2 * sigma * sigma))
		sum += k[i]
	}
	for i := range k {
		k[i] /= sum
	}
	return k
}

// blur returns f convolved with a separable Gaussian of standard deviation
// sigma pixels (blurAxes with σx = σy = sigma); sigma <= 0 returns a copy.
func blur(f []float64, w, h int, sigma float64) []float64 {
	if sigma <= 0 {
		out := make([]float64, len(f))
		copy(out, f)
		return out
	}
	return blurAxes(f, w, h, sigma, sigma)
}

// blurAxes returns f (w x h, row-major) convolved with a Gaussian of
// standard deviation sx along rows and sy along columns (gaussKernel),
// replicating edge pixels beyond the border. Sums run in a fixed order, so
// the result is deterministic.
func blurAxes(f []float64, w, h int, sx, sy float64) []float64 {
	tmp := make([]float64, len(f))
	kx := gaussKernel(sx)
	rx := len(kx) / 2
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float64
			for i, kv := range kx {
				s += kv * f[y*w+min(max(x+i-rx, 0), w-1)]
			}
			tmp[y*w+x] = s
		}
	}
	ky := gaussKernel(sy)
	ry := len(ky) / 2
	out := make([]float64, len(f))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float64
			for i, kv := range ky {
				s += kv * tmp[min(max(y+i-ry, 0), h-1)*w+x]
			}
			out[y*w+x] = s
		}
	}
	return out
}

// smoothNoise returns w·h draws of white Gaussian noise (row-major) blurred
// by sigma and standardized to zero mean and unit standard deviation.
func smoothNoise(rng *rand.Rand, w, h int, sigma float64) []float64 {
	f := make([]float64, w*h)
	for i := range f {
		f[i] = rng.NormFloat64()
	}
	f = blur(f, w, h, sigma)
	standardize(f)
	return f
}

// standardize rescales f in place to (f - μ)/σ, μ its mean and σ its
// population standard deviation sqrt(Σ(f-μ)²/n), both summed in index
// order; a constant f is only shifted (σ taken as 1).
func standardize(f []float64) {
	var mean, sq float64
	for _, v := range f {
		mean += v
	}
	mean /= float64(len(f))
	for _, v := range f {
		sq += (v - mean) * (v - mean)
	}
	sd := math.Sqrt(sq / float64(len(f)))
	if sd == 0 {
		sd = 1
	}
	for i := range f {
		f[i] = (f[i] - mean) / sd
	}
}

// sampleBilinear reads f (w x h) at the real position (x, y) in pixel
// units (pixel centres at integer + 0.5), clamping to the edges.
func sampleBilinear(f []float64, w, h int, x, y float64) float64 {
	x, y = x-0.5, y-0.5
	x = min(max(x, 0), float64(w-1))
	y = min(max(y, 0), float64(h-1))
	x0, y0 := int(x), int(y)
	x1, y1 := min(x0+1, w-1), min(y0+1, h-1)
	fx, fy := x-float64(x0), y-float64(y0)
	a := f[y0*w+x0]*(1-fx) + f[y0*w+x1]*fx
	b := f[y1*w+x0]*(1-fx) + f[y1*w+x1]*fx
	return a*(1-fy) + b*fy
}
