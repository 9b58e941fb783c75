package scenes

import (
	"math"
	"math/rand/v2"
)

// Illumination and camera: the models the generators share to light a
// field and to record it as digital numbers.

// vignette returns the illumination 1 - (1-corner)(d/d_max)² around an
// optical axis drawn within the central fifth of the field, reaching
// corner at the farthest corner (a common approximation of vignetting).
func vignette(rng *rand.Rand, w, h int, corner float64) []float64 {
	ox := float64(w) * uniform(rng, 0.4, 0.6)
	oy := float64(h) * uniform(rng, 0.4, 0.6)
	dmax := 0.0
	for _, c := range [][2]float64{{0, 0}, {float64(w), 0}, {0, float64(h)}, {float64(w), float64(h)}} {
		dmax = max(dmax, math.Hypot(c[0]-ox, c[1]-oy))
	}
	v := make([]float64, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			d := math.Hypot(float64(x)+0.5-ox, float64(y)+0.5-oy) / dmax
			v[y*w+x] = 1 - (1-corner)*d*d
		}
	}
	return v
}

// contrastFor returns the signal s (in units of the brightness scale,
// electrons = photons·illum·s) whose expected electron count exceeds the
// local background by k times the background's noise standard deviation
// sqrt(photons·illum·bg + read²) (shot plus read noise).
func contrastFor(k, photons, illum, bg, read float64) float64 {
	sd := math.Sqrt(photons*illum*max(bg, 0) + read*read)
	return k * sd / (photons * illum)
}

// glow returns an additive haze field with mean near level: level·(0.4 +
// 1.2·G/max G), G the sum of three isotropic Gaussians with centres in the
// field and σ between 15 % and 35 % of the short side.
func glow(rng *rand.Rand, w, h int, level float64) []float64 {
	type blob struct{ x, y, s, a float64 }
	short := float64(min(w, h))
	var bs [3]blob
	for i := range bs {
		bs[i] = blob{uniform(rng, 0, float64(w)), uniform(rng, 0, float64(h)), short * uniform(rng, 0.15, 0.35), uniform(rng, 0.5, 1)}
	}
	g := make([]float64, w*h)
	gmax := 0.0
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float64
			for _, b := range bs {
				dx, dy := float64(x)+0.5-b.x, float64(y)+0.5-b.y
				s += b.a * math.Exp(-(dx*dx+dy*dy)/(2*b.s*b.s))
			}
			g[y*w+x] = s
			gmax = max(gmax, s)
		}
	}
	for i := range g {
		g[i] = level * (0.4 + 1.2*g[i]/gmax)
	}
	return g
}

// quantize applies camera noise to an expected photoelectron count e per
// pixel and converts to digital numbers. Shot noise is Poisson with variance
// e; it is drawn in its Gaussian approximation N(e, e), good for counts
// above a few tens (common practice). Read noise adds N(0, read²)
// electrons. The code is offset + gain·e′, rounded and clipped to the range
// of the bit depth.
func quantize(rng *rand.Rand, e []float64, depth int, offset, gain, read float64) []uint16 {
	maxCode := float64(int(1)<<depth - 1)
	out := make([]uint16, len(e))
	for i, ev := range e {
		if ev < 0 {
			ev = 0
		}
		noisy := ev + math.Sqrt(ev)*rng.NormFloat64() + read*rng.NormFloat64()
		v := math.Round(offset + gain*noisy)
		if v < 0 {
			v = 0
		}
		if v > maxCode {
			v = maxCode
		}
		out[i] = uint16(v)
	}
	return out
}

// rampAlong returns, for each pixel centre (x+½, y+½) of a w x h field,
// its position t = (l·p - min l·p)/(max l·p - min l·p) in [0, 1] along the
// unit direction l = (lx, ly), the extremes taken over the field's corners:
// 0 at the corner farthest against l, 1 at the one farthest along it.
func rampAlong(w, h int, lx, ly float64) []float64 {
	fw, fh := float64(w), float64(h)
	tmin := math.Min(0, lx*fw) + math.Min(0, ly*fh)
	tmax := math.Max(0, lx*fw) + math.Max(0, ly*fh)
	t := make([]float64, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			t[y*w+x] = (lx*(float64(x)+0.5) + ly*(float64(y)+0.5) - tmin) / (tmax - tmin)
		}
	}
	return t
}

// expose records expected photoelectron counts with the camera of quantize
// at the given bit depth: the offset at 2 % of full scale and the gain
// that puts full electrons at level times full scale above it.
func expose(rng *rand.Rand, electrons []float64, depth int, level, full, read float64) []uint16 {
	maxCode := float64(int(1)<<depth - 1)
	return quantize(rng, electrons, depth, 0.02*maxCode, level*maxCode/full, read)
}

// rakingLight returns the illumination gradient^-(1-t) of light raking in
// from the side the unit direction (lx, ly) points to, t the position
// along it (rampAlong): 1 at the brightest corner, 1/gradient at the
// opposite one.
func rakingLight(w, h int, lx, ly, gradient float64) []float64 {
	ill := rampAlong(w, h, lx, ly)
	for i, t := range ill {
		ill[i] = math.Pow(gradient, -(1 - t))
	}
	return ill
}
