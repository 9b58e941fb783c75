package segment

import (
	"context"
	"math"
	"slices"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// Object refinement constants. An object is re-cut on its own pixel graph
// with a small neighbourhood; the feature is the object's contrast against
// the background field, scaled so that the object's bright core is about 1,
// which makes one σ_I serve dim and bright objects alike. Chosen on the
// project's synthetic scenes (see the README for how they were measured).
const (
	refineRadius  = 2
	refineSigmaX  = 2.0
	refineSigmaI  = 0.12
	refinePercent = 0.9  // quantile of contrast that is scaled to 1
	refineSeam    = 0.98 // a seam's contrast is below this fraction of its sides'
	// refineSolidity: objects whose solidity (area over convex hull area)
	// is above this are taken as single and not re-cut. Touching pairs have
	// a waist, and so a lower solidity (two touching discs: 2π/(π+4) ≈
	// 0.88); a digitized ellipse is close to 1.
	refineSolidity = 0.93
	// refineElongation: objects whose inertia ratio (elongation) is above
	// this are taken as single, however bent: scratches and fibres. Two
	// touching discs have 5, a row of three 11.7; a scratch 3 px wide and
	// 60 px long has 400.
	refineElongation = 25
	// refineArea: objects smaller than this many pixels may be split at
	// an Ncut up to sqrt(refineArea/area) times the limit. The Ncut of a
	// cut across a waist scales as 1/size (the cut grows with the radius,
	// each side's association with the area), so one fixed limit would
	// keep small touching pairs together (DEVELOPERS.md, "Measured choices", gives the measurement).
	refineArea = 800
	// refineNeck: a shape whose distance map is pinched by at least this
	// relative depth (see neckDepth) holds two objects. Two discs of
	// radius R whose centres are s apart have depth 1 - sqrt(1 - (s/2R)²):
	// 0.134 when each centre lies just outside the other disc, 0.03 at
	// s = 0.49 R. The geometric line 0.134 kept heavily overlapping
	// clusters whole; 0.03 splits more of them without splitting single
	// nuclei (DEVELOPERS.md, "Measured choices", gives the measurement).
	refineNeck = 0.03
	// refineNeckNcut bounds the Ncut of a split through a neck (on the
	// shape-weighted graph, see shapeWeights); the neck test decides.
	refineNeckNcut = 0.5
	// RefineMaxNcut is the largest Ncut at which an object (of at least
	// refineArea pixels) is split into touching objects.
	RefineMaxNcut = 0.03
)

// recutSigmaI is the intensity scale σ_I of one object's re-cut graph
// (affinities exp(-(Δf/σ_I)²) on its scaled contrast f): refineSigmaI, or
// the root mean square difference of f between pixels refineRadius apart
// (the graph's reach) where that is wider, sqrt(2γ(refineRadius)) with γ
// the semivariogram, 2γ(h) = E[(f(x+h) - f(x))²] (Matheron 1963; Cressie
// 1993, "Statistics for Spatial Data", ch. 2), estimated over the
// horizontal and vertical pixel pairs h apart whose both pixels lie more
// than a pixel inside the object (nodes: its crop pixels, dist their
// distanceInside, crop cw x ch), away from the rim's slope. Setting σ_I
// to the spread of the feature within a region is common practice for
// Gaussian affinities. A typical pair of pixels of one object is then
// linked with a weight of at least about e^-1, whatever the object's
// texture: its dark bands (textured chromatin) or the shot noise of a
// faint exposure no longer make cheap paths for the normalized cut, and
// a seam must be darker than the object's own variation at that reach
// to weaken the links across it. For white noise of deviation σ the
// root mean square difference is √2 σ, so σ_I grows only on objects
// whose noise exceeds refineSigmaI/√2 (0.085) of their bright core. With
// fewer than 2 refineRadius such pairs it returns refineSigmaI.
// DEVELOPERS.md, "Measured choices", gives the measurement.
func recutSigmaI(feat []float32, nodes []int, dist []float64, cw, ch int) float64 {
	const h = refineRadius
	var s float64
	var n int
	for _, c := range nodes {
		if dist[c] <= 1 {
			continue
		}
		x, y := c%cw, c/cw
		if x+h < cw && dist[c+h] > 1 {
			d := float64(feat[c+h] - feat[c])
			s += d * d
			n++
		}
		if y+h < ch && dist[c+h*cw] > 1 {
			d := float64(feat[c+h*cw] - feat[c])
			s += d * d
			n++
		}
	}
	if n < 2*h {
		return refineSigmaI
	}
	return math.Max(refineSigmaI, math.Sqrt(s/float64(n)))
}

// refineObjects splits touching objects: each object's pixels form a pixel
// graph (Shi and Malik 2000) over the contrast against the background
// field (contrastOfGrid), scaled by the object's own refinePercent
// quantile, and that graph is cut recursively in two while the best cut
// has Ncut <= maxNcut (raised for small objects, see refineArea), both
// sides hold at least minPart pixels. A dim seam between two objects pressed together gives
// weak affinities across it and so a cheap cut; a single object has none.
// A split must also pass objectCrop.seam: the cut must run along a dip in
// contrast, so thin scratches and elongated objects are not cut across.
// In a shape with a neck, a split through the neck is accepted too, and
// a region the cut left with a deep neck is split there (neckPieces),
// unless necks is false (objects whose lobes are parts of one object).
// It returns the new labels (1..N, numbered in raster order of their first
// pixel), N and the Ncut of every accepted split.
func refineObjects(ctx context.Context, con []float64, objects labelmap.Map, n int, maxNcut float64, minPart int, necks bool, radius float64, workers int, seed uint64) (refined, error) {
	labels, w, h := objects.Pix, objects.Width, objects.Height
	boxes, pixels := objectPixels(labels, w, h, n)
	results := make([]refineResult, n+1)
	one := func(l int) {
		px := pixels[l]
		contrast := make([]float64, len(px))
		for k, i := range px {
			contrast[k] = con[i]
		}
		if len(px) <= refineMaxNodes {
			results[l] = refineOne(ctx, px, w, boxes[l], contrast, maxNcut, minPart, necks, radius, seed)
			return
		}
		if necks {
			if r, ok := refineByNecks(ctx, px, w, boxes[l], contrast, maxNcut, minPart, radius, seed); ok {
				results[l] = r
				return
			}
		}
		results[l] = refineCoarse(ctx, px, w, boxes[l], contrast, maxNcut, minPart, necks, radius, seed)
	}
	// Objects are independent: refine them in parallel, one goroutine per
	// object at a time, and assemble in label order (deterministic). The
	// largest are handed out first (longest processing time first, Graham
	// 1969): a large object last in label order would otherwise run alone
	// on one core after the others are done.
	order := make([]int, n)
	for k := range order {
		order[k] = k + 1
	}
	slices.SortStableFunc(order, func(a, b int) int { return len(pixels[b]) - len(pixels[a]) })
	parallel.For(n, workers, func(k int) { one(order[k]) })
	if err := ctx.Err(); err != nil {
		return refined{}, err
	}
	out := make([]int32, len(labels))
	next := int32(0)
	var splits []float64
	var short shortfall
	for l := 1; l <= n; l++ {
		r := results[l]
		if r.err != nil {
			return refined{}, r.err
		}
		splits = append(splits, r.splits...)
		short.merge(r.short)
		for k, i := range pixels[l] {
			v := int32(0)
			if r.region != nil {
				v = r.region[k]
			}
			out[i] = next + 1 + v
		}
		next += int32(r.regions)
	}
	// Renumber in raster order of the first pixel so labels do not depend
	// on the order objects were refined in.
	id := make([]int32, next+1)
	var m int32
	for i, l := range out {
		if l > 0 && id[l] == 0 {
			m++
			id[l] = m
		}
		out[i] = id[l]
	}
	return refined{labels: out, n: int(m), splits: splits, short: short}, nil
}

// refined is the result of refineObjects.
type refined struct {
	labels []int32 // objects 1..n on background 0
	n      int
	splits []float64 // Ncut of every accepted split
	short  shortfall // the worst eigensolve above its target
}

// objectCrop is one object as refineOne re-cuts it: its scaled contrast
// feat on a cw x ch crop of its bounding box (0 outside the object), the
// crop pixel of each of its pixels (nodes, ascending), and the standard
// deviation of feat's noise (cropNoise). The split tests below take a
// part of the object (part indexes nodes) and its two sides (inA marks
// side A by position in part).
type objectCrop struct {
	feat   []float32
	cw, ch int
	nodes  []int
	noise  float64
	whole  *objectShape // the whole object's distance maps, when known
	// parts holds the distance maps of the parts of the object's cut
	// computed so far (nil: computed each time they are asked for).
	parts *partMaps
	// plateau is the object's plateau of scaled contrast (halfMaxLevel
	// over tightenLevel) and texture its fine spread over the plateau
	// (fineTexture); both 0 when unknown.
	plateau, texture float64
}

// objectShape holds the distance maps of a whole object (mask, crop
// cw x ch) and their deepest necks, each computed once: refineOne tests
// them before the cut, and neckPieces again when the cut left the object
// whole.
type objectShape struct {
	mask      []bool
	smooth    []float32
	cw, ch    int
	dist      []float64 // distanceInside of mask
	distNecks []neck    // deepestNecks of dist, floors 0 and neckNoise
	core      []float64 // coreDistance
	coreNecks []neck
}

// outline returns the object's distance map and its deepest neck
// (deepestNeck) with no floor and with the floor neckNoise.
func (s *objectShape) outline() ([]float64, neck, neck) {
	if s.distNecks == nil {
		s.distNecks = deepestNecks(s.dist, s.cw, s.ch, 0, neckNoise)
	}
	return s.dist, s.distNecks[0], s.distNecks[1]
}

// halfMax returns the distance map of the object's half-maximum core
// (coreDistance) and its deepest neck with no floor and with the floor
// neckNoise.
func (s *objectShape) halfMax() ([]float64, neck, neck) {
	if s.core == nil {
		s.core = coreDistance(s.smooth, s.mask, s.dist, s.cw, s.ch)
	}
	if s.coreNecks == nil {
		s.coreNecks = deepestNecks(s.core, s.cw, s.ch, 0, neckNoise)
	}
	return s.core, s.coreNecks[0], s.coreNecks[1]
}

// cropNoise estimates the standard deviation of the pixel noise of feat
// over the listed crop pixels: the residual r = v - m of each pixel
// whose 3x3 neighbourhood lies inside the object, m the 3x3 mean, has
// variance 8/9 σ² for white noise, and σ is taken from the median of
// |r| (the median absolute deviation, 1.4826 for a Gaussian; Hampel
// 1974). Smooth shading and blurred edges add little to a 3x3 residual.
// mean3 is boxMean3 of feat.
func cropNoise(feat, mean3 []float32, crop []int, cw, ch int) float64 {
	in := cropMask(crop, cw*ch)
	var r []float64
	for _, c := range crop {
		x, y := c%cw, c/cw
		inside := x > 0 && y > 0 && x < cw-1 && y < ch-1
		for dy := -1; inside && dy <= 1; dy++ {
			for dx := -1; dx <= 1; dx++ {
				if !in[c+dy*cw+dx] {
					inside = false
					break
				}
			}
		}
		if inside {
			r = append(r, math.Abs(float64(feat[c]-mean3[c])))
		}
	}
	if len(r) == 0 {
		return 0
	}
	return madScale * kthSmallest(r, len(r)/2) * math.Sqrt(9.0/8)
}

// seamSigmas: a seam's dip below the dimmer side must exceed this many
// standard errors of the seam's mean (σ/√n over its n pixels), so that
// noise along a cut across a uniform object is not taken for a seam. On
// generated rods (othershapes.py, choice seeds 900-903) a cut across a
// single rod passed the 2 % test on noise alone; two standard errors
// (a one-sided test at about 2.3 %, common practice) kept the rods
// whole (F1 0.939 -> 0.967) at a cost of 0.004 on clusters, three
// gave the rods nothing more and clusters 0.012 less.
const seamSigmas = 2

// seam approves a split of an object only where the cut runs along a
// seam: the mean scaled contrast of the pixels next to the cut (with a
// 4-neighbour on the other side) must be below refineSeam times the mean
// contrast of the dimmer side, by more than seamSigmas standard errors.
// A thin scratch cut across, or an elongated object cut at its middle,
// has no such dip and stays whole.
func (o *objectCrop) seam(part []int, inA []bool) bool {
	crop, side := cutSides(o.nodes, o.cw*o.ch, part, inA)
	var sum, cnt [3]float64
	var seam, seamN float64
	for _, c := range crop { // in node order: sums are deterministic
		v := float64(o.feat[c])
		a := side[c]
		sum[a] += v
		cnt[a]++
		if onCut(side, o.cw, o.ch, c) {
			seam += v
			seamN++
		}
	}
	if seamN == 0 || cnt[1] == 0 || cnt[2] == 0 {
		return false
	}
	dim, mean := math.Min(sum[1]/cnt[1], sum[2]/cnt[2]), seam/seamN
	if o.textured() && dim-mean <= textureSpreads*o.texture*o.plateau {
		return false
	}
	return mean < refineSeam*dim && dim-mean > seamSigmas*o.noise/math.Sqrt(seamN)
}

// evident reports whether a split through a neck drop pixels deep
// (absolute depth, cutNeck or deepestNeck) separates two objects on the
// evidence it has: a neck deeper than digitization makes (neckNoise)
// does by itself; a shallower one may be the ridge of a rod and needs a
// seam in contrast (seam), sides of different contrast (differ) or a cut
// between concavities of the outline (concaveCut) as well.
func (o *objectCrop) evident(drop float64, part []int, inA []bool) bool {
	return drop > neckNoise || o.seam(part, inA) || o.differ(part, inA) || o.concave(part, inA)
}

// coreEvident is evident for a neck of the half-maximum core
// (coreDistance): the core's neck comes from a dip in contrast, so a seam
// along it is no further evidence; it needs depth, a step in contrast or
// concavities. The core's outline is a level set of the noisy contrast
// and wanders by about a pixel more than the object's outline, so its
// neck must be deeper than concaveNoise, as a concavity of a blurred
// outline must: a dark inclusion in a single cell (a nucleolus) dents
// its core by up to about a pixel (othershapes.py bodies, choice seed
// 1104: an isolated cell cut in two through its nucleolus by a core neck
// of just over 1 px, which passed the former floor neckNoise).
func (o *objectCrop) coreEvident(drop float64, part []int, inA []bool) bool {
	return drop > concaveNoise || o.differ(part, inA) || o.concave(part, inA)
}

// concaveNoise is the least convexity defect (cutConcavity) taken for a
// concavity between two objects: twice the largest that digitizing a
// convex shape leaves (neckNoise), since the outline of a blurred object
// in noise also wanders by about a pixel (false concavities at the ends
// of cuts across single rods measured 1.2-1.3 px, true ones between
// touching nuclei 2.5 px and more; generated scenes, choice seeds).
const concaveNoise = 2 * neckNoise

// cutConcavity is how deep the two ends of a split's cut lie in
// concavities of the part's outline (arguments as cutSides): for each
// pixel on the cut (onCut) that is also on the outline (a 4-neighbour
// outside the part), its distance from the convex hull of the part's
// pixel centres (its convexity defect); the deepest such pixel is one
// end, the deepest more than two pixels from it the other. It returns
// the two defects, shallower first (zeros when the cut meets no
// outline). Concave points at both ends of a cut are the classical cue
// for splitting a clump (common practice). Digitizing a convex shape
// leaves defects of at most about a pixel (measured by cleave on 3,000
// digitized ellipses and capsules, radius 3-25 px: largest 0.97 px, 99th
// percentile 0.95 px), the scale of neckNoise.
func cutConcavity(nodes []int, cw, ch int, part []int, inA []bool) (shallow, deep float64) {
	crop, side := cutSides(nodes, cw*ch, part, inA)
	// Hull of the pixel centres: the leftmost and rightmost pixel of each
	// row are enough.
	lo, hi := make([]int, ch), make([]int, ch)
	for y := range lo {
		lo[y], hi[y] = cw, -1
	}
	for _, c := range crop {
		x, y := c%cw, c/cw
		lo[y], hi[y] = min(lo[y], x), max(hi[y], x)
	}
	var pts [][2]int
	for y := range lo {
		if hi[y] >= 0 {
			pts = append(pts, [2]int{lo[y], y}, [2]int{hi[y], y})
		}
	}
	hull := convexHull(pts)
	if len(hull) < 3 {
		return 0, 0
	}
	defect := func(c int) float64 {
		x, y := float64(c%cw), float64(c/cw)
		best := math.Inf(1)
		for i := range hull {
			p, q := hull[i], hull[(i+1)%len(hull)]
			dx, dy := float64(q[0]-p[0]), float64(q[1]-p[1])
			cr := dx*(y-float64(p[1])) - dy*(x-float64(p[0]))
			best = math.Min(best, math.Abs(cr)/math.Hypot(dx, dy))
		}
		return best
	}
	type end struct {
		c int
		d float64
	}
	var ends []end
	for _, c := range crop {
		if !onCut(side, cw, ch, c) {
			continue
		}
		outline := false
		x, y := c%cw, c/cw
		for _, o := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
			xx, yy := x+o[0], y+o[1]
			if xx < 0 || yy < 0 || xx >= cw || yy >= ch || side[yy*cw+xx] == 0 {
				outline = true
				break
			}
		}
		if outline {
			ends = append(ends, end{c, defect(c)})
		}
	}
	if len(ends) == 0 {
		return 0, 0
	}
	first := ends[0]
	for _, e := range ends[1:] {
		if e.d > first.d {
			first = e
		}
	}
	second := -1.0
	fx, fy := first.c%cw, first.c/cw
	for _, e := range ends {
		dx, dy := e.c%cw-fx, e.c/cw-fy
		if dx*dx+dy*dy > 4 && e.d > second {
			second = e.d
		}
	}
	return math.Max(0, math.Min(first.d, second)), first.d
}

// concaveMaxNcut is the Ncut a cut between two notches of the outline
// (concaveCut) may cost: twice RefineMaxNcut, the limit of a cut along a
// seam, since the notches are evidence the seam does not need (saturated
// clusters of three or four nuclei had their best cut above the seam's
// limit). concaveSNR is the least plateau of the object, in noise
// deviations of its pixels (plateauSNR), at which notches may
// carry that dearer cut (below it, the limit of a seam): the half-maximum
// outline of a faint object wanders with its noise, and glows that the
// classes took for objects stood less far clear of it than nuclei. Our
// choices (DEVELOPERS.md, "Measured choices", gives the measurement).
const (
	concaveMaxNcut = 2 * RefineMaxNcut
	concaveSNR     = 10
)

// plateauSNR is an object's plateau (halfMaxLevel of sorted, its scaled
// contrast in ascending order, over tightenLevel) in units of its pixel
// noise.
func plateauSNR(sorted []float32, noise float64) float64 {
	return float64(halfMaxLevel(sorted)) / tightenLevel / math.Max(noise, 1e-12)
}

// sliverSplit reports whether a split (inA marks side A) parts a sliver
// (sliver).
func sliverSplit(inA []bool) bool {
	na := 0
	for _, a := range inA {
		if a {
			na++
		}
	}
	return sliver(na, len(inA)-na)
}

// isLine reports whether a shape of area pixels whose distance map peaks
// at p is a line: thin (p < fineRadius) and long (area above
// lineAspect·π·p²; a bar of width 2p and length L has area 2pL, so L
// above 4π·p ≈ 12.6 p, about six widths). A crack, a scratch or a fibre two or
// three pixels wide has a cheap cut anywhere across it (a few edges), and
// its darkness and width vary along it, so seams, dents and necks are
// found all along and the re-cut cut it into short pieces (othershapes.py
// machined, choice seed 1604: a crack of 8 pieces). Touching nuclei,
// specks and rods are compact or thick.
func isLine(area int, p float64) bool {
	return p < fineRadius && float64(area) > lineAspect*math.Pi*p*p
}

// lineAspect is the least area of a line in units of πp², p its peak
// distance from the border: twice neckAspect, the bound on a neck
// split's sides, so that a pair of shapes neckPieces would still take
// for objects (elongated cells of aspect up to 4) is no line. Our choice.
const lineAspect = 2 * neckAspect

// sliver reports whether sides of a and b pixels are out of proportion:
// one smaller than crumbFraction of the other, the share withoutCrumbs
// asks of the pieces of one dim object.
func sliver(a, b int) bool {
	return float64(min(a, b)) < crumbFraction*float64(max(a, b))
}

// concaveCut reports whether a split's cut (arguments as cutSides) runs
// between concavities of the outline: both ends deeper than digitizing
// a convex shape leaves (neckNoise), and one of them deeper than
// concaveNoise.
func concaveCut(nodes []int, cw, ch int, part []int, inA []bool) bool {
	shallow, deep := cutConcavity(nodes, cw, ch, part, inA)
	return shallow > neckNoise && deep > concaveNoise
}

// concave is concaveCut on the object, except that on a textured object
// (textured) a concavity is no evidence: its outline dents wherever a
// dark gap of its texture meets the rim (othershapes.py chromatin, choice
// seeds 1320-1322: once core necks, seams and steps were weighed against
// the texture, 28 of the 30 splits still made on textured objects had a
// concavity among their evidence, 27 no other).
func (o *objectCrop) concave(part []int, inA []bool) bool {
	return !o.textured() && concaveCut(o.nodes, o.cw, o.ch, part, inA)
}

// refineStep is the least relative difference of plateau contrast,
// |pA - pB| / max(pA, pB), at which the two sides of a split are taken
// for two objects of different staining. Uneven light changes the
// contrast of one object by a few per cent over its length; touching
// nuclei commonly differ by more. Our choice (DEVELOPERS.md, "Measured
// choices").
const refineStep = 0.1

// differ reports whether the two sides of a split differ in scaled
// contrast by at least refineStep relatively, each side's contrast taken
// as its plateau (halfMaxLevel, up to the common factor tightenLevel). A
// side's mean would fall with the share of its pixels on the blurred
// rim: the cap of a rod cut off at a stub differed from the rest of the
// same rod by more than refineStep in mean.
func (o *objectCrop) differ(part []int, inA []bool) bool {
	var vals [2][]float32
	for k, v := range part {
		s := 1
		if inA[k] {
			s = 0
		}
		vals[s] = append(vals[s], o.feat[o.nodes[v]])
	}
	if len(vals[0]) == 0 || len(vals[1]) == 0 {
		return false
	}
	slices.Sort(vals[0])
	slices.Sort(vals[1])
	a, b := float64(halfMaxLevel(vals[0])), float64(halfMaxLevel(vals[1]))
	hi := math.Max(a, b)
	step := refineStep
	if o.textured() {
		step = math.Max(step, textureSpreads*o.texture)
	}
	return hi > 0 && math.Abs(a-b) >= step*hi
}

// solidity is the pixel count of an object over the area of the convex
// hull of its pixels (as unit squares), a common shape measure for clumps.
// px lists the object's pixels in raster order.
func solidity(px []int, w int) float64 {
	// The hull of the squares is the hull of the outer corners of the
	// leftmost and rightmost pixel of each row.
	var pts [][2]int
	for k := 0; k < len(px); {
		y := px[k] / w
		x0 := px[k] % w
		j := k
		for j+1 < len(px) && px[j+1]/w == y {
			j++
		}
		x1 := px[j] % w
		pts = append(pts, [2]int{x0, y}, [2]int{x0, y + 1}, [2]int{x1 + 1, y}, [2]int{x1 + 1, y + 1})
		k = j + 1
	}
	hull := convexHull(pts)
	var a2 int
	for i := range hull {
		p, q := hull[i], hull[(i+1)%len(hull)]
		a2 += p[0]*q[1] - q[0]*p[1]
	}
	if a2 < 0 {
		a2 = -a2
	}
	if a2 == 0 {
		return 1
	}
	return float64(len(px)) / (float64(a2) / 2)
}

// convexHull returns the convex hull of pts in counter-clockwise order by
// Andrew's monotone chain (Andrew 1979).
func convexHull(pts [][2]int) [][2]int {
	slices.SortFunc(pts, func(a, b [2]int) int {
		if a[0] != b[0] {
			return a[0] - b[0]
		}
		return a[1] - b[1]
	})
	cross := func(o, a, b [2]int) int {
		return (a[0]-o[0])*(b[1]-o[1]) - (a[1]-o[1])*(b[0]-o[0])
	}
	var hull [][2]int
	for _, p := range pts {
		for len(hull) >= 2 && cross(hull[len(hull)-2], hull[len(hull)-1], p) <= 0 {
			hull = hull[:len(hull)-1]
		}
		hull = append(hull, p)
	}
	lower := len(hull) + 1
	for i := len(pts) - 2; i >= 0; i-- {
		p := pts[i]
		for len(hull) >= lower && cross(hull[len(hull)-2], hull[len(hull)-1], p) <= 0 {
			hull = hull[:len(hull)-1]
		}
		hull = append(hull, p)
	}
	return hull[:len(hull)-1]
}

// elongation returns λ1/λ2, the ratio of the larger to the smaller
// eigenvalue of the covariance of the pixel coordinates (second moments;
// common practice in shape description): 1 for a disc, (L/W)² for a
// long thin bar of length L and width W. A pixel line has λ2 = 0 and
// returns +Inf.
func elongation(px []int, w int) float64 {
	n := float64(len(px))
	var mx, my float64
	for _, i := range px {
		mx += float64(i % w)
		my += float64(i / w)
	}
	mx /= n
	my /= n
	var sxx, syy, sxy float64
	for _, i := range px {
		dx, dy := float64(i%w)-mx, float64(i/w)-my
		sxx += dx * dx
		syy += dy * dy
		sxy += dx * dy
	}
	sxx, syy, sxy = sxx/n, syy/n, sxy/n
	// Eigenvalues of [[sxx sxy] [sxy syy]].
	m, d := (sxx+syy)/2, math.Hypot((sxx-syy)/2, sxy)
	if m-d <= 0 {
		return math.Inf(1)
	}
	return (m + d) / (m - d)
}

// refineLimit is the Ncut limit for re-cutting an object of area pixels:
// maxNcut, raised by sqrt(refineArea/area) below refineArea.
func refineLimit(maxNcut float64, area int) float64 {
	return maxNcut * math.Max(1, math.Sqrt(refineArea/float64(area)))
}

// cropMask returns a mask of n crop pixels with the listed ones set.
func cropMask(crop []int, n int) []bool {
	m := make([]bool, n)
	for _, c := range crop {
		m[c] = true
	}
	return m
}

// beyondDigitization reports whether an object has a neck deeper than
// digitizing a shape leaves: its outline's distance map a neck of
// relative depth at least refineNeck, or its half-maximum core's
// (coreDistance) one of at least refineNeckAlone, among the necks
// more than neckNoise pixels deep (deepestNeck's floor). The distance
// along the straight ridge of a digitized rod or bar dips by up to a
// pixel (neckNoise), which on a bar 35 px wide is a relative depth of
// 0.06, above refineNeck: without the floor 29 of the 76 objects of
// scikit-image's brick.png (bright background) that were re-cut, solid
// bricks 30-40 px wide, counted as necked by such dips alone and were cut
// whole. A solid object (solidity above refineSolidity) whose necks are
// all within digitization is taken as single when it is also a bar
// (barElongation): a blob has no long ridge to dip, and two
// heavily overlapping nuclei can be solid with a neck of less than a
// pixel yet be parted by a seam or a step in contrast (generated stained
// scenes, choice seed 13721: object F1 0.925 -> 0.891 when every solid
// blob was gated).
func (s *objectShape) beyondDigitization() bool {
	if _, _, nk := s.outline(); nk.depth >= refineNeck {
		return true
	}
	_, _, nk := s.halfMax()
	return nk.depth >= refineNeckAlone
}

// singleElongated reports whether a necked object is one elongated
// object whose necks are all within digitization (beyondDigitization
// false): a solid bar (solid, elong at least barElongation), or any
// object more elongated than two touching discs (pairElongation) and at
// least fineRadius deep (its largest distance from the border). Two
// equal discs that touch have elongation 5, overlapping ones less, so
// an object beyond that is no pair of blobs; a pair joined end to end
// has a neck deeper than a pixel, and three in a row are both deeper
// and more elongated (11.7). Digitization alone dents the outline of a
// short rod by up to a pixel and leaves its solidity under
// refineSolidity, and the re-cut then cut it across at those dents
// (othershapes.py rods 1369 at (392,190), elongation 6.2: three
// pieces). An object less than fineRadius deep is exempt: a dent of a
// pixel is a real neck between two specks of radius 2-4 px (specks
// 1360-1369, pairs of elongation 5.0-7.6 and inradius 1.4-4.5 px: F1
// 0.913 -> 0.908 without the exemption). Choice seeds (othershapes.py
// 1360-1369 every kind, Go generators 15110-15119 every kind):
// elongated 0.834 / 0.547 -> 0.871 / 0.596 (F1 / mAP), rods 0.987 /
// 0.906 -> 0.994 / 0.921, haze 0.813 / 0.574 -> 0.815 / 0.576, the
// rest unchanged; held to objects below refineSolidity, elongated 0.867
// / 0.590 and haze unchanged.
func (s *objectShape) singleElongated(solid bool, elong float64) bool {
	if !solid || elong < barElongation {
		if elong < pairElongation {
			return false
		}
		var deep float64
		for _, v := range s.dist {
			deep = max(deep, v)
		}
		if deep < fineRadius {
			return false
		}
	}
	return !s.beyondDigitization()
}

// pairElongation is the elongation (elongation) of two equal discs
// that touch: the variance of the pixel coordinates along their axis is
// r²/4 + r², across it r²/4 (second moments of a disc of radius r;
// common practice), a ratio of 5.
const pairElongation = 5

// barElongation is the least elongation (elongation: (L/W)² for a bar of
// length L and width W) of a bar, at least three times longer than wide:
// more than any pair of discs reaches (two touching discs have 5), less
// than the bricks of scikit-image's brick.png that counted as necked
// (9.3-15.7).
const barElongation = 9

// refineNeckAlone is the least neck depth at which a region is split at
// its neck without the cut's help (neckPieces). Lower necks occur in
// single irregular nuclei as often as between touching ones; above it,
// most neck splits separate two objects (our choice on generated scenes;
// DEVELOPERS.md, "Measured choices", gives the counts).
const refineNeckAlone = 0.06

// neckAspect bounds how elongated each side of a neck split may be: its
// area at most neckAspect times that of the disc of its peak distance p,
// πp², which is the aspect ratio for an ellipse (area πab, peak b). Two
// touching nuclei give sides near 1-2; a vessel or a scratch whose width
// varies along its length has necks too, but its pieces are many times
// longer than wide (on scikit-image's microaneurysms.png the vessels were
// cut into 12 pieces without this bound, into the 4 objects of the cut
// with it). Our choice.
const neckAspect = 4

// compactSide reports whether a side of area pixels whose distance map
// peaks at p is compact enough to be an object of its own (neckAspect).
func compactSide(area int, p float64) bool {
	return float64(area) <= neckAspect*math.Pi*p*p
}

// maxNeckSplits bounds the neck splits of one object: clusters of more
// than a handful of touching objects are rare, and the bound keeps a
// ragged shape from being shredded.
const maxNeckSplits = 8

// neckPieces splits the regions of one object's cut at their necks: a
// region whose distance map has a neck of relative depth at least
// refineNeckAlone (deepestNeck), or failing that whose half-maximum core
// has one (coreDistance: blurred objects joined by their halo), is
// divided there by splitAtNeck when both sides keep minPart pixels, are
// compact (compactSide) and the split is evident (objectCrop.evident,
// or coreEvident for a core's neck), and the
// pieces are examined again, up to maxNeckSplits splits. It is the
// fallback for shapes whose normalized cut ran elsewhere: merged pairs
// and triplets often have necks that the Fiedler vector of the contrast
// graph does not follow (DEVELOPERS.md, "Measured choices", gives the
// measurement). g is the object's pixel graph, shape-weighted (node k at
// crop pixel o.nodes[k]), smooth the object's scaled contrast smoothed
// (two 3x3 means), region its cut (regions values); the Ncut of every
// neck split on g is appended to splits.
func neckPieces(g *affinity.Graph, o *objectCrop, smooth []float32, region []int32, regions int, splits []float64, minPart int) ([]int32, int, []float64) {
	nodes, cw, ch := o.nodes, o.cw, o.ch
	region = slices.Clone(region)
	queue := make([]int32, regions)
	for r := range queue {
		queue[r] = int32(r)
	}
	for made := 0; len(queue) > 0 && made < maxNeckSplits; {
		r := queue[0]
		queue = queue[1:]
		var rc, inR []int // the region's crop pixels and node indexes
		for k, c := range nodes {
			if region[k] == r {
				rc = append(rc, c)
				inR = append(inR, k)
			}
		}
		count := len(rc)
		if count < 2*minPart {
			continue
		}
		// The region's maps on its own bounding box b (partDistance),
		// or for the whole object (the cut left it in one piece) the
		// maps refineOne made.
		whole := count == len(nodes) && o.whole != nil
		b := partBox{0, 0, cw, ch}
		var mask []bool
		var d []float64
		var nk neck
		if whole {
			mask = o.whole.mask
			d, nk, _ = o.whole.outline()
		} else {
			pm := o.part(inR)
			d, b, nk = pm.d, pm.b, pm.neck()
			mask = make([]bool, b.w*b.h)
			for _, c := range rc {
				mask[b.at(c, cw)] = true
			}
		}
		core := false
		if nk.depth < refineNeckAlone {
			// A textured object's half-maximum core follows its
			// texture: its necks are no sign of two objects.
			if o.textured() {
				continue
			}
			core = true
			if whole {
				d, nk, _ = o.whole.halfMax()
			} else {
				sm := make([]float32, b.w*b.h)
				for _, c := range rc {
					sm[b.at(c, cw)] = smooth[c]
				}
				d = coreDistance(sm, mask, d, b.w, b.h)
				nk = deepestNeck(d, b.w, b.h, 0)
			}
			if nk.depth < refineNeckAlone {
				continue
			}
		}
		side := splitAtNeck(d, b.w, b.h, nk)
		nb := 0
		for i, sd := range side {
			if sd == 2 && mask[i] {
				nb++
			}
		}
		// A core's neck may also part a sliver of a textured object's
		// rim from the rest: both sides must be of one order of size,
		// as withoutCrumbs asks of the pieces of a dim object.
		if core && sliver(nb, count-nb) || nb < minPart || count-nb < minPart || !compactSide(count-nb, d[nk.peakA]) || !compactSide(nb, d[nk.peakB]) {
			continue
		}
		subA := make([]bool, len(inR))
		for i, k := range inR {
			subA[i] = side[b.at(nodes[k], cw)] == 1
		}
		// A core's neck comes from a dip in contrast, so a seam along
		// it is no further evidence: it needs depth, a step in
		// contrast or concavities.
		evident := o.evident
		if core {
			evident = o.coreEvident
		}
		if !evident(nk.drop, inR, subA) {
			continue
		}
		// Ncut of the split within the region: the rest of the object
		// is left out by restricting both sides to r.
		splits = append(splits, Ncut(g.Subgraph(inR), subA))
		nr := int32(regions)
		for k, c := range nodes {
			if region[k] == r && side[b.at(c, cw)] == 2 {
				region[k] = nr
			}
		}
		regions++
		made++
		queue = append(queue, r, nr)
	}
	return region, regions, splits
}

// shapeWeights multiplies each edge of an object's pixel graph (node k at
// crop pixel nodes[k]) by the smaller distance to the object's border
// of its two ends, dist from distanceInside. A cut across the object
// then costs about the square of its length instead of its length: a
// cut through a neck of half-width h costs about h², one through the
// body of a part of radius R about R², so the normalized cut moves to the
// neck between touching objects even where no dim seam marks it. This
// is cleave's own weighting (a shape cue for clumps), applied only to
// shapes that neckDepth finds pinched.
func shapeWeights(g *affinity.Graph, nodes []int, dist []float64) {
	for i := 0; i < g.N; i++ {
		di := dist[nodes[i]]
		for q := g.RowPtr[i]; q < g.RowPtr[i+1]; q++ {
			g.Weight[q] *= float32(math.Min(di, dist[nodes[g.Col[q]]]))
		}
	}
}

// cutNeck is the relative depth of the neck a split runs through: with
// d the distance map of the part being split (nodes: crop pixel of each
// object pixel; part indexes nodes; inA marks side A by position in
// part), the peak p of each side is its largest d and the saddle s the
// largest d on the cut (a pixel with a 4-neighbour on the other side);
// it returns the relative depth (min(pA, pB) - s) / (min(pA, pB) - 1/2)
// as in neckDepth and the absolute depth min(pA, pB) - s in pixels, or
// zeros when the split leaves no pinch.
func cutNeck(nodes []int, cw, ch int, part []int, inA []bool) (rel, abs float64) {
	d, b := partDistance(cropOf(nodes, part), cw)
	return cutNeckOn(d, b, nodes, cw, ch, part, inA)
}

// cutNeckOn is cutNeck with the part's distance map d on its box b
// (partDistance of the part) given.
func cutNeckOn(d []float64, b partBox, nodes []int, cw, ch int, part []int, inA []bool) (rel, abs float64) {
	crop, side := cutSides(nodes, cw*ch, part, inA)
	var peak [3]float64
	saddle := 0.0
	for _, c := range crop {
		dc := d[b.at(c, cw)]
		peak[side[c]] = max(peak[side[c]], dc)
		if onCut(side, cw, ch, c) {
			saddle = max(saddle, dc)
		}
	}
	lo := min(peak[1], peak[2])
	if lo <= 0.5 || saddle >= lo {
		return 0, 0
	}
	return (lo - saddle) / (lo - 0.5), lo - saddle
}

// partBox is the bounding box of a part of an object's crop: its top
// left corner (x0, y0) in the crop and its size w x h.
type partBox struct{ x0, y0, w, h int }

// at returns the index in the box of crop pixel c (crop cw wide).
func (b partBox) at(c, cw int) int { return (c/cw-b.y0)*b.w + c%cw - b.x0 }

// partDistance returns distanceInside of a part (crop pixels of a crop cw
// wide, at least one) computed on the part's own bounding box, and the
// box. The distances are those of the part in the whole crop: every pixel
// outside the box is outside the part, and the nearest outside pixel of a
// pixel in the box is at least as near on the box's outside frame as
// beyond it. The work is the box's area, not the crop's, so the tests of
// the many parts of one re-cut cost in all about the object's area at
// each level of the cut.
func partDistance(crop []int, cw int) ([]float64, partBox) {
	x0, y0, x1, y1 := crop[0]%cw, crop[0]/cw, crop[0]%cw, crop[0]/cw
	for _, c := range crop {
		x, y := c%cw, c/cw
		x0, y0, x1, y1 = min(x0, x), min(y0, y), max(x1, x), max(y1, y)
	}
	b := partBox{x0, y0, x1 - x0 + 1, y1 - y0 + 1}
	mask := make([]bool, b.w*b.h)
	for _, c := range crop {
		mask[b.at(c, cw)] = true
	}
	return distanceInside(mask, b.w, b.h), b
}

// cropOf returns the crop pixel of each node of part (indexes of nodes,
// the crop pixel of each object pixel).
func cropOf(nodes, part []int) []int {
	crop := make([]int, len(part))
	for k, v := range part {
		crop[k] = nodes[v]
	}
	return crop
}

// partMaps keeps, during one object's re-cut, the distance map
// (partDistance) of each part of the object asked for and its deepest
// neck with no floor (deepestNeck), so that the tests which look at the
// same part (the bisection's final test, a split's neck test, neckPieces
// and peakPieces) compute them once. A part is a set of the object's
// nodes (indexes of nodes, ascending); the maps are a function of the set
// alone, so results are those of computing them each time.
type partMaps struct {
	nodes []int // crop pixel of each object node
	cw    int   // crop width
	// byFirst lists the parts known, by their first node: two parts of
	// one re-cut with the same first node are told apart by comparing
	// their nodes.
	byFirst map[int][]*partMap
}

// partMap is one part's entry in partMaps.
type partMap struct {
	part    []int
	d       []float64
	b       partBox
	nk      neck
	hasNeck bool
}

// newPartMaps returns an empty partMaps for an object's nodes (crop
// pixels, crop cw wide).
func newPartMaps(nodes []int, cw int) *partMaps {
	return &partMaps{nodes: nodes, cw: cw, byFirst: map[int][]*partMap{}}
}

// add records the distance map d on box b of part (not copied: neither
// may change afterwards).
func (m *partMaps) add(part []int, d []float64, b partBox) *partMap {
	e := &partMap{part: part, d: d, b: b}
	m.byFirst[part[0]] = append(m.byFirst[part[0]], e)
	return e
}

// get returns the entry of part (at least one node), computing its
// distance map the first time.
func (m *partMaps) get(part []int) *partMap {
	for _, e := range m.byFirst[part[0]] {
		if slices.Equal(e.part, part) {
			return e
		}
	}
	d, b := partDistance(cropOf(m.nodes, part), m.cw)
	return m.add(slices.Clone(part), d, b)
}

// part returns the entry of part (indexes of o.nodes) from o.parts, or
// computed afresh when o keeps none.
func (o *objectCrop) part(part []int) *partMap {
	if o.parts != nil {
		return o.parts.get(part)
	}
	d, b := partDistance(cropOf(o.nodes, part), o.cw)
	return &partMap{part: part, d: d, b: b}
}

// neck returns the part's deepest neck with no floor (deepestNeck).
func (e *partMap) neck() neck {
	if !e.hasNeck {
		e.nk, e.hasNeck = deepestNeck(e.d, e.b.w, e.b.h, 0), true
	}
	return e.nk
}

// cutSides returns the crop pixel of each node of part (indexes of nodes,
// the crop pixel of each object pixel) and a map of the n crop pixels: 0
// outside the part, 1 side A (inA, by position in part), 2 side B.
func cutSides(nodes []int, n int, part []int, inA []bool) ([]int, []uint8) {
	crop := make([]int, len(part))
	side := make([]uint8, n)
	for k, v := range part {
		crop[k] = nodes[v]
		side[crop[k]] = 2
		if inA[k] {
			side[crop[k]] = 1
		}
	}
	return crop, side
}

// onCut reports whether crop pixel c (cw x ch) has a 4-neighbour on the
// other side of a split (side from cutSides).
func onCut(side []uint8, cw, ch, c int) bool {
	a := side[c]
	x, y := c%cw, c/cw
	for _, d := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
		xx, yy := x+d[0], y+d[1]
		if xx < 0 || yy < 0 || xx >= cw || yy >= ch {
			continue
		}
		if b := side[yy*cw+xx]; b != 0 && b != a {
			return true
		}
	}
	return false
}

// refineResult is the outcome of re-cutting one object: the region of
// each of its pixels (0..regions-1, nil for one region), the Ncut of each
// accepted split, the worst eigensolve shortfall, or an error.
type refineResult struct {
	region  []int32
	regions int
	splits  []float64
	short   shortfall
	err     error
}

// refineOne re-cuts one object (see refineObjects): px are its pixels in
// raster order in an image w pixels wide, b their bounding box, and
// contrast[k] the contrast of pixel px[k].
func refineOne(ctx context.Context, px []int, w int, b box, contrast []float64, maxNcut float64, minPart int, necks bool, radius float64, seed uint64) refineResult {
	if len(px) < 2*minPart {
		return refineResult{regions: 1}
	}
	elong := elongation(px, w)
	if elong > refineElongation {
		return refineResult{regions: 1}
	}
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	nodes := make([]int, len(px)) // crop index of each object pixel
	for k, i := range px {
		nodes[k] = (i/w-b.y0)*cw + i%w - b.x0
	}
	// The scale is a quantile of the contrast: selected here, and the
	// values sorted only for an object that goes on to be cut (below).
	sorted := slices.Clone(contrast)
	scale := math.Max(kthSmallest(sorted, int(refinePercent*float64(len(sorted)-1))), 1e-6)
	feat := make([]float32, cw*ch)
	for k := range px {
		feat[nodes[k]] = float32(contrast[k] / scale)
	}
	mean3 := boxMean3(feat, cw, ch)
	smooth := boxMean3(mean3, cw, ch)
	mask := cropMask(nodes, cw*ch)
	dist := distanceInside(mask, cw, ch)
	shape := &objectShape{mask: mask, smooth: smooth, cw: cw, ch: ch, dist: dist}
	// The outline's neck, or the half-maximum core's where a halo hides
	// it (held to neckPieces' depth, since the core is noisier).
	_, outlineNeck, _ := shape.outline()
	necked := necks && outlineNeck.depth >= refineNeck
	if necks && !necked {
		_, coreNeck, _ := shape.halfMax()
		necked = coreNeck.depth >= refineNeckAlone
	}
	if isLine(len(px), slices.Max(dist)) {
		return refineResult{regions: 1}
	}
	solid := solidity(px, w) > refineSolidity
	if necked && shape.singleElongated(solid, elong) {
		necked = false
	}
	if !necked && solid {
		return refineResult{regions: 1}
	}
	// What only the cut's tests read (the noise, the plateau, the
	// texture) is measured once the object is to be cut.
	obj := &objectCrop{feat: feat, cw: cw, ch: ch, nodes: nodes, noise: cropNoise(feat, mean3, nodes, cw, ch), whole: shape, parts: newPartMaps(nodes, cw)}
	// The whole object's distance map is dist: its box is the crop.
	all := make([]int, len(nodes))
	for k := range all {
		all[k] = k
	}
	obj.parts.add(all, dist, partBox{0, 0, cw, ch})
	// The scaled contrast in ascending order: sorted divided by scale (a
	// monotone map, so no second sort).
	slices.Sort(sorted)
	featSorted := make([]float32, len(sorted))
	for k, v := range sorted {
		featSorted[k] = float32(v / scale)
	}
	obj.plateau = float64(halfMaxLevel(featSorted)) / tightenLevel
	obj.texture = fineTexture(smooth, nodes, dist, cw, ch, obj.plateau)
	// The crop's pixel graph induced on the object's pixels, built from
	// them alone (the crop's other pixels may be most of it). nodes is
	// ascending (px is in raster order), so the subgraph's node k is
	// pixel px[k].
	sub, err := affinity.PixelSubgraph([][]float32{feat}, cw, ch, nodes, affinity.PixelParams{Radius: refineRadius, SigmaI: recutSigmaI(feat, nodes, dist, cw, ch), SigmaX: refineSigmaX})
	if err != nil {
		return refineResult{err: err}
	}
	limit := refineLimit(maxNcut, len(px))
	cutLimit := limit
	if necked {
		shapeWeights(sub, nodes, dist)
		cutLimit = math.Max(limit, refineNeckNcut)
	}
	// Notches may carry a dearer cut on an object that stands clear of
	// its noise (concaveMaxNcut, concaveSNR).
	notchLimit := limit
	if necks {
		if plateauSNR(featSorted, obj.noise) >= concaveSNR {
			notchLimit = math.Max(limit, concaveMaxNcut)
			cutLimit = math.Max(cutLimit, notchLimit)
		}
	}
	// A split is made within the Ncut limit along a seam (a dip in
	// contrast) or, with shape cues on, between concavities of the
	// outline (concaveCut: saturated clumps blurred together have
	// neither a seam nor a neck, but their outline still dents where
	// two objects meet; within notchLimit, and parting no sliver); or,
	// in a shape with a neck, through the neck; or, in a clump the neck
	// partition parted (initial, below), between sides whose plateaus
	// differ (differ): there each piece is already of the object scale,
	// and two overlapping nuclei of different brightness that its
	// markers left together show a step between them but no neck.
	var initial [][]int
	accept := func(part []int, inA []bool, ncut float64) bool {
		if ncut <= limit && necks && obj.seam(part, inA) {
			return true
		}
		if initial != nil && ncut <= limit && obj.differ(part, inA) {
			return true
		}
		if necks && ncut <= notchLimit && obj.concave(part, inA) && !sliverSplit(inA) {
			return true
		}
		if ncut <= limit && !necks && obj.seam(part, inA) {
			// Without necks, a seam through a neck is the blur of
			// the narrow part, not a boundary.
			pm := obj.part(part)
			rel, abs := cutNeckOn(pm.d, pm.b, nodes, cw, ch, part, inA)
			return rel < refineNeck || abs <= neckNoise
		}
		if !necked {
			return false
		}
		pm := obj.part(part)
		rel, abs := cutNeckOn(pm.d, pm.b, nodes, cw, ch, part, inA)
		return rel >= refineNeck && obj.evident(abs, part, inA)
	}
	// A part without a neck that is already convex (for instance one
	// nucleus of a split pair) is not cut again.
	final := func(part []int) bool {
		if len(part) == len(px) {
			return false // the object itself passed the tests above
		}
		if necked && obj.part(part).neck().depth >= refineNeck {
			return false
		}
		whole := make([]int, len(part))
		for k, v := range part {
			whole[k] = px[v]
		}
		return solidity(whole, w) > refineSolidity
	}
	// A shape with at least neckPartitionPieces necks deep enough to part
	// objects by depth alone is first parted at all of them
	// (neckPartition, when all its pieces are compact blobs), and the cut
	// goes on within the pieces.
	var partNcuts []float64
	if necked && len(px) >= neckPartitionPieces*minPart {
		if piece, np := neckPartition(dist, cw, ch, minPart, neckPartitionPieces, radius); piece != nil {
			initial = make([][]int, np)
			of := make([]int32, len(nodes))
			for k, c := range nodes {
				of[k] = piece[c]
				initial[piece[c]] = append(initial[piece[c]], k)
			}
			partNcuts = pieceNcuts(sub, of, np)
		}
	}
	cut, err := bisect(ctx, sub, nil, cutParams{maxNcut: cutLimit, minArea: minPart, workers: 1, seed: seed}, cutOptions{accept: accept, final: final, noSpectrum: true, budget: refineBudget(len(px)), initial: initial})
	if err != nil {
		return refineResult{err: err}
	}
	region, regions, splits := cut.region, cut.regions, append(partNcuts, cut.splitNcuts...)
	if necked {
		region, regions, splits = neckPieces(sub, obj, smooth, region, regions, splits, minPart)
	}
	if necks {
		region, regions, splits = peakPieces(sub, obj, region, regions, splits, minPart)
	}
	return refineResult{region: region, regions: regions, splits: splits, short: cut.short}
}

// The work of re-cutting one object is capped, so that the object
// stages cost at most a fixed amount per object and, summed, grow
// linearly with the objects' area (DEVELOPERS.md, "Measured choices",
// gives the measurements):
//
//   - refineMaxNodes: an object of up to this many pixels is re-cut on its
//     own pixel graph, one node a pixel. The touching clusters refinement
//     is for (two to a handful of objects) stay below it on the scenes the
//     project measures (a cluster of four nuclei of radius 25 px is about
//     7,900 px); what exceeds it is usually a structure (a vessel tree, a
//     machine's frame, or the background taken for an object under the
//     wrong polarity), whose parts are large.
//   - refineCoarseNodes: a larger object is re-cut on a grid coarse enough
//     to give it at most about this many nodes (refineCoarse, coarseStep),
//     a quarter of the largest re-cut at full resolution: such structures
//     made most of the re-cut's work on scikit-image's photographs, and
//     of the generated choice scenes only three othershapes.py bodies
//     scenes held objects that large (bodies F1 0.945 -> 0.947).
//   - refineWork: the recursive bisection of one object solves parts of at
//     most refineWork times its node count n in total (cutOptions.budget).
//     A split into balanced halves costs the part's nodes at each level,
//     so a cluster of P objects costs n (log2 P + 1) with the failed tries
//     on its P pieces: 2n for a pair, 3n for four, 4n for eight (the
//     handful maxNeckSplits also allows). A cut that only peels a small
//     piece off solves nearly all n nodes again at each split; the budget
//     stops it after about refineWork splits.
//   - refineMaxWork: and at most this many nodes in all, whatever n. It
//     binds only above refineMaxWork/refineWork = 5,000 nodes, where it
//     still pays for the first two levels of a balanced cluster of four up
//     to refineMaxNodes (about 2n: four blocks of 8,281 nodes in all are
//     parted into four, TestRefineFourCluster), and stops the shredding
//     of large ragged shapes (on the photographs such objects of
//     5,000-10,000 px were cut into ten to twenty pieces, solving four
//     times their nodes).
//
// The cap on the work per object: its re-cut solves parts of at most
// min(refineWork x n, refineMaxWork) = 20,000 nodes in all, with n at most
// refineMaxNodes = 10,000 for an object re-cut at full resolution and
// about refineCoarseNodes = 2,500 (10,000 nodes solved; a few more nodes
// where the outline cuts cells) for a larger one, and a solve costs about
// a constant per node (the multilevel eigensolver takes a few steps on
// the input graph at the loose target splitTol).
const (
	refineMaxNodes    = 10000
	refineCoarseNodes = 2500
	refineWork        = 4
	refineMaxWork     = 20000
)

// refineBudget is the most nodes the recursive bisection of an object of
// n nodes may solve in all (cutOptions.budget): refineWork n, at most
// refineMaxWork.
func refineBudget(n int) int {
	return min(refineWork*n, refineMaxWork)
}

// coarseStep is the integer step s of the grid an object of area pixels
// is re-cut on: 1 up to refineMaxNodes pixels, above that the least s
// with area/s² <= refineCoarseNodes.
func coarseStep(area int) int {
	if area <= refineMaxNodes {
		return 1
	}
	s := 2
	for area > refineCoarseNodes*s*s {
		s++
	}
	return s
}

// refineCoarse re-cuts an object of more than refineMaxNodes pixels on a
// grid coarsened by the integer step s = coarseStep(area): a cell of
// s x s pixels is a node when any of its pixels belongs to the object,
// with the mean contrast of those pixels, and every pixel takes the
// region of its cell. The graph then has about area/s² <=
// refineCoarseNodes nodes (a few more where the outline cuts cells), so
// the work per object is bounded; the cut follows seams at the
// resolution of s pixels, which for objects this large is a small
// fraction of their size. minPart is scaled by 1/s² (at least 1).
func refineCoarse(ctx context.Context, px []int, w int, b box, contrast []float64, maxNcut float64, minPart int, necks bool, radius float64, seed uint64) refineResult {
	s := coarseStep(len(px))
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	gw, gh := (cw+s-1)/s, (ch+s-1)/s
	sum := make([]float64, gw*gh)
	cnt := make([]int, gw*gh)
	cell := make([]int, len(px)) // the cell of each pixel
	for k, i := range px {
		x, y := i%w-b.x0, i/w-b.y0
		c := (y/s)*gw + x/s
		cell[k] = c
		sum[c] += contrast[k]
		cnt[c]++
	}
	// The coarse object: its cells in raster order, each a pixel of a
	// gw x gh image.
	node := make([]int, gw*gh)
	var cpx []int
	var ccon []float64
	for c, n := range cnt {
		node[c] = -1
		if n > 0 {
			node[c] = len(cpx)
			cpx = append(cpx, c)
			ccon = append(ccon, sum[c]/float64(n))
		}
	}
	r := refineOne(ctx, cpx, gw, box{0, 0, gw - 1, gh - 1}, ccon, maxNcut, max(1, minPart/(s*s)), necks, radius/float64(s), seed)
	if r.err != nil || r.region == nil {
		return r
	}
	region := make([]int32, len(px))
	for k, c := range cell {
		region[k] = r.region[node[c]]
	}
	r.region = region
	return r
}

// coreLevel is the fraction of a region's plateau at which its core is
// drawn: the half-maximum outline, where a blurred step edge crosses
// half its height (common practice for blurred objects such as
// fluorescent nuclei; the same level tightenObjects uses).
const coreLevel = 0.5

// coreEps weighs the region's own distance map into the core's (see
// coreDistance): it moves a core's peaks and saddles by at most coreEps
// times the region's half-width (0.2 px for a region 40 px wide).
const coreEps = 0.01

// coreDistance is the distance map of a region's core, for necks that the
// blur of touching objects hides: two blurred discs that overlap are
// joined by a halo whose outline is nearly convex, while their
// half-maximum cores are pinched or apart. The core is the region's
// pixels (mask, crop cw x ch) whose smoothed contrast (smooth; refineOne
// takes two 3x3 means of the scaled contrast) is at least coreLevel
// times the region's refinePercent quantile of it,
// holes filled. It returns dc + coreEps * d with dc the core's distance
// map and d the region's (distanceInside), so pixels outside the core
// stay positive and ordered by their distance to the region's border:
// cores apart meet there at a saddle near 0, and splitAtNeck floods the
// whole region from the two core peaks.
func coreDistance(smooth []float32, mask []bool, d []float64, cw, ch int) []float64 {
	var vals []float32
	for c, in := range mask {
		if in {
			vals = append(vals, smooth[c])
		}
	}
	if len(vals) == 0 {
		return d
	}
	level := coreLevel * kthSmallest(vals, int(refinePercent*float64(len(vals)-1)))
	group := make([]int32, len(mask))
	for c, in := range mask {
		group[c] = -1
		if in && smooth[c] >= level {
			group[c] = 0
		}
	}
	fillHoles(group, cw, ch)
	core := make([]bool, len(mask))
	for c, g := range group {
		core[c] = g == 0 && mask[c]
	}
	dc := distanceInside(core, cw, ch)
	out := make([]float64, len(d))
	for c := range out {
		out[c] = dc[c] + coreEps*d[c]
	}
	return out
}

// pieceNcuts returns, for each piece but the first of a partition of g's
// nodes (piece of every node, n pieces), the Ncut of parting it from the
// rest of g, cut(P, V\P)/assoc(P, V) + cut(P, V\P)/assoc(V\P, V) (Shi
// and Malik 2000, eq. 2): the Ncut values a partition made without a
// sweep records beside the cut's, from one pass over the edges.
func pieceNcuts(g *affinity.Graph, piece []int32, n int) []float64 {
	cut := make([]float64, n)
	vol := make([]float64, n)
	var total float64
	for i := 0; i < g.N; i++ {
		pi := piece[i]
		for q := g.RowPtr[i]; q < g.RowPtr[i+1]; q++ {
			w := float64(g.Weight[q])
			vol[pi] += w
			total += w
			if piece[g.Col[q]] != pi {
				cut[pi] += w
			}
		}
	}
	out := make([]float64, 0, n-1)
	for p := 1; p < n; p++ {
		rest := total - vol[p]
		if vol[p] == 0 || rest == 0 {
			out = append(out, math.Inf(1))
			continue
		}
		out = append(out, cut[p]/vol[p]+cut[p]/rest)
	}
	return out
}

// neckPartitionPieces is the least number of pieces for which an
// object's neck partition (neckPartition) is used before its cut. The cut
// of a cluster of P touching objects costs about n (log2 P + 1) nodes of
// eigensolves when it halves the cluster, but about n (P + 1)/2 when the
// cheapest cut peels one object off at a time, as it does along chains
// and in clusters whose objects meet at narrow necks; the work cap
// (refineWork n) then stops it after a few pieces, and what is left stays
// merged. Parted at its necks first, the cluster costs one flood of its
// distance map and the cut goes on in each piece. A partition by the
// distance map alone follows the geometry, not the contrast, so the cut
// keeps the smaller clusters: 2, 3, 5 and 8 were tried on the choice
// seeds and 5 was the best there (DEVELOPERS.md, "Measured choices").
const neckPartitionPieces = 5

// refineByNecks re-cuts an object of more than refineMaxNodes pixels
// (refineObjects' arguments) as the pieces of its neck partition when it
// has at least neckPartitionPieces: each piece is re-cut as an object of
// its own (refineOne, or refineCoarse when it is itself that large), so
// that a large cluster of touching objects is parted at full resolution
// at the cost of one flood and its pieces' re-cuts. The work per object
// stays linear in its size: each piece's re-cut solves at most
// refineBudget of its pixels (none for a convex piece), at most
// refineWork n in all for an object of n pixels, where refineCoarse's
// stops at refineMaxWork. It reports false, with nothing done, for an
// object with fewer pieces. The Ncut values of the partition's
// boundaries are not recorded (no graph of the whole object is built).
func refineByNecks(ctx context.Context, px []int, w int, b box, contrast []float64, maxNcut float64, minPart int, radius float64, seed uint64) (refineResult, bool) {
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	crop := make([]int, len(px))
	for k, i := range px {
		crop[k] = (i/w-b.y0)*cw + i%w - b.x0
	}
	piece, np := neckPartition(distanceInside(cropMask(crop, cw*ch), cw, ch), cw, ch, minPart, neckPartitionPieces, radius)
	if piece == nil {
		return refineResult{}, false
	}
	idx := make([][]int, np) // positions in px of each piece's pixels, raster order
	for k, c := range crop {
		idx[piece[c]] = append(idx[piece[c]], k)
	}
	out := refineResult{region: make([]int32, len(px))}
	for _, ks := range idx {
		pp := make([]int, len(ks))
		pc := make([]float64, len(ks))
		for j, k := range ks {
			pp[j], pc[j] = px[k], contrast[k]
		}
		pb := pixelBox(pp, w)
		var r refineResult
		if len(pp) <= refineMaxNodes {
			r = refineOne(ctx, pp, w, pb, pc, maxNcut, minPart, true, radius, seed)
		} else {
			r = refineCoarse(ctx, pp, w, pb, pc, maxNcut, minPart, true, radius, seed)
		}
		if r.err != nil {
			return r, true
		}
		for j, k := range ks {
			v := int32(0)
			if r.region != nil {
				v = r.region[j]
			}
			out.region[k] = int32(out.regions) + v
		}
		out.regions += r.regions
		out.splits = append(out.splits, r.splits...)
		out.short.merge(r.short)
	}
	return out, true
}
