package segment

import (
	"math"

	"github.com/cleave-seg/cleave/affinity"
)

// SmoothSNR is the contrast-to-noise ratio of a pixel that autoSmooth
// smooths an image up to. SLIC assigns single pixels by their feature
// distance to the superpixel centres, and the graph's weights compare
// single superpixels' means: below a few noise standard deviations of
// contrast, pixels on either side of an object's edge fall into the wrong
// superpixel, superpixels straddle the edges, and the cut stops before
// it reaches the objects. Our choice, on generated scenes of dim nuclei
// in photon-counting noise (pixel contrast about 2 noise standard
// deviations: object F1 0.67 unsmoothed, 0.988 at 5, 0.996 at 7) and
// the other generated kinds, which 7 leaves unchanged or better while
// 10 cost textured cells 0.012 F1 (DEVELOPERS.md, "Measured choices").
const SmoothSNR = 7

// smoothRadii caps the automatic smoothing at the object radius over
// smoothRadii: a disc of radius r blurred by a Gaussian of σ = r/5 keeps
// its centre at 1 - exp(-r²/2σ²) = 1 - exp(-12.5) of its contrast, and
// its edge spreads by a fifth of its radius. Our choice.
const smoothRadii = 5

// autoSmooth is the standard deviation, in pixels, of the Gaussian that
// smooths an image with object scale est before its graph is built, or 0
// for none.
//
// The typical object's contrast-to-noise ratio per pixel, c/s, follows
// from the scale estimate: for a disc of contrast c at its selected
// scale σ the scale-normalized Laplacian peaks at 2c/e, and white pixel
// noise of standard deviation s gives that response a standard deviation
// of s/(σ√(2π)) (Lindeberg 1998; affinity.ObjectScale), so Strength =
// 2√(2π)·σ·(c/s)/e and
//
//	c/s = e·Strength / (2√(2π)·σ).
//
// A unit-sum Gaussian of standard deviation g divides white noise by
// 2√π·g (the integral of its square is 1/(4πg²)) and leaves an object
// much wider than g at its contrast, so smoothing at
//
//	g = SmoothSNR / (2√π·c/s)
//
// brings the pixel ratio up to SmoothSNR. An image already at or above
// SmoothSNR, or with no object scale (ObjectRadius 0), is not smoothed;
// g is at most the radius over smoothRadii.
func autoSmooth(est affinity.ScaleEstimate) float64 {
	r := ObjectRadius(est)
	if r == 0 || !(est.Sigma > 0) || !(est.Strength > 0) {
		return 0
	}
	snr := math.E * est.Strength / (2 * math.Sqrt(2*math.Pi) * est.Sigma)
	if snr >= SmoothSNR {
		return 0
	}
	return math.Min(SmoothSNR/(2*math.Sqrt(math.Pi)*snr), r/smoothRadii)
}

// smoothInput returns in with its feature planes and luminance smoothed
// by a Gaussian of standard deviation sigma pixels
// (affinity.GaussianSmooth); a luminance that is one of the planes stays
// that plane. The caller's planes are not written.
func smoothInput(in Input, sigma float64, workers int) Input {
	w, h := in.Width, in.Height
	planes := make([][]float32, len(in.Planes))
	var lum []float32
	for k, pl := range in.Planes {
		planes[k] = affinity.GaussianSmooth(pl, w, h, sigma, workers)
		if len(pl) > 0 && len(in.Luminance) > 0 && &pl[0] == &in.Luminance[0] {
			lum = planes[k]
		}
	}
	if lum == nil {
		lum = affinity.GaussianSmooth(in.Luminance, w, h, sigma, workers)
	}
	in.Planes, in.Luminance = planes, lum
	return in
}
