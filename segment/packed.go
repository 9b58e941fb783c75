package segment

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/affinity"

	"github.com/cleave-seg/cleave/segment/internal/unionfind"
)

// BackgroundLines is the Params.Background value for packed objects:
// objects fill the field (grains of a polycrystal, cells of a monolayer,
// powder particles) and the background is the network of thin lines
// between them.
const BackgroundLines Background = "lines"

// Params.Background values for objects on a background: the darkest
// class is the background (objects brighter), or the brightest is.
const (
	BackgroundDark   Background = "dark"
	BackgroundBright Background = "bright"
)

// lineScales are the scales σ (pixels) at which lines are looked for,
// from boundaries of a pixel between grains to shadowed gaps of a few
// pixels between stones. An image's lines are taken at the scale and
// polarity where they stand out most: the largest ratio of the upper
// tail (99.9th percentile) of the ridge strength to its noise, the same
// robust noise the detection threshold uses. On the project's grain
// scenes this selects 1.5 px; on scikit-image's gravel photograph 1 px.
var lineScales = [...]float64{1, affinity.ContourScale, 2, 3}

// lineSigmas is k in "a pixel is on a line when its ridge strength
// exceeds k noise standard deviations of the response", the usual
// detection margin (common practice, as detectSigmas).
const lineSigmas = 3

// noiseFloor is the least noise of the ridge response assumed, in
// normalized units (about a quarter of an 8-bit step): clean or quantized
// images have a zero median response.
const noiseFloor = 1e-3

// packedObjects turns the regions of the cut into objects separated by
// thin lines. Line pixels are found by their ridge strength σ²λ₁
// (affinity.RidgeStrengths; Lindeberg 1998) at the scale and polarity
// selected as lineScales says, so dark and bright lines of widths in range
// are handled: a pixel is on a line when its ridge strength exceeds
// lineSigmas times the response's noise, the scaled median absolute
// response (most pixels lie inside objects; common practice). Two adjacent regions are one object
// unless at least half of their shared border lies within one pixel of a
// line pixel: the cut may split an object where no line runs, and that
// must not make two objects. Line pixels become background, holes inside
// an object are filled, and pieces under minArea pixels go to the
// background. It returns labels 0 (lines) and 1..N in raster order, and
// N.
func packedObjects(lum []float32, w, h int, reg []int32, n, minArea, workers int) ([]int32, int) {
	var (
		ridge []float32
		t     float64
		best  = math.Inf(-1)
	)
	abs := make([]float64, len(lum))
	for _, sigma := range lineScales {
		dark, bright := affinity.RidgeStrengths(lum, w, h, sigma, workers)
		for _, r := range [2][]float32{dark, bright} {
			for i, v := range r {
				abs[i] = math.Abs(float64(v))
			}
			noise := max(madScale*kthSmallest(abs, len(abs)/2), noiseFloor)
			if z := upperTail(r) / noise; z > best {
				best, ridge, t = z, r, lineSigmas*noise
			}
		}
	}
	line := make([]bool, len(ridge))
	for i, v := range ridge {
		line[i] = float64(v) > t
	}
	near := dilateSquare(line, w, h, 1)
	// Count, per adjacent pair, the border pixel pairs and those on a line.
	type tally struct{ all, onLine int }
	pairs := map[uint64]*tally{}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			for _, j := range [2]int{i + 1, i + w} {
				if (j == i+1 && x+1 >= w) || (j == i+w && y+1 >= h) || reg[i] == reg[j] {
					continue
				}
				k := pairKey(min(reg[i], reg[j]), max(reg[i], reg[j]))
				c := pairs[k]
				if c == nil {
					c = &tally{}
					pairs[k] = c
				}
				c.all++
				if near[i] || near[j] {
					c.onLine++
				}
			}
		}
	}
	f := unionfind.New(n)
	keys := make([]uint64, 0, len(pairs))
	for k := range pairs {
		keys = append(keys, k)
	}
	slices.Sort(keys) // union order fixed: labels do not depend on map order
	for _, k := range keys {
		if c := pairs[k]; 2*c.onLine >= c.all {
			continue // a line runs along this border
		}
		f.Union(int32(k>>32), int32(uint32(k)))
	}
	group := make([]int32, len(reg))
	for i, r := range reg {
		group[i] = f.Find(r)
		if line[i] {
			group[i] = -1
		}
	}
	fillHoles(group, w, h)
	return componentsOfGroups(group, w, h, minArea)
}

// upperTail is the 99.9th percentile of v (v is not changed).
func upperTail(v []float32) float64 {
	c := make([]float64, len(v))
	for i, x := range v {
		c[i] = float64(x)
	}
	return kthSmallest(c, min(len(c)-1, len(c)*999/1000))
}
