package segment

import (
	"errors"
	"math"
	"slices"
	"sort"

	"github.com/cleave-seg/cleave/affinity"

	"github.com/cleave-seg/cleave/segment/internal/unionfind"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// contrastOfGrid returns the contrast against the background field B
// that the object stages judge by, per pixel: with r = I/B the
// backgroundRatio, max(r - 1, 0) on a dark background, max(1 - r, 0) on
// a bright one, and |r - 1| with any other background. Objects stand out
// from their background on its named side (the rule backgroundSide
// applies to whole regions in the class stage), so a pixel on the other
// side is background to them: the bright halo that phase contrast draws
// around a dark cell, or a dark rim around a bright particle, would
// otherwise count as contrast of the object it surrounds, widening its
// outline by the halo and joining neighbours through it. B is the field
// of grid g: each value made as interpolateGrid makes it and read at
// once, so the map is the one a field plane (g.plane) would give, bit
// for bit, without that plane. It is written into dst when dst has the
// length of inten (a map the caller no longer needs), else into a new
// slice; rows run on workers goroutines (workers < 1: GOMAXPROCS).
func contrastOfGrid(dst []float64, inten []float32, g *fieldGrid, background Background, workers int) []float64 {
	con := dst
	if len(con) != len(inten) {
		con = make([]float64, len(inten))
	}
	w := g.w
	forGridRows(g.grid, g.gw, g.gh, g.cell, w, g.h, workers, func(y int, top, bot []float64, ty float64) {
		c, in := con[y*w:(y+1)*w], inten[y*w:(y+1)*w]
		// One loop per side, so that the side is not decided per pixel.
		switch background {
		case BackgroundDark:
			for x := range c {
				f := float32(top[x]*(1-ty) + bot[x]*ty)
				c[x] = darkContrast(backgroundRatio(float64(in[x]), float64(f)))
			}
		case BackgroundBright:
			for x := range c {
				f := float32(top[x]*(1-ty) + bot[x]*ty)
				c[x] = brightContrast(backgroundRatio(float64(in[x]), float64(f)))
			}
		default:
			for x := range c {
				f := float32(top[x]*(1-ty) + bot[x]*ty)
				c[x] = math.Abs(backgroundRatio(float64(in[x]), float64(f)) - 1)
			}
		}
	})
	return con
}

// signedContrast is the contrast of a pixel whose ratio to the
// background field is r, on the objects' side of background (see
// contrastOfGrid).
func signedContrast(r float64, background Background) float64 {
	switch background {
	case BackgroundDark:
		return darkContrast(r)
	case BackgroundBright:
		return brightContrast(r)
	}
	return math.Abs(r - 1)
}

// darkContrast is max(r - 1, 0) and brightContrast max(1 - r, 0).
func darkContrast(r float64) float64 { return math.Max(r-1, 0) }

func brightContrast(r float64) float64 { return math.Max(1-r, 0) }

// seamRatio: two adjacent foreground regions stay separate objects when the
// contrast along their shared boundary is below seamRatio times the weaker
// region's contrast (a dim seam between touching objects). Chosen on the
// project's synthetic scenes.
const seamRatio = 0.8

// objectsFrom turns a region map and a class per region into objects: each
// connected piece (4-neighbours) of non-background pixels is an object,
// except that neighbouring pixels of two different regions are joined only
// when the boundary between those regions is not a seam. A seam is a
// boundary whose mean contrast con (contrastOfGrid) is below
// seamRatio times the mean contrast of the weaker of the two regions: the
// dim line between two nuclei pressed together, or the bright ridge between
// two touching pits. Objects under minArea pixels go to the background.
// It returns labels 0 (background) and 1..N in raster order, and N.
func objectsFrom(con []float64, regions labelmap.Map, n int, cls []int32, bgClass int32, minArea, workers int) ([]int32, int) {
	reg, w, h := regions.Pix, regions.Width, regions.Height
	regC := make([]float64, n)
	regA := make([]float64, n)
	// The regions' contrast sums (one pass in raster order) run beside
	// the seam sums (on the workers): independent passes, each giving
	// what it gives alone, for any worker count.
	var seamSum, seamCnt map[uint64]float64
	parallel.For(2, workers, func(k int) {
		if k == 0 {
			sumLabels(reg, con, regC, regA)
			return
		}
		seamSum, seamCnt = seamSums(reg, w, h, con, func(a, b int32) (uint64, bool) {
			if cls[a] == bgClass || cls[b] == bgClass {
				return 0, false
			}
			return pairKey(a, b), true
		}, workers)
	})
	for r := range regC {
		if regA[r] > 0 {
			regC[r] /= regA[r]
		}
	}
	// Union the regions whose shared boundary is not a seam.
	f := unionfind.New(n)
	for k, s := range seamSum {
		a, b := int32(k>>32), int32(uint32(k))
		seam := s / seamCnt[k]
		if seam < seamRatio*math.Min(regC[a], regC[b]) {
			continue
		}
		f.Union(a, b)
	}
	// The group of a region: its set's root, -1 for the background.
	group := make([]int32, n)
	for r := range group {
		group[r] = -1
		if cls[r] != bgClass {
			group[r] = f.Find(int32(r))
		}
	}
	return componentsOfRegions(reg, group, w, h, minArea, workers)
}

// adjacentDiffering calls f(i, j) for the pairs of 4-adjacent pixels of
// lab (w x h) with different values, in the order of
// affinity.AdjacentPairs (raster order of i, the right neighbour before
// the one below), so that sums gathered over the pairs are the same to
// the last bit; pairs of equal values, most of an image, cost no call.
func adjacentDiffering(lab []int32, w, h int, f func(i, j int)) {
	adjacentDifferingRows(lab, w, h, 0, h, f)
}

// seamSums adds con[i] + con[j] to sum[k] and 2 to cnt[k] for the pairs
// of 4-adjacent pixels (i, j) of lab (w x h) with different labels a, b
// that key(a, b) gives a key k (ok) for. The pairs are found on bands of
// rowBand rows on workers goroutines, each band listing its pairs' keys
// and values in adjacentDiffering's order, and the lists are added up in
// band order: every sum adds its values in adjacentDiffering's order,
// the sums of one pass over the pairs bit for bit.
func seamSums(lab []int32, w, h int, con []float64, key func(a, b int32) (uint64, bool), workers int) (sum, cnt map[uint64]float64) {
	type part struct {
		k uint64
		v float64
	}
	nb := (h + rowBand - 1) / rowBand
	parts := make([][]part, nb)
	parallel.Blocks(h, rowBand, workers, func(b, y0, y1 int) {
		var ps []part
		adjacentDifferingRows(lab, w, h, y0, y1, func(i, j int) {
			if k, ok := key(lab[i], lab[j]); ok {
				ps = append(ps, part{k, con[i] + con[j]})
			}
		})
		parts[b] = ps
	})
	sum, cnt = map[uint64]float64{}, map[uint64]float64{}
	for _, ps := range parts {
		for _, p := range ps {
			sum[p.k] += p.v
			cnt[p.k] += 2
		}
	}
	return sum, cnt
}

// adjacentDifferingRows is adjacentDiffering for the pairs whose first
// pixel lies in rows y0 to y1-1.
func adjacentDifferingRows(lab []int32, w, h, y0, y1 int, f func(i, j int)) {
	for y := y0; y < y1; y++ {
		row := lab[y*w : (y+1)*w]
		var below []int32
		if y+1 < h {
			below = lab[(y+1)*w : (y+2)*w]
		}
		for x, a := range row {
			if x+1 < w && row[x+1] != a {
				f(y*w+x, y*w+x+1)
			}
			if below != nil && below[x] != a {
				f(y*w+x, (y+1)*w+x)
			}
		}
	}
}

// componentsOfGroups labels the 4-connected pieces of pixels sharing the
// same group (group < 0 is background) as 1..N in raster order; pieces under
// minArea pixels become background. The classical two-pass labelling
// (Rosenfeld and Pfaltz 1966) on bands of rowBand rows at once: the first
// pass gives each run of equal group in a band's row a provisional label
// and joins it to the runs of the same group above it in the band that it
// touches, each band on its own forest (union by the smaller label, so a
// set's root is its first run); the forests are put end to end in band
// order and the runs that touch across a band's first row joined; the
// second pass numbers the pieces in the order of their roots, which is
// the raster order of their first pixels (provisional labels grow in
// raster order: within a band as the runs are met, across bands by the
// bands' offsets), and writes the numbers. The bands are fixed, so the
// result does not depend on workers; it is the one-band labelling's.
func componentsOfGroups(group []int32, w, h, minArea, workers int) ([]int32, int) {
	return componentsOfGroupsInto(nil, group, w, h, minArea, workers)
}

// componentsOfGroupsInto is componentsOfGroups written into dst when it
// holds w·h values (a plane the caller no longer needs; not group), else
// into a new slice. Every value of dst is written.
func componentsOfGroupsInto(dst, group []int32, w, h, minArea, workers int) ([]int32, int) {
	return groupComponents(dst, func(y int, _ []int32) []int32 { return group[y*w : (y+1)*w] }, w, h, minArea, workers)
}

// componentsOfRegions is componentsOfGroups of the group plane
// table[reg[i]] (reg a region map, table a group per region, < 0 for
// background), without that plane: each band makes the group rows it
// reads from reg as it goes. The result is componentsOfGroups'.
func componentsOfRegions(reg, table []int32, w, h, minArea, workers int) ([]int32, int) {
	return groupComponents(nil, func(y int, buf []int32) []int32 {
		for x, r := range reg[y*w : (y+1)*w] {
			buf[x] = table[r]
		}
		return buf
	}, w, h, minArea, workers)
}

// groupComponents is componentsOfGroups with the group rows given by
// rowOf(y, buf): row y of the group plane, in buf (w values, which rowOf
// may fill and return) or in a slice of its own; two rows asked for one
// after the other with different bufs are both valid until the next call.
func groupComponents(dst []int32, rowOf func(y int, buf []int32) []int32, w, h, minArea, workers int) ([]int32, int) {
	lab := dst
	if len(lab) != w*h {
		lab = make([]int32, w*h)
	}
	nb := (h + rowBand - 1) / rowBand
	forests := make([]unionfind.Forest, nb)
	sizes := make([][]int, nb) // band -> pixels of each provisional label
	parallel.Blocks(h, rowBand, workers, func(b, y0, y1 int) {
		var f unionfind.Forest
		var size []int
		bufs := [2][]int32{make([]int32, w), make([]int32, w)}
		var prev []int32 // the group row above y
		for y := y0; y < y1; y++ {
			row, out := rowOf(y, bufs[y&1]), lab[y*w:(y+1)*w]
			var above, labAbove []int32
			if y > y0 {
				above, labAbove = prev, lab[(y-1)*w:y*w]
			}
			prev = row
			// One provisional label a run of equal groups, written and
			// counted once; the same labels, unions and order as a pass
			// pixel by pixel.
			for x := 0; x < w; {
				g := row[x]
				e := x + 1
				for e < w && row[e] == g {
					e++
				}
				if g < 0 {
					for k := x; k < e; k++ {
						out[k] = -1
					}
					x = e
					continue
				}
				l := int32(len(f))
				f = append(f, l)
				size = append(size, e-x)
				for k := x; k < e; k++ {
					out[k] = l
				}
				// Each run above is joined once, at its first pixel over
				// this run (or this run's first pixel).
				if above != nil {
					if above[x] == g {
						f.Union(l, labAbove[x])
					}
					for k := x + 1; k < e; k++ {
						if above[k] == g && above[k-1] != g {
							f.Union(l, labAbove[k])
						}
					}
				}
				x = e
			}
		}
		forests[b], sizes[b] = f, size
	})
	off := make([]int32, nb+1) // band -> its first provisional label
	for b, f := range forests {
		off[b+1] = off[b] + int32(len(f))
	}
	total := int(off[nb])
	if total == 0 {
		clear(lab) // all background
		return lab, 0
	}
	f := make(unionfind.Forest, 0, total)
	for b, fb := range forests {
		for _, parent := range fb {
			f = append(f, parent+off[b])
		}
	}
	bufs := [2][]int32{make([]int32, w), make([]int32, w)}
	for b := 1; b < nb; b++ {
		y := b * rowBand
		row, above := rowOf(y, bufs[0]), rowOf(y-1, bufs[1])
		out, labAbove := lab[y*w:(y+1)*w], lab[(y-1)*w:y*w]
		for x, g := range row {
			if g >= 0 && above[x] == g && !(x > 0 && row[x-1] == g && above[x-1] == g) {
				f.Union(out[x]+off[b], labAbove[x]+off[b-1])
			}
		}
	}
	root := make([]int32, total)
	size := make([]int, total) // by root
	for b, sb := range sizes {
		for k, c := range sb {
			l := off[b] + int32(k)
			root[l] = f.Find(l)
			size[root[l]] += c
		}
	}
	// num is the piece number of each provisional label, 0 under minArea;
	// a root comes before the other labels of its set.
	num := make([]int32, total)
	n := int32(0)
	for l, r := range root {
		if r != int32(l) {
			num[l] = num[r]
		} else if size[l] >= minArea {
			n++
			num[l] = n
		}
	}
	parallel.Blocks(h, rowBand, workers, func(b, y0, y1 int) {
		o := off[b]
		for i := y0 * w; i < y1*w; i++ {
			if l := lab[i]; l < 0 {
				lab[i] = 0
			} else {
				lab[i] = num[o+l]
			}
		}
	})
	return lab, int(n)
}

// Boundary tightening constants: an object's outline is redrawn where its
// smoothed contrast falls to tightenLevel of the object's plateau
// (halfMaxLevel: the half-maximum outline of its typical interior level,
// common practice for blurred objects such as fluorescent nuclei),
// within tightenReach pixels of its region outline. Half the plateau did
// better than no tightening and than lower levels on the project's
// generated scenes (DEVELOPERS.md, "Measured choices", gives the measurement).
const (
	tightenReach = 3
	tightenLevel = 0.5
)

// tightenObjects redraws object outlines at pixel level. Region outlines
// follow superpixel borders, which keep to strong edges but cut corners
// at faint ones: a faint nucleus comes out as a blocky patch that spills
// into the background and joins its faint neighbour. For each object
// (labels 1..n, 0 background), the contrast (contrastOfGrid) smoothed by a 3x3
// mean is compared with halfMaxLevel of the object's values; the object
// keeps its pixels at or above that level and gains background pixels at
// or above it within tightenReach pixels (chessboard distance), where
// earlier labels win contested pixels; a small object (fineRadius) is
// judged on the contrast itself. A dim seam below the level splits
// a touching pair. The interior of a textured object is judged on a
// Gaussian mean (texturedInterior), and dim objects the region holds
// beside a bright one are outlined at their own half maximum
// (dimMembers; the rest of the object's level is then taken without
// them). The pieces are then relabelled 1..N in raster order; pieces
// under minArea pixels go to the background. The objects' levels run on
// workers goroutines (workers < 1: GOMAXPROCS); the result does not
// depend on their number. The result is written over objects.Pix, which
// the caller must no longer need.
//
// The 3x3 mean is taken only at the pixels looked at (mean3At: the
// objects' own pixels, the background within reach of them, the pieces'
// pixels), not as a plane over the whole image: the same values, a
// frame-sized plane less at the class stage's largest live set.
func tightenObjects(con []float64, objects labelmap.Map, n, minArea, workers int) ([]int32, int) {
	labels, w, h := objects.Pix, objects.Width, objects.Height
	sm := func(i int) float32 { return mean3At(con, w, h, i%w, i/w) }
	boxes, pixels := objectPixels(labels, w, h, n)
	// Each object's median and outline level from its own values, on
	// workers goroutines; the outlines are then drawn in label order,
	// since earlier labels win contested pixels.
	median := make([]float32, n) // of group l-1
	level := make([]float32, n+1)
	inner := make([]interior, n+1)
	dims := make([][]member, n+1)
	fine := make([]bool, n+1)
	parallel.For(n, workers, func(k int) {
		l := k + 1
		px := pixels[l]
		if len(px) == 0 {
			return
		}
		// The 3x3 means of the object's pixels, taken once for the
		// rules below.
		own := make([]float32, len(px))
		for q, i := range px {
			own[q] = sm(i)
		}
		vals := slices.Clone(own)
		slices.Sort(vals)
		level[l] = halfMaxLevel(vals)
		// A small object is outlined on the contrast itself: the 3x3
		// mean would widen its outline (fineRadius).
		if core := len(vals) - sort.Search(len(vals), func(k int) bool { return vals[k] >= level[l] }); float64(core) <= math.Pi*fineRadius*fineRadius {
			fine[l] = true
			for q, i := range px {
				own[q] = float32(con[i])
			}
			copy(vals, own)
			slices.Sort(vals)
			level[l] = halfMaxLevel(vals)
		}
		median[l-1] = vals[(len(vals)-1)/2]
		// The Gaussian mean of the contrast over the object's box, made
		// once and only when a rule below needs it.
		var g gaussCrop
		gauss := func() gaussCrop {
			if g.v == nil {
				g = cropGaussian(con, boxes[l], w, h, textureFill)
			}
			return g
		}
		at := sm // the values own holds, at any pixel
		if fine[l] {
			at = func(i int) float32 { return float32(con[i]) }
		}
		dims[l] = dimMembers(own, gauss, at, px, boxes[l], w, h, level[l], minArea)
		if len(dims[l]) > 0 {
			// The object's own level, without its members' pixels.
			taken := make([]bool, len(px))
			for _, m := range dims[l] {
				for _, k := range m.ks {
					taken[k] = true
				}
			}
			vals = vals[:0]
			for k, v := range own {
				if !taken[k] {
					vals = append(vals, v)
				}
			}
			slices.Sort(vals)
			level[l] = halfMaxLevel(vals)
		}
		inner[l] = texturedInterior(own, gauss, px, boxes[l], w, level[l])
	})
	group := make([]int32, len(labels))
	parallel.Blocks(len(labels), pixelBlock, workers, func(_, lo, hi int) {
		g := group[lo:hi]
		for k, l := range labels[lo:hi] {
			g[k] = l - 1 // -1: background
		}
	})
	// Each object's outline is judged on its box grown by tightenReach:
	// its own pixels below its level leave it (drop), background pixels
	// near it at or above its level join it (take) unless an object before
	// it in label order took them. The values are judged for a chunk of
	// objects at a time on workers goroutines and applied in label order,
	// as one pass over the objects applies them.
	type outlineJudged struct {
		drop, take []int
		own        []bool // the object's pixels in its grown box, when read below
	}
	const chunk = 256
	judged := make([]outlineJudged, chunk)
	for c0 := 1; c0 <= n; c0 += chunk {
		c1 := min(c0+chunk, n+1)
		parallel.For(c1-c0, workers, func(k int) {
			l := c0 + k
			judged[k] = outlineJudged{}
			if len(pixels[l]) == 0 {
				return
			}
			level := level[l]
			r := boxes[l].grown(tightenReach, w, h)
			x0, y0, x1, y1 := r.x0, r.y0, r.x1, r.y1
			bw, bh := x1-x0+1, y1-y0+1
			own := make([]bool, bw*bh)
			for y := y0; y <= y1; y++ {
				for x := x0; x <= x1; x++ {
					own[(y-y0)*bw+x-x0] = labels[y*w+x] == int32(l)
				}
			}
			near := dilateSquare(own, bw, bh, tightenReach)
			// The value judged at (x, y): the 3x3 mean, or for a small
			// object the contrast itself.
			value := func(x, y int) float32 { return mean3At(con, w, h, x, y) }
			if fine[l] {
				value = func(x, y int) float32 { return float32(con[y*w+x]) }
			}
			var j outlineJudged
			for y := y0; y <= y1; y++ {
				for x := x0; x <= x1; x++ {
					k, i := (y-y0)*bw+x-x0, y*w+x
					switch {
					case own[k]:
						if value(x, y) < level {
							j.drop = append(j.drop, i)
						}
					case near[k] && labels[i] == 0:
						if value(x, y) >= level {
							j.take = append(j.take, i)
						}
					}
				}
			}
			if len(inner[l].pix) > 0 && !fine[l] {
				j.own = own
			}
			judged[k] = j
		})
		for l := c0; l < c1; l++ {
			j := &judged[l-c0]
			if len(pixels[l]) == 0 {
				continue
			}
			for _, i := range j.drop {
				group[i] = -1
			}
			for _, i := range j.take {
				if group[i] < 0 {
					group[i] = int32(l - 1)
				}
			}
			r := boxes[l].grown(tightenReach, w, h)
			own := j.own
			// The interior of a textured object is judged on its Gaussian
			// mean (its own pixels only: no other object gains them).
			for q, i := range inner[l].pix {
				group[i] = -1
				if inner[l].keep[q] {
					group[i] = int32(l - 1)
				}
			}
			// Notches that the grain cuts into a textured object's outline
			// are closed (closeGrainNotches).
			if len(inner[l].pix) > 0 && !fine[l] {
				closeGrainNotches(group, own, int32(l-1), r, w)
				fillPockets(group, own, int32(l-1), r, w)
			}
			// Dim members take their pixels as objects of their own (new
			// groups after the n objects').
			for _, m := range dims[l] {
				id := int32(len(median))
				median = append(median, m.median)
				for q, k := range m.ks {
					i := pixels[l][k]
					group[i] = -1
					if m.vals[q] >= m.level {
						group[i] = id
					}
				}
			}
			*j = outlineJudged{}
		}
	}
	fillHoles(group, w, h)
	// labels is read no more: the pieces are written over it.
	out, m := componentsOfGroupsInto(labels, group, w, h, minArea, workers)
	return withoutCrumbs(out, m, group, sm, median, workers)
}

// fineRadius is the radius (pixels) below which tightenObjects outlines
// an object on its contrast instead of the contrast's 3x3 mean: an
// object whose pixels at or above its half-maximum level (on the 3x3
// mean) number at most π·fineRadius². The 3x3 mean spreads a small
// object's peak, and its half-maximum outline then lies outside the
// object. Computed by cleave for a disc of radius R blurred by a Gaussian
// of 1 px, its outline drawn at halfMaxLevel within 3 px of it (area of
// the outline over the disc's, mean of three sub-pixel offsets): on the
// contrast itself 1.15 at R = 3 px, 1.00 at 4 px, 0.99 at 6 px; on the
// 3x3 mean 1.55, 1.20 and 0.99; at a blur of 1.5 px 1.61/1.64, 1.27/1.43
// and 1.02/1.06. Above about 5 px the two outlines agree, and there the
// 3x3 mean's lower noise is worth having. On choice seeds (othershapes.py
// 1360-1369, every kind; Go generators 15110-15119, every kind) object
// F1 / mAP of specks (spots of radius 1.5-4 px) rose from 0.852 / 0.376
// to 0.913 / 0.589, pits 0.965 / 0.752 to 0.970 / 0.828, surface mAP
// 0.481 to 0.522, sizes fell 0.001 / 0.002, the other kinds unchanged;
// at 4 px specks reached 0.899 / 0.548, at 7 px 0.930 / 0.628 but sizes
// lost 0.008 in mAP, haze 0.005 and jpeg 0.004 (noisier outlines of
// larger objects). Specks 1380-1389: 0.845 / 0.373 to 0.911 / 0.579.
const fineRadius = 5

// textureFill is the standard deviation (pixels) of the Gaussian mean on
// which tightenObjects judges the interior of a textured object. Measured
// by cleave on choice seeds (othershapes.py 1360-1369, every kind; Go
// generators 15110-15119, every kind): object F1 / mAP of chromatin 0.914
// / 0.634 with the 3x3 mean alone, 0.944 / 0.686 at 1.5 px (interior 3 px
// deep), 0.951 / 0.699 at 2 px (4 px deep), 0.931 / 0.674 at 3 px (6 px
// deep); at 2 px hollow cells lost 0.005 in mAP, rods 0.003, clusters
// 0.003, the other kinds nothing. Our choice. A Gaussian of 2 px over
// the whole frame instead (not just textured interiors) took chromatin
// to 0.965 / 0.717 but specks from 0.853 to 0.396 and plates from 1.000
// to 0.958: outlines need the 3x3 mean. dimMembers floods the same
// Gaussian mean.
const textureFill = 2.0

// interior lists the pixels deep inside a textured object (frame
// indices) and whether each reaches its outline level (texturedInterior).
type interior struct {
	pix  []int
	keep []bool
}

// texturedInterior decides the interior of a textured object for
// tightenObjects. The 3x3 mean of the contrast follows grain finer than
// the object (the dark gaps between chromatin foci), and where the
// object's plateau is near its outline level that grain crosses the
// level: where the grain runs low in a band across the object, the level
// cuts it in two or into crumbs of foci (othershapes.py chromatin). For
// an object (pixels px, ascending, with 3x3 means own; box b; outline
// level at level) whose fine spread is textured (fineTexture on the
// double 3x3 mean over its region, plateau level/tightenLevel, above
// textureLimit), the pixels at least 2 textureFill deep in its region
// (distanceInside) are judged instead on the Gaussian mean of the
// contrast (gauss, the object's cropGaussian at textureFill), which
// averages the grain out; beyond two standard deviations less than 2.3 %
// of the Gaussian's weight lies outside the region (the one-sided normal
// tail), so the background around the object does not pull that mean
// down. Pixels nearer the outline keep the 3x3 test, which holds
// outlines to the pixel. An untextured object gives the zero interior.
func texturedInterior(own []float32, gauss func() gaussCrop, px []int, b box, w int, level float32) interior {
	tex, nodes, dist := pixelTexture(own, px, b, w, float64(level)/tightenLevel)
	if tex <= textureLimit {
		return interior{}
	}
	g := gauss()
	var in interior
	for k, i := range px {
		if dist[nodes[k]] >= 2*textureFill {
			in.pix = append(in.pix, i)
			in.keep = append(in.keep, g.at(i, w) >= level)
		}
	}
	return in
}

// pixelTexture is fineTexture of the pixels px (frame indices of a
// w-wide frame, within box b) whose 3x3 means are own, over plateau; it
// also returns their crop indices within b and the distance map of
// their mask (distanceInside).
func pixelTexture(own []float32, px []int, b box, w int, plateau float64) (tex float64, nodes []int, dist []float64) {
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	nodes = make([]int, len(px))
	feat := make([]float32, cw*ch)
	for k, i := range px {
		nodes[k] = (i/w-b.y0)*cw + i%w - b.x0
		feat[nodes[k]] = own[k]
	}
	dist = distanceInside(cropMask(nodes, cw*ch), cw, ch)
	return fineTexture(boxMean3(feat, cw, ch), nodes, dist, cw, ch, plateau), nodes, dist
}

// closeGrainNotches closes the outline of a textured object (group g in
// group, a w-wide frame) over box r: a dark gap of its grain that
// reaches the rim cuts a notch into the outline drawn at its level, and
// the re-cut later parts the object at the necks those notches make
// (othershapes.py chromatin 1381 at (430,383): notches 2 px deep, the
// nucleus cut in three). The object's pixels are closed by a square of
// radius textureFill, the grain's scale (dilation then erosion, common
// practice in morphology; Soille 2003, section 4.4), and a pixel the
// closing adds is taken when it lies in the object's region (region,
// over r) and in no other object, unless the pixels it joins are pieces
// the level had parted: the closing fills notches and holes, but never
// bridges a dim seam between two touching objects. Nor does it smooth
// away a neck deep enough for neckPieces (pinched): the object is then
// left as it was.
func closeGrainNotches(group []int32, region []bool, g int32, r box, w int) {
	bw, bh := r.x1-r.x0+1, r.y1-r.y0+1
	kept := make([]bool, bw*bh)
	for y := r.y0; y <= r.y1; y++ {
		for x := r.x0; x <= r.x1; x++ {
			kept[(y-r.y0)*bw+x-r.x0] = group[y*w+x] == g
		}
	}
	const rad = int(textureFill)
	out := dilateSquare(kept, bw, bh, rad)
	for k := range out {
		out[k] = !out[k]
	}
	closed := dilateSquare(out, bw, bh, rad) // the complement of the closing
	// Pieces before (c0) and after (c1) the closing; a piece after that
	// holds two pieces before takes none of the closing's pixels.
	before := make([]int32, bw*bh)
	after := make([]int32, bw*bh)
	add := make([]bool, bw*bh)
	for k := range kept {
		y, x := k/bw+r.y0, k%bw+r.x0
		add[k] = !closed[k] && region[k] && group[y*w+x] < 0
		before[k], after[k] = -1, -1
		if kept[k] {
			before[k], after[k] = 0, 0
		} else if add[k] {
			after[k] = 0
		}
	}
	c0, _ := componentsOfGroups(before, bw, bh, 1, 1)
	c1, n1 := componentsOfGroups(after, bw, bh, 1, 1)
	first := make([]int32, n1+1)
	joins := make([]bool, n1+1)
	for k, p := range c1 {
		if q := c0[k]; q > 0 {
			if first[p] == 0 {
				first[p] = q
			} else if first[p] != q {
				joins[p] = true
			}
		}
	}
	closedMask := slices.Clone(kept)
	added := false
	for k, ok := range add {
		if ok && !joins[c1[k]] {
			closedMask[k], added = true, true
		}
	}
	if !added {
		return
	}
	// A closing also fills the narrow end of the wedge between two
	// touching objects: where it would take away a neck the re-cut
	// splits at on its own, the object is left as the level drew it.
	if pinched(kept, bw, bh) && !pinched(closedMask, bw, bh) {
		return
	}
	for k, in := range closedMask {
		if in && !kept[k] {
			group[(k/bw+r.y0)*w+k%bw+r.x0] = g
		}
	}
}

// pinched reports whether a mask (w x h) has a neck that neckPieces
// splits at without the cut's help: relative depth at least
// refineNeckAlone among those more than neckNoise pixels deep.
func pinched(mask []bool, w, h int) bool {
	nk := deepestNeck(distanceInside(mask, w, h), w, h, neckNoise)
	return nk.peakA >= 0 && nk.depth >= refineNeckAlone
}

// halfMaxLevel returns the level at which an object's outline is drawn:
// tightenLevel times its plateau, the median of the values at or above
// the level. sorted holds the smoothed contrast of the object's region
// pixels in ascending order. The region's own median is a biased plateau
// when much of the region lies on the blurred rim or beyond it: half of
// it put the outlines of thin blurred rods well outside the true ones.
// The level is therefore found as a fixed point: start at half the
// median of all values, then take half the median of the values at or
// above the current level, until it no longer changes. The level only
// rises (the values above a level have a median at least that of all
// values) and is bounded by half the largest value; a blurred step of
// height P contributes its inner half, whose median lies near P for
// objects wider than the blur, so the outline moves to the step's half
// maximum. The iteration stops after halfMaxSteps rounds; in practice it
// settles in a few. (DEVELOPERS.md, "Measured choices", gives the
// measurement.)
func halfMaxLevel(sorted []float32) float32 {
	if len(sorted) == 0 {
		return 0
	}
	level := tightenLevel * sorted[(len(sorted)-1)/2]
	for range halfMaxSteps {
		k, _ := slices.BinarySearch(sorted, level)
		if k == len(sorted) {
			break
		}
		above := sorted[k:]
		next := tightenLevel * above[(len(above)-1)/2]
		if next == level {
			break
		}
		level = next
	}
	return level
}

// halfMaxSteps caps the rounds of halfMaxLevel's fixed-point iteration.
const halfMaxSteps = 16

// crumbFraction and crumbPeak: a piece that tightening cut off an
// object is dropped when it is smaller than crumbFraction of the
// object's largest piece and its smoothed contrast never reaches
// crumbPeak times the object's median. The level (tightenLevel, half the
// median) runs through the noisy rim of a dim object and leaves crumbs
// of a few tens of pixels around it, whose contrast barely clears the
// level; the two halves of a touching pair split by a dim seam are of one
// order of size (a fraction of 1/8 is a radius ratio of 0.35); and a
// small piece that rises well above the level is an object of its own
// that its halo had joined to a larger one (an out-of-focus nucleus
// beside a cluster). On generated scenes (choice seeds 13600-13624, all
// kinds but grains) the small pieces were crumbs of 23-41 px peaking at
// 0.56-0.69 of their object's median and nuclei of 186-252 px peaking at
// 0.87-1.22; crumbPeak lies between, at three halves of the level. Our
// choice (DEVELOPERS.md, "Measured choices").
const (
	crumbFraction = 1.0 / 8
	crumbPeak     = 1.5 * tightenLevel
)

// crumbBlocks is the number of blocks of pixels withoutCrumbs measures
// the pieces in, and crumbPixels the fewest pixels a piece for which it
// measures them on more than one goroutine.
const (
	crumbBlocks = 16
	crumbPixels = 256
)

// withoutCrumbs drops from labels (1..n, from componentsOfGroups over
// group) every piece smaller than crumbFraction of the largest piece of
// the same group whose smoothed contrast sm stays below crumbPeak times
// median[g], the median contrast of its group g, and numbers the rest
// 1..N in raster order, in place. sm(i) is the smoothed contrast at
// pixel i. The pieces' areas, groups (one for all of a piece's pixels)
// and peaks are taken in blocks of pixels on workers goroutines, each
// into tables of its own, which are then joined: counts add, and the
// largest of the tables' peaks is the largest of the pixels', so the
// result is the same for any split. With more than one piece for every
// crumbPixels pixels the tables would outweigh the work, and one
// goroutine takes every pixel.
func withoutCrumbs(labels []int32, n int, group []int32, sm func(i int) float32, median []float32, workers int) ([]int32, int) {
	if n < 2 {
		return labels, n
	}
	type tables struct {
		area []int
		of   []int32
		peak []float32
	}
	newTables := func() tables {
		return tables{make([]int, n+1), make([]int32, n+1), make([]float32, n+1)}
	}
	g := 1
	if n <= len(labels)/crumbPixels {
		g = parallel.Goroutines(crumbBlocks, workers)
	}
	parts := make([]tables, g)
	for k := range parts {
		parts[k] = newTables()
	}
	_ = parallel.ForErr(crumbBlocks, g, func(k, b int) error {
		p := parts[k]
		lo, hi := b*len(labels)/crumbBlocks, (b+1)*len(labels)/crumbBlocks
		for i, l := range labels[lo:hi] {
			if l > 0 {
				p.area[l]++
				p.of[l] = group[lo+i]
				p.peak[l] = max(p.peak[l], sm(lo+i))
			}
		}
		return nil
	})
	t := parts[0]
	for _, p := range parts[1:] {
		for l := 1; l <= n; l++ {
			if p.area[l] > 0 {
				t.area[l] += p.area[l]
				t.of[l] = p.of[l]
				t.peak[l] = max(t.peak[l], p.peak[l])
			}
		}
	}
	area, of, peak := t.area, t.of, t.peak
	largest := map[int32]int{}
	for l := 1; l <= n; l++ {
		largest[of[l]] = max(largest[of[l]], area[l])
	}
	drop := make([]bool, n+1)
	dropped := false
	for l := 1; l <= n; l++ {
		if float64(area[l]) < crumbFraction*float64(largest[of[l]]) && peak[l] < crumbPeak*median[of[l]] {
			drop[l], dropped = true, true
		}
	}
	if !dropped {
		return labels, n
	}
	return relabelInto(labels, labels, n, drop)
}

// fillHoles gives every background piece (group < 0, 4-connected) that
// does not reach the image border and borders a single group to that
// group: the holes a contrast level leaves in grainy or unevenly lit
// objects. Filled masks are common practice for counted objects.
//
// The pieces are found on the runs of background pixels of each row
// (run-length labelling, common practice for binary images): a run joins
// the runs of the row above that it overlaps, so the work is one scan of
// the image plus the runs, and only the pieces that reach no border have
// the pixels around them looked at. A filled piece touches no other
// background piece (they would be one), so the order of the pieces does
// not matter.
func fillHoles(group []int32, w, h int) {
	type run struct{ y, x0, x1 int } // background pixels x0..x1 of row y
	var runs []run
	rowStart := make([]int32, h+1)
	for y := 0; y < h; y++ {
		rowStart[y] = int32(len(runs))
		row := group[y*w : (y+1)*w]
		for x := 0; x < w; {
			if row[x] >= 0 {
				x++
				continue
			}
			x0 := x
			for x < w && row[x] < 0 {
				x++
			}
			runs = append(runs, run{y, x0, x - 1})
		}
	}
	rowStart[h] = int32(len(runs))
	if len(runs) == 0 {
		return
	}
	f := unionfind.New(len(runs))
	for y := 1; y < h; y++ {
		a, aEnd, b, bEnd := rowStart[y-1], rowStart[y], rowStart[y], rowStart[y+1]
		for a < aEnd && b < bEnd {
			ra, rb := runs[a], runs[b]
			if ra.x1 >= rb.x0 && rb.x1 >= ra.x0 {
				f.Union(a, b)
			}
			if ra.x1 < rb.x1 {
				a++
			} else {
				b++
			}
		}
	}
	root := make([]int32, len(runs))
	border := make([]bool, len(runs)) // by root
	for k, r := range runs {
		root[k] = f.Find(int32(k))
		if r.y == 0 || r.y == h-1 || r.x0 == 0 || r.x1 == w-1 {
			border[root[k]] = true
		}
	}
	owner := make([]int32, len(runs)) // by root: -1 none yet, -2 several
	for k := range owner {
		owner[k] = -1
	}
	note := func(q int32, g int32) {
		if g < 0 {
			return
		}
		switch owner[q] {
		case -1:
			owner[q] = g
		case -2, g:
		default:
			owner[q] = -2
		}
	}
	for k, r := range runs {
		q := root[k]
		if border[q] || owner[q] == -2 {
			continue
		}
		// A run of a piece that reaches no border lies inside the image
		// with a group pixel at each end and rows above and below.
		i := r.y * w
		note(q, group[i+r.x0-1])
		note(q, group[i+r.x1+1])
		for x := r.x0; x <= r.x1; x++ {
			note(q, group[i-w+x])
			note(q, group[i+w+x])
		}
	}
	for k, r := range runs {
		q := root[k]
		if border[q] || owner[q] < 0 {
			continue
		}
		row := group[r.y*w : (r.y+1)*w]
		for x := r.x0; x <= r.x1; x++ {
			row[x] = owner[q]
		}
	}
}

// boxMean3 returns the 3x3 mean of v (the window shrunk at the image
// border).
func boxMean3(v []float32, w, h int) []float32 {
	out := make([]float32, len(v))
	boxMean3Rows(v, out, w, h, 0, h)
	return out
}

// boxMean3Rows writes the 3x3 means of rows y0..y1-1 of v, each value
// taken as float32 first, into out. Each
// sum adds the window's values row by row, left to right, as one loop
// over the shrunk window would; pixels whose window lies inside the image
// take the unrolled sum.
func boxMean3Rows[T float32 | float64](v []T, out []float32, w, h, y0, y1 int) {
	for y := y0; y < y1; y++ {
		inner := y > 0 && y < h-1
		for x := 0; x < w; x++ {
			if inner && x > 0 && x < w-1 {
				a, b, c := v[(y-1)*w+x-1:(y-1)*w+x+2], v[y*w+x-1:y*w+x+2], v[(y+1)*w+x-1:(y+1)*w+x+2]
				var s float32
				s += float32(a[0])
				s += float32(a[1])
				s += float32(a[2])
				s += float32(b[0])
				s += float32(b[1])
				s += float32(b[2])
				s += float32(c[0])
				s += float32(c[1])
				s += float32(c[2])
				out[y*w+x] = s / 9
				continue
			}
			var s float32
			var c int
			for yy := max(y-1, 0); yy <= min(y+1, h-1); yy++ {
				for xx := max(x-1, 0); xx <= min(x+1, w-1); xx++ {
					s += float32(v[yy*w+xx])
					c++
				}
			}
			out[y*w+x] = s / float32(c)
		}
	}
}

// mean3At is the 3x3 mean of v at pixel (x, y) of a w x h image, each
// value taken as float32 first, summed row by row and left to right over
// the window shrunk at the border: boxMean3Rows' value at that pixel, to
// the bit (its unrolled inner sum adds in this order too).
func mean3At(v []float64, w, h, x, y int) float32 {
	var s float32
	var c int
	for yy := max(y-1, 0); yy <= min(y+1, h-1); yy++ {
		row := v[yy*w : (yy+1)*w]
		for xx := max(x-1, 0); xx <= min(x+1, w-1); xx++ {
			s += float32(row[xx])
			c++
		}
	}
	return s / float32(c)
}

// dilateSquare returns m dilated by a (2r+1)x(2r+1) square (separable
// running maximum).
func dilateSquare(m []bool, w, h, r int) []bool {
	tmp := make([]bool, len(m))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			for xx := max(x-r, 0); xx <= min(x+r, w-1); xx++ {
				if m[y*w+xx] {
					tmp[y*w+x] = true
					break
				}
			}
		}
	}
	out := make([]bool, len(m))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			for yy := max(y-r, 0); yy <= min(y+r, h-1); yy++ {
				if tmp[yy*w+x] {
					out[y*w+x] = true
					break
				}
			}
		}
	}
	return out
}

// neighbours4 calls f with each 4-neighbour of pixel i inside the image.
func neighbours4(i, w, h int, f func(j int)) {
	x, y := i%w, i/w
	if x > 0 {
		f(i - 1)
	}
	if x+1 < w {
		f(i + 1)
	}
	if y > 0 {
		f(i - w)
	}
	if y+1 < h {
		f(i + w)
	}
}

// box is an inclusive pixel bounding box.
type box struct{ x0, y0, x1, y1 int }

// pixelBox is the bounding box of the pixels px (indices into an image
// w pixels wide; at least one).
func pixelBox(px []int, w int) box {
	b := box{px[0] % w, px[0] / w, px[0] % w, px[0] / w}
	for _, i := range px[1:] {
		x, y := i%w, i/w
		b.x0, b.x1 = min(b.x0, x), max(b.x1, x)
		b.y0, b.y1 = min(b.y0, y), max(b.y1, y)
	}
	return b
}

// grown is b grown by m pixels on every side, clipped to a w x h frame.
func (b box) grown(m, w, h int) box {
	return box{max(b.x0-m, 0), max(b.y0-m, 0), min(b.x1+m, w-1), min(b.y1+m, h-1)}
}

// objectPixels returns, for labels 1..n (0 background), each object's
// bounding box and its pixels in raster order (index 0 unused).
func objectPixels(labels []int32, w, h, n int) ([]box, [][]int) {
	boxes := make([]box, n+1)
	pixels := make([][]int, n+1)
	for i := range boxes {
		boxes[i] = box{w, h, -1, -1}
	}
	for i, l := range labels {
		if l <= 0 {
			continue
		}
		x, y := i%w, i/w
		b := &boxes[l]
		b.x0, b.y0, b.x1, b.y1 = min(b.x0, x), min(b.y0, y), max(b.x1, x), max(b.y1, y)
		pixels[l] = append(pixels[l], i)
	}
	return boxes, pixels
}

// edgeRatio: an object keeps its label only when the median edge energy
// along its outline is at least edgeRatio times the median over the
// whole image. Most pixels of an image lie inside flat areas, so the
// image median measures what noise and texture give; along an outline
// of dozens of pixels the median of noise alone stays close to it, so
// twice that is well clear of noise, while a real object border (a
// step blurred by the optics) stands far above it. On generated scenes
// (haze 9201 and 9203, clusters 9200) true objects had ratios of 2.1 to
// 114; the patches of glow that the classes took for objects had 1.3
// to 1.8.
const edgeRatio = 2

// diffuseScale is σ_c, the coarse scale (pixels) at which edgeless and
// ringObjects measure the edge energy a second time to estimate how wide
// an outline's edge is: four times affinity.ContourScale (1.5 px), wider
// than the blur of an object's border by the optics (a point spread of
// 1-4 px, out of focus included) and narrower than the changes of
// out-of-focus light (a glow, the ghost of an object in another focal
// plane, a vignetting ramp), which take tens of pixels.
const diffuseScale = 4 * affinity.ContourScale

// diffuseRatio is the largest ratio E(σ_c)/E(σ_f) of the
// scale-normalized edge energies (affinity.EdgeEnergy) at diffuseScale
// and at affinity.ContourScale along an outline that still counts as an
// edge. For a step blurred by a Gaussian of width σ_e the normalized
// gradient magnitude at the step is σ·A/√(2π(σ²+σ_e²)) at filter scale
// σ (Lindeberg 1998, edge detection with automatic scale selection), so
//
//	ρ(σ_e) = (σ_c/σ_f) · √(σ_f² + σ_e²) / √(σ_c² + σ_e²),
//
// close to 1 for a sharp step and growing toward σ_c/σ_f = 4 as the
// edge widens. The bound is ρ at σ_e = σ_c, an edge as wide as the
// coarse scale: √((σ_f² + σ_c²)/2)/σ_f ≈ 2.92.
var diffuseRatio = math.Sqrt((affinity.ContourScale*affinity.ContourScale+diffuseScale*diffuseScale)/2) / affinity.ContourScale

// sourceRatio: an object that differs from its background by more than
// this factor (I/B above it on a dark background, below its inverse on
// a bright one) is a source of its own whatever its edge. Shading, the
// out-of-focus light the diffuse test is for, changes the background by
// a fraction of its own level; a diffuse object twice as bright as the
// sky around it (a galaxy in scikit-image's hubble_deep_field.jpg, whose
// large elliptical galaxies have edges as wide as the coarse scale) or
// half as bright as a lit surface is not shading.
const sourceRatio = 2

// coarseEnergy is affinity.EdgeEnergy of lum (w x h) at diffuseScale,
// computed on the image reduced by 2 in each direction (means of 2x2
// blocks, the last row or column repeated when the size is odd) at scale
// diffuseScale/2 and read back at each pixel from its block. The scale
// normalization of EdgeEnergy makes the value independent of the pixel
// size, and the block mean adds a blur of σ 0.5 px, negligible at σ 6
// (√(6² + 0.5²) ≈ 6.02); the reduced image costs an eighth (a quarter of
// the pixels, kernels half as long).
func coarseEnergy(lum []float32, w, h, workers int) []float32 {
	e2, cw := coarseEnergyBlocks(lum, w, h, workers)
	if cw == 0 {
		return e2
	}
	out := make([]float32, w*h)
	forRowBands(h, workers, func(ya, yb int) {
		for y := ya; y < yb; y++ {
			src, dst := e2[(y/2)*cw:(y/2+1)*cw], out[y*w:(y+1)*w]
			for x := range dst {
				dst[x] = src[x/2]
			}
		}
	})
	return out
}

// coarseEnergyBlocks is coarseEnergy before it is read back at each
// pixel: the energy of the 2x2 blocks, (w+1)/2 blocks a row, and that
// row width; or, for images under 4 pixels on a side, the energy of every
// pixel and 0. Pixel (x, y) reads block (x/2, y/2) (edgeTest.coarseAt): a
// quarter of the memory of the pixel map, the same values.
func coarseEnergyBlocks(lum []float32, w, h, workers int) ([]float32, int) {
	if w < 4 || h < 4 {
		return affinity.EdgeEnergy(lum, w, h, diffuseScale, workers), 0
	}
	w2, h2 := (w+1)/2, (h+1)/2
	small := make([]float32, w2*h2)
	forRowBands(h2, workers, func(ya, yb int) {
		for y := ya; y < yb; y++ {
			y0, y1 := 2*y, min(2*y+1, h-1)
			for x := 0; x < w2; x++ {
				x0, x1 := 2*x, min(2*x+1, w-1)
				small[y*w2+x] = (lum[y0*w+x0] + lum[y0*w+x1] + lum[y1*w+x0] + lum[y1*w+x1]) / 4
			}
		}
	})
	return affinity.EdgeEnergy(small, w2, h2, diffuseScale/2, workers), w2
}

// edgeTest decides whether an outline carries an edge: the median of the
// fine edge energy over its pixels reaches floor (edgeFloor), and, when
// coarse (the energy at diffuseScale) is known, the edge is not diffuse:
// median coarse / median fine is at most diffuseRatio, unless the
// object's median contrast con (contrastOfGrid, when set)
// exceeds source (sourceContrast): the object is then a source.
type edgeTest struct {
	w, h int
	// near samples the fine energy within a pixel of each outline pixel
	// (fineNear) instead of at it.
	near         bool
	fine, coarse []float32
	// coarseW is the row width of coarse when it holds the energy of
	// 2x2 blocks (coarseEnergyBlocks); 0 when coarse is a pixel map.
	coarseW int
	floor   float64
	con     []float64
	source  float64
	// workers is the goroutines of edgeless's scan for outline pixels
	// (parallel's rules; the result does not depend on it).
	workers int
}

// sourceContrast is the contrast (contrastOfGrid) of an object sourceRatio
// times brighter than a dark background, or sourceRatio times darker
// than a bright one.
func sourceContrast(background Background) float64 {
	if background == "bright" {
		return 1 - 1.0/sourceRatio
	}
	return sourceRatio - 1
}

// outlineEnergy collects the fine and coarse energies of an object's
// outline pixels and the contrast of all its pixels.
type outlineEnergy struct{ fine, coarse, con []float64 }

// fineNear is the largest fine-scale edge energy within one pixel
// (8-neighbours) of pixel i: an outline drawn at pixel level by a
// contrast level (tightenObjects) can run a pixel beside the step it
// follows, where the energy at the fine scale (1.5 px) has already
// fallen by a third or more.
func (t *edgeTest) fineNear(i int) float64 {
	if !t.near {
		return float64(t.fine[i])
	}
	x, y := i%t.w, i/t.w
	m := t.fine[i]
	for yy := max(y-1, 0); yy <= min(y+1, t.h-1); yy++ {
		for xx := max(x-1, 0); xx <= min(x+1, t.w-1); xx++ {
			m = max(m, t.fine[yy*t.w+xx])
		}
	}
	return float64(m)
}

func (o *outlineEnergy) add(t *edgeTest, i int) {
	o.fine = append(o.fine, t.fineNear(i))
	if t.coarse != nil {
		o.coarse = append(o.coarse, float64(t.coarseAt(i)))
	}
}

func (o *outlineEnergy) addPixel(t *edgeTest, i int) {
	if t.con != nil {
		o.con = append(o.con, t.con[i])
	}
}

// coarseAt is the coarse energy at pixel i.
func (t *edgeTest) coarseAt(i int) float32 {
	if t.coarseW == 0 {
		return t.coarse[i]
	}
	return t.coarse[(i/t.w/2)*t.coarseW+(i%t.w)/2]
}

func (o *outlineEnergy) reset() { o.fine, o.coarse, o.con = o.fine[:0], o.coarse[:0], o.con[:0] }

// edge reports whether the outline o carries an edge (see edgeTest).
func (t *edgeTest) edge(o *outlineEnergy) bool {
	switch t.outlineVerdict(o) {
	case edgeFound:
		return true
	case edgeMissing:
		return false
	}
	return t.sourceEdge(o)
}

// The verdicts of outlineVerdict.
const (
	edgeFound    = iota // the outline carries an edge
	edgeMissing         // it does not
	edgeIfSource        // a diffuse edge: an edge if the object is a source (sourceEdge)
)

// outlineVerdict is edge's answer from the outline's energies alone; a
// diffuse edge (edgeIfSource) is left to the object's median contrast,
// which edge then reads from o.con (sourceEdge).
func (t *edgeTest) outlineVerdict(o *outlineEnergy) int {
	if len(o.fine) == 0 {
		return edgeFound
	}
	f := kthSmallest(o.fine, len(o.fine)/2)
	if f < t.floor {
		return edgeMissing
	}
	if t.coarse == nil || len(o.coarse) == 0 || kthSmallest(o.coarse, len(o.coarse)/2) <= diffuseRatio*f {
		return edgeFound
	}
	return edgeIfSource
}

// sourceEdge is edge's answer for a diffuse edge: whether the median
// contrast of the object's pixels (o.con) stands above t.source.
func (t *edgeTest) sourceEdge(o *outlineEnergy) bool {
	return len(o.con) > 0 && kthSmallest(o.con, len(o.con)/2) > t.source
}

// edgeless marks the objects (labels 1..n, 0 background) with no
// boundary: over their outline pixels, those with a 4-neighbour of
// another label, the median edge energy (EdgeEnergy of the luminance) is
// below the floor (edgeFloor of the energy), or the edge is diffuse and
// the object no source (see edgeTest). A smooth hill of glow or haze that stands above its
// surroundings has no edge anywhere on its outline, or one as wide as
// the glow; an object, however faint, has a sharp one. It returns nil
// when no object is marked.
func edgeless(objects labelmap.Map, n int, t *edgeTest) []bool {
	labels, w, h := objects.Pix, objects.Width, objects.Height
	if n == 0 {
		return nil
	}
	// The outline's energies first; the contrast of every pixel of an
	// object only for the objects whose outline leaves the answer to it
	// (a diffuse edge: edgeIfSource), in a second pass. The median is
	// a value of the same pixels either way.
	outline := make([]outlineEnergy, n+1)
	// The outline pixels and their energies are found on bands of rows
	// on t.workers goroutines and added to their objects band after band,
	// so each object's lists are in raster order, as one pass makes them.
	type outlinePixel struct {
		l            int32
		fine, coarse float64
	}
	nb := min(h, 16)
	bands := make([][]outlinePixel, nb)
	parallel.Blocks(h, (h+nb-1)/nb, t.workers, func(c, ya, yb int) {
		var px []outlinePixel
		for i := ya * w; i < yb*w; i++ {
			if l := labels[i]; l > 0 && onOutline(labels, i, w, h) {
				o := outlinePixel{l: l, fine: t.fineNear(i)}
				if t.coarse != nil {
					o.coarse = float64(t.coarseAt(i))
				}
				px = append(px, o)
			}
		}
		bands[c] = px
	})
	for _, px := range bands {
		for _, o := range px {
			e := &outline[o.l]
			e.fine = append(e.fine, o.fine)
			if t.coarse != nil {
				e.coarse = append(e.coarse, o.coarse)
			}
		}
	}
	verdict := make([]int8, n+1)
	var source []bool // objects whose verdict is edgeIfSource
	for l := 1; l <= n; l++ {
		if len(outline[l].fine) == 0 {
			continue
		}
		verdict[l] = int8(t.outlineVerdict(&outline[l]))
		if verdict[l] == edgeIfSource {
			if source == nil {
				source = make([]bool, n+1)
			}
			source[l] = true
		}
	}
	if source != nil {
		for i, l := range labels {
			if l > 0 && source[l] {
				outline[l].addPixel(t, i)
			}
		}
	}
	var drop []bool
	for l := 1; l <= n; l++ {
		if len(outline[l].fine) == 0 {
			continue
		}
		edge := verdict[l] == edgeFound || verdict[l] == edgeIfSource && t.sourceEdge(&outline[l])
		if !edge {
			if drop == nil {
				drop = make([]bool, n+1)
			}
			drop[l] = true
		}
	}
	return drop
}

// onOutline reports whether pixel i of lab (w x h) has a 4-neighbour
// inside the image with another value.
func onOutline(lab []int32, i, w, h int) bool {
	l, x := lab[i], i%w
	return (x > 0 && lab[i-1] != l) || (x+1 < w && lab[i+1] != l) || (i >= w && lab[i-w] != l) || (i+w < w*h && lab[i+w] != l)
}

// edgeFloor is edgeRatio times the median of the edge energy: the
// element of rank len/2 in ascending order (kthSmallest's). It is
// selected on the float32 values themselves (their order is that of the
// float64 values they convert to exactly), by medianFloat32 on workers.
func edgeFloor(energy []float32, workers int) float64 {
	if len(energy) == 0 {
		return 0
	}
	return edgeRatio * float64(medianFloat32(energy, workers))
}

// selectBlock is the number of values each chunk of medianFloat32's
// histogram passes counts (fixed; the counts are integers, exact in any
// order, so neither the chunks nor the worker count change the result).
const selectBlock = 1 << 18

// medianFloat32 returns the element of rank len(v)/2 of v in ascending
// order, the value kthSmallest(v, len(v)/2) returns, without reordering
// or copying v. When no value is negative, -0 or NaN, the IEEE 754 bit
// patterns of the values order them as their values do (a non-negative
// float32's bits, read as an unsigned integer, grow with it; common
// practice, the layout of IEEE 754-2008 section 3.4), so the rank is
// found by counting: a histogram of the upper 16 bits finds the bucket
// holding the rank, a histogram of the lower 16 bits of that bucket's
// values finds the value, each goroutine counting blocks of v into its
// own histogram and the histograms added up afterwards. Otherwise (a
// negative value, -0 or NaN, where the order of bits and values part)
// it falls back to kthSmallest on a copy.
func medianFloat32(v []float32, workers int) float32 {
	k := len(v) / 2
	nb := (len(v) + selectBlock - 1) / selectBlock
	hist := make([][]uint32, parallel.Goroutines(nb, workers))
	for g := range hist {
		hist[g] = make([]uint32, 1<<16)
	}
	errOrder := errors.New("order of bits and values differ")
	count := func(pass func(h []uint32, x []float32) bool) error {
		return parallel.ForErr(nb, workers, func(g, c int) error {
			if !pass(hist[g], v[c*selectBlock:min(len(v), (c+1)*selectBlock)]) {
				return errOrder
			}
			return nil
		})
	}
	err := count(func(h []uint32, x []float32) bool {
		for _, f := range x {
			b := math.Float32bits(f)
			if b >= 0x7f800001 { // sign bit set (negative, -0) or NaN
				return false
			}
			h[b>>16]++
		}
		return true
	})
	if err != nil {
		return kthSmallest(slices.Clone(v), k)
	}
	top, below := rankBucket(hist, k)
	for _, h := range hist {
		clear(h)
	}
	count(func(h []uint32, x []float32) bool {
		for _, f := range x {
			if b := math.Float32bits(f); b>>16 == top {
				h[b&0xffff]++
			}
		}
		return true
	})
	low, _ := rankBucket(hist, k-below)
	return math.Float32frombits(top<<16 | low)
}

// rankBucket adds up the histograms hs (of equal length) and returns the
// bucket that holds rank k (0-based, in bucket order) with the count of
// the buckets before it.
func rankBucket(hs [][]uint32, k int) (bucket uint32, below int) {
	for b := range hs[0] {
		n := 0
		for _, h := range hs {
			n += int(h[b])
		}
		if below+n > k {
			return uint32(b), below
		}
		below += n
	}
	panic("segment: rank beyond the histograms")
}

// withoutLabels sends the marked objects to the background and numbers
// the rest 1..N in raster order of their first pixel.
func withoutLabels(labels []int32, n int, drop []bool) ([]int32, int) {
	return relabelInto(make([]int32, len(labels)), labels, n, drop)
}

// relabelInto is withoutLabels written into dst, which may be labels itself
// (each pixel's new label depends on its old one only): for maps the
// caller made and no longer needs, a plane less.
func relabelInto(dst, labels []int32, n int, drop []bool) ([]int32, int) {
	id := make([]int32, n+1)
	var m int32
	for i, l := range labels {
		if l <= 0 || drop[l] {
			dst[i] = 0
			continue
		}
		if id[l] == 0 {
			m++
			id[l] = m
		}
		dst[i] = id[l]
	}
	return dst, int(m)
}

// absorbSmall gives every object (labels 1..n, 0 background) under
// minArea pixels to the neighbouring object it shares the most pixel
// edges with, or to the background when it touches none (a re-cut can
// leave a few pixels cut off from both sides of a split), and numbers the
// objects 1..N in raster order of their first pixel. Areas and shared
// edges are counted on bands of rows on workers goroutines and added, so
// the result does not depend on workers.
func absorbSmall(objects labelmap.Map, n, minArea, workers int) ([]int32, int) {
	labels, w, h := objects.Pix, objects.Width, objects.Height
	// The areas, and below the shared borders, are counted on bands of
	// rows on the workers and added: counts, exact in any order.
	nb := max(1, min(h, 8))
	rows := (h + nb - 1) / nb
	bandArea := make([][]int, nb)
	parallel.Blocks(h, rows, workers, func(c, ya, yb int) {
		bandArea[c] = make([]int, n+1)
		countLabels(labels[ya*w:yb*w], bandArea[c])
	})
	area := make([]int, n+1)
	for _, a := range bandArea {
		for l, v := range a {
			area[l] += v
		}
	}
	target := make([]int32, n+1)
	small := false
	for l := 1; l <= n; l++ {
		target[l] = int32(l)
		if area[l] < minArea {
			small = true
		}
	}
	if !small {
		return labels, n
	}
	bandShared := make([]map[uint64]int, nb)
	parallel.Blocks(h, rows, workers, func(c, ya, yb int) {
		shared := map[uint64]int{}
		for i := ya * w; i < yb*w; i++ {
			l := labels[i]
			if l <= 0 || area[l] >= minArea {
				continue
			}
			neighbours4(i, w, h, func(j int) {
				if m := labels[j]; m > 0 && m != l && area[m] >= minArea {
					shared[uint64(l)<<32|uint64(m)]++
				}
			})
		}
		bandShared[c] = shared
	})
	shared := bandShared[0]
	for _, bs := range bandShared[1:] {
		for k, c := range bs {
			shared[k] += c
		}
	}
	best := make([]int, n+1)
	for l := 1; l <= n; l++ {
		if area[l] < minArea {
			target[l] = 0
		}
	}
	for k, c := range shared {
		l, m := int32(k>>32), int32(uint32(k))
		if c > best[l] || (c == best[l] && m < target[l]) {
			best[l], target[l] = c, m
		}
	}
	drop := make([]bool, n+1)
	out := make([]int32, len(labels))
	parallel.Blocks(len(labels), pixelBlock, workers, func(_, lo, hi int) {
		for i, l := range labels[lo:hi] {
			if l > 0 {
				out[lo+i] = target[l]
			}
		}
	})
	return relabelInto(out, out, n, drop)
}

// joinTouching merges objects (labels 1..n, 0 background) that touch
// without a seam between them, by the rule of objectsFrom: the mean
// contrast con over the pixels on both sides of their shared border is
// at least seamRatio times the weaker object's mean contrast, and the
// weaker object's mean is at least tightenLevel of the stronger's: a
// step to below half the brighter object's contrast is a border with no
// dip (a dim object pressed against a bright one, whose blurred edge
// runs over the border; tightenObjects outlined it apart, dimMembers).
// Redrawn
// outlines can bridge the gap between pieces of one object that the cut
// left apart (a thin scratch found superpixel by superpixel), and a
// border without a dip in contrast is no boundary between objects.
// Objects are numbered 1..N in raster order of their first pixel. The
// border sums are gathered on workers goroutines (seamSums). The new
// labels are written over objects.Pix (the caller's map, which it no
// longer needs: a plane less), which is returned.
func joinTouching(con []float64, objects labelmap.Map, n, workers int) ([]int32, int) {
	labels, w, h := objects.Pix, objects.Width, objects.Height
	if n < 2 {
		return labels, n
	}
	mean := make([]float64, n+1)
	cnt := make([]float64, n+1)
	// The objects' sums (one pass in raster order) are added beside the
	// border sums (on workers goroutines): both only read the maps.
	summed := make(chan struct{})
	go func() {
		sumLabels(labels, con, mean, cnt)
		close(summed)
	}()
	seamSum, seamCnt := seamSums(labels, w, h, con, func(a, b int32) (uint64, bool) {
		if a == 0 || b == 0 {
			return 0, false
		}
		return pairKey(min(a, b), max(a, b)), true
	}, workers)
	<-summed
	for l := range mean {
		if cnt[l] > 0 {
			mean[l] /= cnt[l]
		}
	}
	if len(seamSum) == 0 {
		return labels, n
	}
	keys := make([]uint64, 0, len(seamSum))
	for k := range seamSum {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	f := unionfind.New(n + 1)
	for _, k := range keys {
		a, b := int32(k>>32), int32(uint32(k))
		lo, hi := math.Min(mean[a], mean[b]), math.Max(mean[a], mean[b])
		if seamSum[k]/seamCnt[k] >= seamRatio*lo && lo >= tightenLevel*hi {
			f.Union(a, b)
		}
	}
	root := make([]int32, n+1)
	for l := range root {
		root[l] = f.Find(int32(l))
	}
	parallel.Blocks(len(labels), pixelBlock, workers, func(_, lo, hi int) {
		for i, l := range labels[lo:hi] {
			if l > 0 {
				labels[lo+i] = root[l]
			}
		}
	})
	return relabelInto(labels, labels, n, make([]bool, n+1))
}

// fillPockets fills the pockets of a textured object (group g in group,
// a w-wide frame, over box r). A pale textured nucleus with a dark
// centre (chromatin pushed to the rim) is drawn by its level as a ring,
// and where the ring is open on one side fillHoles does not close it;
// the re-cut then cuts the ring into arcs (othershapes.py chromatin 1381
// at (430,382): five pieces). A pocket is a 4-connected set of pixels of
// the object's region (region, over r), of no object, inside the convex
// hull of one piece of the object (pieceHulls) and touching that piece
// alone; it is filled when the piece holds at least pocketEnclosed of
// its border (the pixel edges between the pocket and the rest of the
// box; the box's rim counts as open).
func fillPockets(group []int32, region []bool, g int32, r box, w int) {
	bw, bh := r.x1-r.x0+1, r.y1-r.y0+1
	kept := make([]int32, bw*bh)
	for y := r.y0; y <= r.y1; y++ {
		for x := r.x0; x <= r.x1; x++ {
			k := (y-r.y0)*bw + x - r.x0
			kept[k] = -1
			if group[y*w+x] == g {
				kept[k] = 0
			}
		}
	}
	c0, n0 := componentsOfGroups(kept, bw, bh, 1, 1)
	hull := pieceHulls(c0, n0, bw, bh)
	cand := make([]int32, bw*bh)
	for k := range cand {
		cand[k] = -1
		y, x := k/bw+r.y0, k%bw+r.x0
		if hull[k] > 0 && c0[k] == 0 && region[k] && group[y*w+x] < 0 {
			cand[k] = 0
		}
	}
	c1, n1 := componentsOfGroups(cand, bw, bh, 1, 1)
	piece := make([]int32, n1+1) // the one piece the pocket touches, -1 if several
	enclosed := make([]int, n1+1)
	border := make([]int, n1+1)
	for k, p := range c1 {
		if p == 0 {
			continue
		}
		neighbours4(k, bw, bh, func(j int) {
			if c1[j] == p {
				return
			}
			border[p]++
			if q := c0[j]; q > 0 {
				enclosed[p]++
				if piece[p] == 0 {
					piece[p] = q
				} else if piece[p] != q {
					piece[p] = -1
				}
			}
		})
		if x, y := k%bw, k/bw; x == 0 || y == 0 || x == bw-1 || y == bh-1 {
			border[p]++ // the box's edge is open
		}
	}
	for k, p := range c1 {
		if p > 0 && piece[p] > 0 && hull[k] == piece[p] && float64(enclosed[p]) >= pocketEnclosed*float64(border[p]) {
			group[(k/bw+r.y0)*w+k%bw+r.x0] = g
		}
	}
}

// pocketEnclosed is the share of a pocket's border that its piece must
// hold for fillPockets to fill it. The open ring above is enclosed along
// 0.99 of its border; the wedge between two overlapping nuclei of one
// piece along 0.6-0.8 (othershapes.py chromatin 1363 at (313,290): 0.78),
// and filling it takes away the neck at which the re-cut parts them. On
// choice seeds (othershapes.py 1360-1369 every kind, Go generators
// 15110-15119 every kind) at 0.75 the wedge of chromatin 1363 was filled
// and its two nuclei merged: chromatin F1 0.973 -> 0.972, clusters mAP
// -0.003, hollow mAP -0.002; at 0.9 no label map of those 200 scenes
// changed, and chromatin 1380-1389 rose from 0.966 / 0.742 to 0.972 /
// 0.751 (F1 / mAP; the ring above). Our choice.
const pocketEnclosed = 0.9

// pieceHulls returns, for each pixel of a bw x bh crop, the piece (of the
// n labelled 1..n in lab) whose convex hull (of pixel centres) holds it,
// 0 for none (the last piece listed wins where hulls overlap).
func pieceHulls(lab []int32, n, bw, bh int) []int32 {
	pts := make([][][2]int, n+1)
	for k, l := range lab {
		if l > 0 {
			pts[l] = append(pts[l], [2]int{k % bw, k / bw})
		}
	}
	out := make([]int32, len(lab))
	for l := 1; l <= n; l++ {
		h := convexHull(pts[l])
		if len(h) < 3 {
			continue
		}
		x0, y0, x1, y1 := bw, bh, -1, -1
		for _, p := range h {
			x0, x1, y0, y1 = min(x0, p[0]), max(x1, p[0]), min(y0, p[1]), max(y1, p[1])
		}
		for y := y0; y <= y1; y++ {
			for x := x0; x <= x1; x++ {
				in := true
				for i := range h {
					a, b := h[i], h[(i+1)%len(h)]
					if (b[0]-a[0])*(y-a[1])-(b[1]-a[1])*(x-a[0]) < 0 {
						in = false
						break
					}
				}
				if in {
					out[y*bw+x] = int32(l)
				}
			}
		}
	}
	return out
}
