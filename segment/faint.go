package segment

import (
	"math"

	"github.com/cleave-seg/cleave/affinity"

	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// faintSigmas is k of the faint-object rule of faintObjects. The usual
// 3 (detectSigmas) assumes Gaussian scores; superpixel scores on mottled
// stains and grainy metal have much heavier tails, where a small k finds
// spurious objects. Our choice, on the project's generated scenes
// (DEVELOPERS.md, "Measured choices", gives the measurement).
const faintSigmas = 7

// faintObjects finds objects the cut left inside the background: a faint
// object of a few superpixels in a large background part is cheap to cut
// off but never lies at an end of its part's Fiedler vector, so the
// recursive bisection stops before it. Each superpixel k (nodeOf maps
// pixels to superpixels 0..nsp-1) gets the score
//
//	s_k = log((Ī_k + c) / (B̄_k + c)),
//
// Ī_k and B̄_k the means of the image and of the background field B over
// its pixels and c the pixel noise (affinity.PixelNoise). Where the
// background stands well clear of the noise s_k is the log of the
// superpixel's contrast Ī/B̄; where B nears zero (a fluorescence field
// with its offset taken off) the plain ratio is noise over noise, and
// c softens it into a difference in noise units, as the asinh
// magnitudes of Lupton, Gunn and Szalay (1999, AJ 118) and the
// generalized logarithm of microarray data do (both cited from memory).
// (The former rule, log of the mean of I/max(B, fieldFloor), divided a
// dark field's noise by the floor and took its logarithm.)
// Without c the scores of a dark field's background superpixels spread
// so wide that a pair of dim nuclei at four times the background stayed
// under the rule (generated nuclei, choice seed 13782). Over the
// superpixels of background-class regions the scores have a robust
// centre m (median) and a spread σ on the objects' side: madScale times
// the median of the deviations s_k - m beyond m on that side (above m
// for a dark background, below for a bright one). For a symmetric
// spread this is the scaled median absolute deviation (common practice);
// a texture whose heavy tail lies on the other side (the dark pores of
// a filter behind bright particles, othershapes.py filtered) no longer
// widens it. It holds both the pixel noise averaged over a superpixel
// and the shading the field leaves. Measured on choice seeds (Go
// generators 15110-15119 and othershapes.py 1360-1369, every kind;
// othershapes.py 1600-1604 and filtered 2000-2003), object F1 / mAP
// against both sides' MAD: filtered 0.909 / 0.652 -> 0.928 / 0.676, haze
// 0.840 / 0.595 -> 0.848 / 0.601, brightfield +0.002, clusters 0.829 /
// 0.579 -> 0.825 / 0.577 (measured while the class stage also took the
// shifted backgroundRatio; with the final rules clusters scores as
// before), the other kinds within 0.004 in mAP (most identical).
// Background superpixels
// beyond m + faintSigmas·σ on the objects' side (above for a dark
// background, below for a bright one) stand out, and each connected
// piece of them (4-neighbours, at least minArea pixels) becomes a new
// region of the object class next to the background. level is the k of
// that rule: faintSigmas against the image's smooth field, or the level
// asked for (Params.Faint) against localField. It returns the updated
// region map, count and classes.
func faintObjects(lum, field []float32, nodeOf []int32, nsp int, regions labelmap.Map, nreg int, cls []int32, bg int32, background Background, level float64, minArea, workers int) (labelmap.Map, int, []int32) {
	w, h, reg := regions.Width, regions.Height, regions.Pix
	// The luminance is in normalized units (0 to 1); a thousandth of
	// that range bounds c from below, as ObjectScale's noise, so that a
	// noiseless image still divides by something.
	c := math.Max(affinity.PixelNoise(lum, w, h), 1e-3)
	sum := make([]float64, nsp)
	bsum := make([]float64, nsp)
	cnt := make([]float64, nsp)
	inBg := make([]bool, nsp)
	// Three independent passes over the superpixel map, run side by
	// side: each adds (or writes) in raster order into its own slices,
	// so the totals are those of one pass, for any worker count.
	parallel.For(3, workers, func(k int) {
		switch k {
		case 0:
			sumLabels(nodeOf, lum, sum, cnt)
		case 1:
			sumLabels(nodeOf, field, bsum, nil)
		default:
			for i := 0; i < len(nodeOf); {
				j := runEnd(nodeOf, i)
				inBg[nodeOf[i]] = cls[reg[j-1]] == bg // the run's last pixel, as the pixel loop left it
				i = j
			}
		}
	})
	score := make([]float64, nsp)
	var bgScores []float64
	for k := range score {
		if cnt[k] > 0 {
			score[k] = math.Log(math.Max((sum[k]/cnt[k]+c)/math.Max(bsum[k]/cnt[k]+c, c), scoreFloor))
			if inBg[k] {
				bgScores = append(bgScores, score[k])
			}
		}
	}
	// Too few background superpixels to judge a spread.
	if len(bgScores) < 16 {
		return regions, nreg, cls
	}
	m := kthSmallest(bgScores, len(bgScores)/2)
	sign, obj := 1.0, bg+1 // dark background: class 0, objects above
	if background == "bright" {
		sign, obj = -1, bg-1
	}
	// The deviations beyond m on the objects' side, written over the
	// scores (read no more).
	side := bgScores[:0]
	for _, v := range bgScores {
		if d := sign * (v - m); d > 0 {
			side = append(side, d)
		}
	}
	if len(side) == 0 { // nothing lies beyond the centre on that side
		return regions, nreg, cls
	}
	t := level * madScale * kthSmallest(side, len(side)/2)
	// The group of each superpixel: 0 where it stands out, else -1 (a
	// superpixel with no pixel is never in inBg).
	group := make([]int32, nsp)
	found := false
	for k := range group {
		group[k] = -1
		if inBg[k] && sign*(score[k]-m) > t {
			group[k] = 0
			found = true
		}
	}
	if !found {
		return regions, nreg, cls
	}
	pieces, n := componentsOfRegions(nodeOf, group, w, h, minArea, workers)
	if n == 0 {
		return regions, nreg, cls
	}
	// The new region map is written over the pieces' map (a plane less
	// than a copy of reg).
	out := pieces
	for i, l := range pieces {
		if l > 0 {
			out[i] = int32(nreg) + l - 1
		} else {
			out[i] = reg[i]
		}
	}
	cls = append(cls, make([]int32, n)...)
	for l := 0; l < n; l++ {
		cls[nreg+l] = obj
	}
	return labelmap.Map{Pix: out, Width: w, Height: h}, nreg + n, cls
}

// localFieldRadii is the width of localField's Gaussian in object radii.
// Our choice, on the project's generated clusters (seeds 15720-15730):
// at 3 radii the robust spread of the background superpixels' scores
// fell from 0.097 to 0.055 (log units) on a scene whose glow varies by
// a factor of two over 64 pixels, which the smooth field (a Gaussian
// of a long side over fieldScale) did not follow.
const localFieldRadii = 3

// localField is the background field of the second faint-object search
// (Params.Faint): the luminance of the pixels of background class bg,
// smoothed by normalized convolution with a Gaussian of localFieldRadii
// object radii (radius, ObjectRadius of the image's scale estimate),
// as smoothFieldGridOfClass. A faint object of the object scale is too
// small to lift a field that wide by much, but shading over a few
// objects' widths, which the smooth field leaves in the scores' spread,
// is taken out. The field is made on smoothFieldGrid's grid of about
// fieldGridCells cells across: where a cell is wider than the Gaussian
// (a frame wider than fieldGridCells times localFieldRadii object
// radii), it follows no detail finer than a cell. Without an object
// scale (radius <= 0) it is the smooth field, a long side over
// fieldScale.
func localField(lum []float32, reg, cls []int32, bg int32, w, h int, radius float64, workers int) []float32 {
	sigma := float64(max(w, h)) / fieldScale
	if radius > 0 {
		sigma = min(sigma, localFieldRadii*radius)
	}
	return smoothFieldGridOfClass(lum, reg, cls, bg, w, h, sigma, workers).plane(nil, workers)
}
