package segment

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/affinity"
)

// member is a dim object inside another object's region (dimMembers):
// its pixels (indices into the region's pixel list, ascending), their
// 3x3 means, and its own outline level.
type member struct {
	ks     []int32
	vals   []float32
	level  float32
	median float32
}

// dimMembers finds the dim members of one object region for
// tightenObjects. The class map joins a dim object to a bright one whose
// blurred halo reaches it (an out-of-focus nucleus beside an in-focus
// one, a pale textured nucleus beside a bright one), and the region's
// outline level, half its plateau, lies above the whole dim object: it
// was dropped, or cut into crumbs where its grain crosses the level.
//
// A dim member is a part of the region with a half-maximum outline of
// its own. The region is split into the basins of the Gaussian mean of
// the contrast at textureFill (gauss, the region's cropGaussian) by
// basins, the flooding from the top that peakPieces uses: where two
// parts meet at a saddle s, the one of lower peak p stays apart when
// p - s > tightenLevel·p, that is s < tightenLevel·p (the saddle lies
// below its half maximum, so its half-maximum outline closes around it
// alone; a shoulder on a brighter object's slope, or its halo, has no
// such saddle), and it holds at least minArea pixels. A basin other than
// the one of the highest peak is a member when its peak is below the
// region's plateau (level/tightenLevel: dimmer than the object the
// level was drawn for), or when it is textured (texturedBasin) and the
// level lies above its median: the bright foci of a pale textured
// nucleus reach the plateau of its bright neighbour, but the level
// would keep only those foci, as crumbs (othershapes.py chromatin). Such
// a member's own level must lie above the background around the region
// (surroundOf), as neckMember asks. Within every basin that is no
// member, its shape may still part a dim member from the rest
// (neckMember): a pale nucleus pressed against a bright one has no
// saddle of its own. A member's own level is halfMaxLevel of the 3x3
// means over its pixels, as for any object (tightenObjects then takes
// the level of the rest of the region without the members' pixels,
// since a large dim member pulls the region's plateau down and the
// bright object's outline out). When neither the basins nor the necks
// give a member, remainderMembers looks at what the region's level
// would drop. px are the region's pixels (frame
// indices, ascending), own their 3x3 means (their contrasts for a small
// object, fineRadius), sm the same at any pixel, b the region's box, w x
// h the frame.
func dimMembers(own []float32, gauss func() gaussCrop, sm func(i int) float32, px []int, b box, w, h int, level float32, minArea int) []member {
	plateau := level / tightenLevel
	if len(px) < 2*minArea || !(plateau > 0) {
		return nil
	}
	g := gauss()
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	v := make([]float32, cw*ch)
	mask := make([]bool, cw*ch)
	for _, i := range px {
		c := (i/w-b.y0)*cw + i%w - b.x0
		v[c], mask[c] = g.at(i, w), true
	}
	var sur *surround
	surOf := func() surround {
		if sur == nil {
			s := surroundOf(sm, mask, b, w, h)
			sur = &s
		}
		return *sur
	}
	around := func() float32 { return surOf().median }
	lab, n := basins(v, mask, cw, ch, 0, tightenLevel, minArea)
	if n < 2 {
		if found := neckMember(own, px, mask, around, b, w, level, minArea); len(found) > 0 {
			return found
		}
		return remainderMembers(own, px, mask, surOf(), b, w, level, minArea)
	}
	peak := make([]float32, n)
	for c, l := range lab {
		if l >= 0 {
			peak[l] = max(peak[l], v[c])
		}
	}
	top := int32(0)
	for l := range peak {
		if peak[l] > peak[top] {
			top = int32(l)
		}
	}
	byBasin := make([][]int32, n)
	for k, i := range px { // ascending, so each basin's ks is too
		if l := lab[(i/w-b.y0)*cw+i%w-b.x0]; l >= 0 {
			byBasin[l] = append(byBasin[l], int32(k))
		}
	}
	var found []member
	for l, ks := range byBasin {
		if len(ks) == 0 {
			continue
		}
		basinPx := make([]int, len(ks))
		basinOwn := make([]float32, len(ks))
		for q, k := range ks {
			basinPx[q], basinOwn[q] = px[k], own[k]
		}
		if int32(l) != top {
			m := memberOf(ks, own)
			if peak[l] < plateau || m.median < level && m.level > around() && texturedBasin(basinOwn, basinPx, b, w, m.level) {
				found = append(found, m)
				continue
			}
		}
		// The basin's own box: its distance map and neck search are
		// those over the region's box (beyond a box counts as outside,
		// and the raster order of its pixels is the same), on fewer
		// pixels.
		bb := pixelBox(basinPx, w)
		bw := bb.x1 - bb.x0 + 1
		basinMask := make([]bool, bw*(bb.y1-bb.y0+1))
		for _, i := range basinPx {
			basinMask[(i/w-bb.y0)*bw+i%w-bb.x0] = true
		}
		for _, m := range neckMember(basinOwn, basinPx, basinMask, around, bb, w, level, minArea) {
			for q, k := range m.ks {
				m.ks[q] = ks[k] // the basin's index, back to the region's
			}
			found = append(found, m)
		}
	}
	if len(found) == 0 {
		found = remainderMembers(own, px, mask, surOf(), b, w, level, minArea)
	}
	return found
}

// neckMember finds a dim member that the shape of a region, or of one of
// its basins, parts from the rest where its contrast does not
// (dimMembers): a pale textured nucleus pressed against a bright one has
// no saddle of its own in the Gaussian mean, since the bright one's
// slope runs over it, yet the class map outlines the pair as two discs
// joined at a neck. The part (mask over box b, pixels px with 3x3 means
// own) is split at the deepest neck of its distance map (deepestNeck,
// more than neckNoise pixels deep and of relative depth at least
// refineNeck) by the two-marker watershed of the distance transform
// (splitAtNeck). A side is a member when it holds at least minArea
// pixels and its median 3x3 mean lies below the region's outline level:
// that level would drop most of it, so it is outlined at its own half
// maximum instead. A side at or above the level is part of the bright
// object however the shape runs; the split is only ever asked where the
// intensity has already found no member. A member's own outline level
// (half its plateau) must lie above around(), the median 3x3 mean of the
// background around the region (surroundOf), or that outline would
// not part it from the background: a superpixel of background noise
// that the class map hung on an object's side is no member.
func neckMember(own []float32, px []int, mask []bool, around func() float32, b box, w int, level float32, minArea int) []member {
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	d := distanceInside(mask, cw, ch)
	nk := deepestNeck(d, cw, ch, neckNoise)
	if nk.peakA < 0 || nk.depth < refineNeck {
		return nil
	}
	side := splitAtNeck(d, cw, ch, nk)
	var parts [3][]int32
	for k, i := range px {
		s := side[(i/w-b.y0)*cw+i%w-b.x0]
		parts[s] = append(parts[s], int32(k))
	}
	var found []member
	for _, ks := range parts[1:] {
		if len(ks) < minArea || len(ks) == len(px) {
			continue
		}
		if m := memberOf(ks, own); m.median < level && m.level > around() {
			found = append(found, m)
		}
	}
	if len(found) == 2 { // both sides dim: the level is not theirs to fall below
		return nil
	}
	return found
}

// surround is the median of the 3x3 means of the background around a
// region and their spread (madScale times their median absolute
// deviation, common practice for a robust standard deviation).
type surround struct {
	median float32
	sd     float64
	n      int // pixels it was taken over
}

// surroundOf is the surround of sm over the pixels of box b grown by
// tightenReach (clipped to the w x h frame) outside the region mask
// (over b); the zero surround when there are none.
func surroundOf(sm func(i int) float32, mask []bool, b box, w, h int) surround {
	g := b.grown(tightenReach, w, h)
	cw := b.x1 - b.x0 + 1
	var v []float32
	for y := g.y0; y <= g.y1; y++ {
		for x := g.x0; x <= g.x1; x++ {
			if x >= b.x0 && x <= b.x1 && y >= b.y0 && y <= b.y1 && mask[(y-b.y0)*cw+x-b.x0] {
				continue
			}
			v = append(v, sm(y*w+x))
		}
	}
	if len(v) == 0 {
		return surround{}
	}
	med := kthSmallest(v, (len(v)-1)/2)
	for k, x := range v {
		v[k] = float32(math.Abs(float64(x - med)))
	}
	return surround{median: med, sd: madScale * float64(kthSmallest(v, (len(v)-1)/2)), n: len(v)}
}

// remainderMargin is the margin (pixels, chessboard distance) around the
// pixels a region keeps at its outline level within which
// remainderMembers takes nothing: the blurred rim of the kept object
// (blur of 1-2 px on the project's scenes) falls below the level there.
// remainderDepth is the least depth (pixels, distanceInside) of a
// remainder member: a disc of radius 3 px or more, where a ring of halo
// is thinner. Our choices, measured with the rule (remainderMembers).
const (
	remainderMargin = 2
	remainderDepth  = 3
)

// remainderMembers finds the dim members of a region that neither a
// saddle of its own (dimMembers' basins) nor the region's shape
// (neckMember) parts from the bright object: a dim nucleus pressed
// against a bright one sits on the bright one's slope, so it has no
// saddle, and the class map's superpixel outline around the pair need
// not show a neck. What the region's outline level would drop is looked
// at directly. The candidates are the region's pixels below the level,
// more than remainderMargin pixels from every pixel the level keeps,
// whose 3x3 mean stands detectSigmas spreads above the surround's median
// (sur, surroundOf: detection against the local background, common
// practice). A connected piece of them (4-neighbours, at least minArea
// pixels) is a member when
//   - it is at least remainderDepth pixels deep;
//   - it is not enclosed by the kept part and its margin (it borders some
//     other pixel, or the box's edge): a dim interior enclosed by the
//     kept part is the object's own (a hollow cell);
//   - its brightest pixel lies more than a pixel from the margin: a halo
//     is brightest where it meets the object it spreads from, a dim
//     object in its own interior;
//   - it meets the margin along fewer pixels than its own width (the
//     diameter of a disc of its area): an object pressed against another
//     meets it at a neck, while the dim side of one unevenly bright
//     object meets the rest along its whole width.
//
// The member's pixels are the piece's; tightenObjects outlines them at
// their own half maximum. Measured on choice seeds (Go generators
// 15110-15119 and othershapes.py 1360-1369, every kind; 1600-1604;
// span 2000-2003; and two kinds written only to look for failures, dim
// 8-bit nuclei of 14-40 counts on 8 and cells of radius 28-60 px, four
// scenes each), object F1: the 8-bit kind 0.957 -> 0.966 (the watershed
// 0.969), span 0.944 -> 0.951, defocus 0.971 -> 0.973, stained 0.946 ->
// 0.948, every other kind identical; without the width test the large
// cells fell 0.937 -> 0.920 (their dim sides were parted), without the
// outline and peak tests defocus fell to 0.933 and hollow cells 0.989 ->
// 0.974.
func remainderMembers(own []float32, px []int, mask []bool, sur surround, b box, w int, level float32, minArea int) []member {
	if sur.n < 16 { // too few to judge a spread
		return nil
	}
	t := sur.median + float32(detectSigmas*sur.sd)
	if !(t < level) {
		return nil
	}
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	kept := make([]bool, cw*ch)
	val := make([]float32, cw*ch)
	idx := make([]int32, cw*ch) // the region's pixel index, -1 outside it
	for c := range idx {
		idx[c] = -1
	}
	for k, i := range px {
		c := (i/w-b.y0)*cw + i%w - b.x0
		val[c], idx[c] = own[k], int32(k)
		kept[c] = own[k] >= level
	}
	near := dilateSquare(kept, cw, ch, remainderMargin)
	cand := make([]int32, cw*ch)
	for c := range cand {
		cand[c] = -1
		if idx[c] >= 0 && !near[c] && val[c] >= t {
			cand[c] = 0
		}
	}
	comp, n := componentsOfGroups(cand, cw, ch, minArea, 1)
	if n == 0 {
		return nil
	}
	pieces := make([][]int, n) // crop indices of each piece, ascending
	for c, l := range comp {
		if l > 0 {
			pieces[l-1] = append(pieces[l-1], c)
		}
	}
	var found []member
	for _, cs := range pieces {
		in := make([]bool, cw*ch)
		for _, c := range cs {
			in[c] = true
		}
		if slices.Max(distanceInside(in, cw, ch)) < remainderDepth {
			continue
		}
		// open: a pixel beside the piece that is neither the piece's
		// nor within the margin of the kept part.
		open := func(c int) bool { return !in[c] && !near[c] }
		outline, contact, peak := false, 0, cs[0]
		for _, c := range cs {
			x, y := c%cw, c/cw
			if x == 0 || y == 0 || x == cw-1 || y == ch-1 || open(c-1) || open(c+1) || open(c-cw) || open(c+cw) {
				outline = true
			}
			if (x > 0 && near[c-1]) || (x < cw-1 && near[c+1]) || (y > 0 && near[c-cw]) || (y < ch-1 && near[c+cw]) {
				contact++
			}
			if val[c] > val[peak] {
				peak = c
			}
		}
		if !outline || float64(contact) >= 2*math.Sqrt(float64(len(cs))/math.Pi) || nearAny(near, cw, ch, peak) {
			continue
		}
		// Crop order is the frame's raster order, so ks ascends as a
		// member's must.
		ks := make([]int32, len(cs))
		for q, c := range cs {
			ks[q] = idx[c]
		}
		found = append(found, memberOf(ks, own))
	}
	return found
}

// nearAny reports whether m is set at crop pixel c or one of its eight
// neighbours (within the cw x ch crop).
func nearAny(m []bool, cw, ch, c int) bool {
	x0, y0 := c%cw, c/cw
	for y := max(y0-1, 0); y <= min(y0+1, ch-1); y++ {
		for x := max(x0-1, 0); x <= min(x0+1, cw-1); x++ {
			if m[y*cw+x] {
				return true
			}
		}
	}
	return false
}

// memberOf makes a member of the region pixels ks (indices into the
// region's pixel list, whose 3x3 means are own): their values and the
// level and median of those.
func memberOf(ks []int32, own []float32) member {
	m := member{ks: ks, vals: make([]float32, len(ks))}
	for q, k := range ks {
		m.vals[q] = own[k]
	}
	sorted := slices.Clone(m.vals)
	slices.Sort(sorted)
	m.level = halfMaxLevel(sorted)
	m.median = sorted[(len(sorted)-1)/2]
	return m
}

// gaussCrop is the Gaussian mean of a frame's contrast over one object's
// box grown by the kernel's reach (cropGaussian).
type gaussCrop struct {
	v          []float32
	x0, y0, gw int
}

// at returns the mean at frame pixel i of a w-wide frame.
func (g gaussCrop) at(i, w int) float32 { return g.v[(i/w-g.y0)*g.gw+i%w-g.x0] }

// cropGaussian returns the Gaussian mean at s px of con over box b grown
// by 3s (the kernel's reach; clipped to the w x h frame), so that the
// frame's reflected border (GaussianSmooth) is far from the box unless
// the object touches the frame.
func cropGaussian(con []float64, b box, w, h int, s float64) gaussCrop {
	m := int(math.Ceil(3 * s))
	g0 := b.grown(m, w, h)
	x0, y0, x1, y1 := g0.x0, g0.y0, g0.x1, g0.y1
	gw, gh := x1-x0+1, y1-y0+1
	g := make([]float32, gw*gh)
	for y := y0; y <= y1; y++ {
		for x := x0; x <= x1; x++ {
			g[(y-y0)*gw+x-x0] = float32(con[y*w+x])
		}
	}
	return gaussCrop{affinity.GaussianSmooth(g, gw, gh, s, 1), x0, y0, gw}
}

// texturedBasin reports whether the pixels px (frame indices of a
// w-wide frame, within box b) with 3x3 means own are textured on their
// own plateau, level/tightenLevel: pixelTexture above textureLimit, the
// test tightenObjects puts to a whole object.
func texturedBasin(own []float32, px []int, b box, w int, level float32) bool {
	tex, _, _ := pixelTexture(own, px, b, w, float64(level)/tightenLevel)
	return tex > textureLimit
}
