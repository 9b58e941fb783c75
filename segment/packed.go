package segment

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/internal/unionfind"
	"github.com/cleave-seg/cleave/segment/labelmap"
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
// background, as do fragments (withoutFragments). It returns labels 0
// (lines) and 1..N in raster order, and N.
func packedObjects(lum []float32, regions labelmap.Map, n, minArea, workers int) ([]int32, int) {
	w, h, reg := regions.Width, regions.Height, regions.Pix
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
	affinity.AdjacentPairs(w, h, func(i, j int) {
		if reg[i] == reg[j] {
			return
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
	})
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
	lab, k := componentsOfGroups(group, w, h, minArea, workers)
	lab, k = joinUnlined(labelmap.Map{Pix: lab, Width: w, Height: h}, k)
	lab, k = withoutFragments(lab, k)
	return splitEnclosed(labelmap.Map{Pix: lab, Width: w, Height: h}, k, dilateSquare(line, w, h, lineGapRadius), workers)
}

// lineGapRadius is the half-width, in pixels, of the square by which
// line pixels are widened when splitEnclosed looks for the pieces lines
// enclose: a gap of up to 2·lineGapRadius pixels in a detected line
// (where the ridge strength dips below the threshold, at junctions and
// faint stretches) closes, as in the usual closing of edge maps (common
// practice). Our choice (DEVELOPERS.md, "Measured choices", gives the
// measurement).
const lineGapRadius = 2

// splitEnclosed splits each object (labels 1..n, 0 lines) that the
// widened lines wide cut into two or more pieces of at least
// crumbFraction of the median object area (4-connected pixels of the
// object outside wide): each such piece becomes an object, and the rest
// of the object (the band along the widened line, smaller pieces) goes to
// the piece it reaches first growing breadth-first along 4-neighbours
// within the object, so the objects' pixels stay what they were. The cut
// leaves two packed objects in one region when the line between them is
// too faint, or too broken, for its Ncut to pass the limit; a closed line
// around each is the evidence the pair test of packedObjects cannot use,
// since no region border runs along it. Objects are numbered 1..N in
// raster order.
func splitEnclosed(objects labelmap.Map, n int, wide []bool, workers int) ([]int32, int) {
	labels, w, h := objects.Pix, objects.Width, objects.Height
	if n < 1 {
		return labels, n
	}
	area := make([]int, n+1)
	for _, l := range labels {
		area[max(l, 0)]++
	}
	minPiece := max(int(crumbFraction*float64(medianArea(area))), 1)
	group := make([]int32, len(labels))
	for i, l := range labels {
		group[i] = -1
		if l > 0 && !wide[i] {
			group[i] = l
		}
	}
	piece, np := componentsOfGroups(group, w, h, minPiece, workers)
	of := make([]int32, np+1) // the object of each piece
	pieces := make([]int, n+1)
	for i, c := range piece {
		if c > 0 && of[c] == 0 {
			of[c] = labels[i]
			pieces[labels[i]]++
		}
	}
	if !slices.ContainsFunc(pieces, func(c int) bool { return c > 1 }) {
		return labels, n
	}
	// Objects of one piece keep their label; the pieces of split objects
	// take labels n+1, n+2, ... and grow over the rest of their object.
	out := make([]int32, len(labels))
	queue := make([]int, 0, 1024)
	next := int32(n)
	pieceLabel := make([]int32, np+1)
	for i, l := range labels {
		switch {
		case l <= 0:
		case pieces[l] <= 1:
			out[i] = l
		case piece[i] > 0:
			c := piece[i]
			if pieceLabel[c] == 0 {
				next++
				pieceLabel[c] = next
			}
			out[i] = pieceLabel[c]
			queue = append(queue, i)
		}
	}
	for q := 0; q < len(queue); q++ {
		i := queue[q]
		neighbours4(i, w, h, func(j int) {
			if out[j] == 0 && labels[j] == labels[i] {
				out[j] = out[i]
				queue = append(queue, j)
			}
		})
	}
	return withoutLabels(out, int(next), make([]bool, next+1))
}

// medianArea is the median of area[1:], the areas in pixels of objects
// 1..n (area[0] is the background's), the lower middle one for even n; 0
// when there is no object.
func medianArea(area []int) int {
	if len(area) < 2 {
		return 0
	}
	sorted := slices.Clone(area[1:])
	slices.Sort(sorted)
	return sorted[(len(sorted)-1)/2]
}

// withoutFragments sends to the background (the lines) every object of
// a packed field smaller than crumbFraction of the median object area,
// and numbers the rest 1..N in raster order. The objects of a packed
// field are of one order of size; a piece that small is texture that a
// short spurious ridge cut off a corner of its object. A field whose
// objects really differ in size by more than eight times (a powder with
// fines) loses its smallest ones. Our choice (DEVELOPERS.md, "Measured
// choices", gives the measurement).
func withoutFragments(labels []int32, n int) ([]int32, int) {
	if n < 3 {
		return labels, n
	}
	area := make([]int, n+1)
	countLabels(labels, area)
	median := medianArea(area)
	drop := make([]bool, n+1)
	found := false
	for l := 1; l <= n; l++ {
		if float64(area[l]) < crumbFraction*float64(median) {
			drop[l], found = true, true
		}
	}
	if !found {
		return labels, n
	}
	return withoutLabels(labels, n, drop)
}

// joinUnlined merges every object (labels 1..n, 0 lines and background)
// whose outline runs along other objects directly, with no line pixel
// between, for at least half its length into the neighbour it shares the
// longest such stretch with. Objects of a packed field are separated by
// lines, so an object met directly along most of its outline is a piece
// of its neighbour: a sliver the cut made beside a line (whose border
// with the rest of its object lies within a pixel of the line, so the
// pair test above took it for lined) or a speck of texture. The half is
// the pair test's own measure. The image border is not outline. Objects
// are renumbered 1..N in raster order of their first pixel.
func joinUnlined(objects labelmap.Map, n int) ([]int32, int) {
	labels, w, h := objects.Pix, objects.Width, objects.Height
	if n < 2 {
		return labels, n
	}
	outline := make([]int, n+1)
	direct := make([]int, n+1)
	shared := map[uint64]int{}
	affinity.AdjacentPairs(w, h, func(i, j int) {
		a, b := labels[i], labels[j]
		if a == b {
			return
		}
		if a > 0 {
			outline[a]++
		}
		if b > 0 {
			outline[b]++
		}
		if a > 0 && b > 0 {
			direct[a]++
			direct[b]++
			shared[pairKey(min(a, b), max(a, b))]++
		}
	})
	// Each object with most of its outline unlined goes to its longest
	// direct neighbour; ties to the smaller label (deterministic).
	into := make([]int32, n+1)
	longest := make([]int, n+1)
	for k, c := range shared {
		a, b := int32(k>>32), int32(uint32(k))
		for _, e := range [2][2]int32{{a, b}, {b, a}} {
			o, nb := e[0], e[1]
			if 2*direct[o] < outline[o] {
				continue
			}
			if c > longest[o] || c == longest[o] && nb < into[o] {
				into[o], longest[o] = nb, c
			}
		}
	}
	f := unionfind.New(n + 1)
	joined := false
	for o := int32(1); o <= int32(n); o++ {
		if into[o] != 0 {
			f.Union(o, into[o])
			joined = true
		}
	}
	if !joined {
		return labels, n
	}
	out := make([]int32, len(labels))
	for i, l := range labels {
		if l > 0 {
			out[i] = f.Find(l)
		}
	}
	return withoutLabels(out, n, make([]bool, n+1))
}

// upperTail is the 99.9th percentile of v (v is not changed).
func upperTail(v []float32) float64 {
	c := make([]float64, len(v))
	for i, x := range v {
		c[i] = float64(x)
	}
	return kthSmallest(c, min(len(c)-1, len(c)*999/1000))
}
