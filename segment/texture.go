package segment

import (
	"math"

	"github.com/cleave-seg/cleave/affinity"
)

// Texture inside an object: the grain of chromatin in a stained nucleus,
// bright foci, speckle. Contour cues read texture as boundaries (Malik,
// Belongie, Leung and Shi 2001, "Contour and texture analysis for image
// segmentation", IJCV 43(1), gate their contour cue off inside textured
// regions for that reason). In the object stage a textured nucleus shows
// the same three signs as two touching ones: its half-maximum core has
// necks where dark gaps between foci run across it, its halves' plateaus
// differ where one holds more foci, and its outline dents where a gap
// meets the rim. On a textured object those signs are weighed against
// the texture (objectCrop.textured).
const (
	// textureScale is the standard deviation (pixels) of the Gaussian
	// whose residual fineTexture measures: grain finer than about 3 px
	// on top of the 3x3 means of the object stage. Our choice; grain
	// coarser than this is not seen, and such objects are treated as
	// untextured, as before.
	textureScale = 3.0
	// textureLimit is the fine spread, relative to the plateau, above
	// which an object is taken as textured. Measured by cleave on choice
	// seeds (othershapes.py 1320-1321, Go generators 15020-15022): the
	// textured nuclei of othershapes.py chromatin 0.13-0.26 (tenth
	// percentile 0.15), the smooth, domed, blurred, compressed, lobed
	// and clumped objects of the other kinds at most 0.125 (clusters of
	// nuclei 0.12, cells with nucleoli 0.10, defocused nuclei 0.13 at
	// the most); hollow cells, whose dark centres are structure at the
	// texture scale, reach 0.29. Our choice between the two.
	textureLimit = 0.13
	// textureSpreads is how many fine spreads a seam's dip or a step
	// between two sides' plateaus must exceed on a textured object
	// (twice, as seamSigmas asks of the seam over white noise).
	textureSpreads = 2
	// textureMinPixels is the least number of deep pixels fineTexture
	// needs: several per pixel of the Gaussian's width.
	textureMinPixels = 24
	// textureMaxLow is the largest share of an object's deep pixels
	// below its half-maximum level for its spread to count as texture.
	// Grain on one body leaves the body above half its plateau almost
	// everywhere (othershapes.py chromatin, choice seeds 1320-1323: at
	// most 0.15 of the deep pixels, median 0.01); where a quarter or
	// more fall below it, background or gaps between bodies show
	// through (scikit-image's chessboard_GRAY.png, `--background
	// bright`: an object of dark squares joined at their corners
	// around light ones, 0.50), and the steps between them are no
	// texture. Our choice between the two.
	textureMaxLow = 0.25
)

// fineTexture is the spread of an object's smoothed contrast at scales
// finer than textureScale, over its plateau: the robust standard
// deviation (1.4826 times the median absolute deviation, common
// practice) of
//
//	r = s - (G_ρ * s·m) / (G_ρ * m),  ρ = textureScale,
//
// over the object's pixels at least max(3, D/3) px from its border, where
// s is smooth (the object stage's 3x3 means, crop cw x ch), m the
// object's mask (nodes) and D its largest distance from the border (dist,
// distanceInside). The normalized (masked) Gaussian takes out what is
// smooth at the object's own scale, a domed cell, a clump of several
// domes, light falling off across a field, so the residual is grain; the
// deep pixels keep a blurred rim's curvature out. An object less than
// 2ρ deep (D < 2ρ) is too small for grain at ρ to be told from its own
// shape (a clump of specks of radius 3 px reads as grain). An object
// with fewer than textureMinPixels deep pixels, a share of at least
// textureMaxLow of them below half its plateau (tightenLevel times it),
// or no positive plateau gives 0.
func fineTexture(smooth []float32, nodes []int, dist []float64, cw, ch int, plateau float64) float64 {
	if !(plateau > 0) {
		return 0
	}
	var depth float64
	for _, c := range nodes {
		depth = max(depth, dist[c])
	}
	if depth < 2*textureScale {
		return 0
	}
	inner := math.Max(3, depth/3)
	var deep, low int
	for _, c := range nodes {
		if dist[c] >= inner {
			deep++
			if float64(smooth[c]) < tightenLevel*plateau {
				low++
			}
		}
	}
	if deep < textureMinPixels || float64(low) >= textureMaxLow*float64(deep) {
		return 0
	}
	f := make([]float32, cw*ch)
	m := make([]float32, cw*ch)
	for _, c := range nodes {
		f[c], m[c] = smooth[c], 1
	}
	sf := affinity.GaussianSmooth(f, cw, ch, textureScale, 1)
	sm := affinity.GaussianSmooth(m, cw, ch, textureScale, 1)
	res := make([]float64, 0, deep)
	for _, c := range nodes {
		if dist[c] >= inner {
			res = append(res, float64(smooth[c])-float64(sf[c])/float64(sm[c]))
		}
	}
	md := medianOf(res)
	for i := range res {
		res[i] = math.Abs(res[i] - md)
	}
	return 1.4826 * medianOf(res) / plateau
}

// textured reports whether the object's fine spread (fineTexture) is
// above textureLimit.
func (o *objectCrop) textured() bool { return o.texture > textureLimit }

// medianOf returns the median of v (the mean of the two middle values for
// an even count), reordering v; NaN when v is empty.
func medianOf(v []float64) float64 {
	n := len(v)
	if n == 0 {
		return math.NaN()
	}
	// Selection instead of a sort: kthSmallest leaves the values below
	// the upper middle one before it, so the lower middle one is their
	// largest (the same values a sort gives, in linear time).
	hi := kthSmallest(v, n/2)
	if n%2 == 1 {
		return hi
	}
	lo := v[0]
	for _, x := range v[1 : n/2] {
		lo = max(lo, x)
	}
	return (lo + hi) / 2
}
