package segment

import (
	"math"

	"github.com/cleave-seg/cleave/segment/internal/unionfind"
)

// distanceInside returns, for each pixel of a cw x ch mask, the Euclidean
// distance from its centre to the centre of the nearest pixel outside the
// mask, where everything beyond the crop counts as outside; pixels outside
// the mask get 0. It is the exact Euclidean distance transform computed
// by Felzenszwalb and Huttenlocher's lower envelope of parabolas, one pass
// over the columns and one over the rows (Felzenszwalb and Huttenlocher
// 2012, Distance transforms of sampled functions, Theory of Computing 8),
// in O(cw·ch); on the binary mask the column pass reduces to two scans of
// each column.
func distanceInside(mask []bool, cw, ch int) []float64 {
	// Pad by one pixel of outside on every side so that the crop border
	// counts as outside.
	pw, ph := cw+2, ch+2
	f := make([]float64, pw*ph)
	inf := float64(pw*pw + ph*ph)
	for y := 0; y < ch; y++ {
		for x := 0; x < cw; x++ {
			if mask[y*cw+x] {
				f[(y+1)*pw+x+1] = inf
			}
		}
	}
	n := max(pw, ph)
	buf := make([]float64, n)
	out := make([]float64, n)
	v := make([]int, n)
	z := make([]float64, n+1)
	// The column pass on a binary f (0 outside, inf inside) is the
	// squared distance to the nearest outside pixel of the column: two
	// scans, down and up, give it exactly (the padding rows are outside,
	// so every column has one), as the lower envelope would.
	gap := make([]int, ph)
	for x := 1; x < pw-1; x++ { // columns; the padding columns stay 0
		last := 0
		for y := 1; y < ph; y++ {
			if f[y*pw+x] == 0 {
				last = y
			}
			gap[y] = y - last
		}
		next := ph - 1
		for y := ph - 2; y > 0; y-- {
			i := y*pw + x
			if f[i] == 0 {
				next = y
				continue
			}
			g := min(gap[y], next-y)
			f[i] = float64(g * g)
		}
	}
	for y := 0; y < ph; y++ { // rows
		row := f[y*pw : (y+1)*pw]
		copy(buf, row)
		envelope(buf[:pw], out[:pw], v, z)
		copy(row, out[:pw])
	}
	d := make([]float64, cw*ch)
	for y := 0; y < ch; y++ {
		for x := 0; x < cw; x++ {
			if mask[y*cw+x] {
				d[y*cw+x] = math.Sqrt(f[(y+1)*pw+x+1])
			}
		}
	}
	return d
}

// envelope computes d(q) = min_p ((q-p)² + f(p)) for the sampled function
// f (the one-dimensional squared distance transform of Felzenszwalb and
// Huttenlocher 2012, algorithm DT(f)); v and z are scratch of length
// len(f) and len(f)+1. Samples are finite (inside pixels hold a value
// above any squared distance in the crop, so no Inf - Inf arises).
func envelope(f, d []float64, v []int, z []float64) {
	n := len(f)
	k := 0
	v[0] = 0
	z[0], z[1] = math.Inf(-1), math.Inf(1)
	for q := 1; q < n; q++ {
		s := parabolaCut(f, q, v[k])
		for s <= z[k] { // z[0] = -Inf ends the loop
			k--
			s = parabolaCut(f, q, v[k])
		}
		k++
		v[k] = q
		z[k] = s
		z[k+1] = math.Inf(1)
	}
	k = 0
	for q := 0; q < n; q++ {
		for z[k+1] < float64(q) {
			k++
		}
		dq := float64(q - v[k])
		d[q] = dq*dq + f[v[k]]
	}
}

// parabolaCut is the abscissa where the parabolas rooted at q and p
// (q > p) of the lower envelope intersect.
func parabolaCut(f []float64, q, p int) float64 {
	return ((f[q] + float64(q*q)) - (f[p] + float64(p*p))) / float64(2*q-2*p)
}

// neckDepth measures how deeply the distance map d of a shape (inside
// pixels > 0, from distanceInside) is pinched between two of its maxima:
// flooding d from the top (8-neighbours), each connected piece above a
// level starts at a maximum of peak value p; where two pieces meet at a
// saddle of value s, the lower piece ends with the relative depth
//
//	(p - s) / p,  distances measured to the boundary (value - 1/2),
//
// and neckDepth returns the largest such depth (0 for a shape with one
// maximum). This is the persistence of the maxima of the distance map,
// the quantity the h-maxima transform thresholds when markers are chosen
// for a watershed of touching objects (Soille 2003, Morphological Image
// Analysis, 2nd ed., section 6.3), taken relative to the peak so that it
// does not depend on size. For two discs of radius R whose centres are d
// apart it is 1 - sqrt(1 - (d/2R)²) (closed form from the chord at the
// saddle); a convex shape has 0.
func neckDepth(d []float64, cw, ch int) float64 {
	return deepestNeck(d, cw, ch, 0).depth
}

// neckNoise is the deepest dip, in pixels, that digitizing a shape
// without a neck leaves in its distance map: the sampled distance along a
// straight ridge (a capsule, a rod, a bar) rises and falls with the
// pixel grid. Measured by cleave on 3,000 digitized capsules (radius 2-20
// px, straight length 0-80 px, random angle and sub-pixel offset): the
// largest p - s was 1.000 px (median 0.35 px), on 2,000 digitized
// ellipses 0.88 px; a neck must be deeper than this to count. Two
// touching discs of radius R (centres 2R apart) have a neck R deep, so
// pairs of objects of radius above about 2 px keep theirs. A shallower
// neck is taken only with other evidence (refineOne: a seam in contrast
// along the split).
const neckNoise = 1.0

// neck is the deepest neck of a distance map: its relative depth (see
// neckDepth) and the peak pixels of the two pieces that meet there (-1
// when the shape has one maximum).
type neck struct {
	depth        float64 // relative depth (p - s) / (p - 1/2)
	drop         float64 // absolute depth p - s in pixels
	peakA, peakB int
}

// deepestNeck floods d from the top as neckDepth describes and returns
// the merge of greatest relative depth among those more than floor
// pixels deep (absolute depth p - s), with the peak pixels of its two
// pieces.
func deepestNeck(d []float64, cw, ch int, floor float64) neck {
	return deepestNecks(d, cw, ch, floor)[0]
}

// deepestNecks is deepestNeck for several floors at once, from one
// flood.
func deepestNecks(d []float64, cw, ch int, floors ...float64) []neck {
	best := make([]neck, len(floors))
	for f := range best {
		best[f] = neck{peakA: -1, peakB: -1}
	}
	floodMerges(d, cw, ch, floodOrder(d), func(i int, ta, tb int32) {
		// The lower of the two pieces ends here, at saddle d[i].
		lo := min(d[ta], d[tb])
		if p := lo - 0.5; p > 0 {
			r := (lo - d[i]) / p
			for f, floor := range floors {
				if lo-d[i] > floor && r > best[f].depth {
					best[f] = neck{depth: r, drop: lo - d[i], peakA: int(ta), peakB: int(tb)}
				}
			}
		}
	})
	return best
}

// floodMerges floods the inside pixels of d (d > 0, crop cw x ch) in
// order, descending distance with ties by index (floodOrder), joining
// each to its flooded 8-neighbours' pieces (union-find), and calls merge
// wherever two pieces meet: at pixel i, the saddle, with the peak pixels
// ta of the piece i belongs to so far and tb of the other, in the
// neighbours' raster order. The piece of the lower peak joins the other
// (of equal peaks, tb's joins ta's). It returns the peak pixel of the
// piece holding the first pixel of order when the flood is done (-1 for
// an empty order). deepestNecks and neckPartition read the merges.
func floodMerges(d []float64, cw, ch int, order []int32, merge func(i int, ta, tb int32)) int32 {
	if len(order) == 0 {
		return -1
	}
	parent := make(unionfind.Forest, len(d))
	for i := range parent {
		parent[i] = -1 // not flooded yet
	}
	top := make([]int32, len(d)) // root -> its peak pixel
	find := parent.Find
	// The 8 neighbours in raster order (the order the pieces merge in).
	nbX := [8]int8{-1, 0, 1, -1, 1, -1, 0, 1}
	nbY := [8]int8{-1, -1, -1, 0, 0, 1, 1, 1}
	var nb [8]int
	for k := range nb {
		nb[k] = int(nbY[k])*cw + int(nbX[k])
	}
	for _, o := range order {
		i := int(o)
		parent[i] = int32(i)
		top[i] = int32(i)
		ri := int32(i) // the root of i's piece, kept through the unions below
		x, y := i%cw, i/cw
		interior := x > 0 && y > 0 && x < cw-1 && y < ch-1
		for k, off := range nb {
			if !interior {
				xx, yy := x+int(nbX[k]), y+int(nbY[k])
				if xx < 0 || yy < 0 || xx >= cw || yy >= ch {
					continue
				}
			}
			j := i + off
			if parent[j] < 0 {
				continue
			}
			a, b := ri, find(int32(j))
			if a == b {
				continue
			}
			merge(i, top[a], top[b])
			if d[top[a]] >= d[top[b]] {
				parent[b] = a
			} else {
				parent[a] = b
				ri = b
			}
		}
	}
	return top[find(order[0])]
}

// splitAtNeck divides a shape (distance map d, inside pixels > 0) in two
// at its deepest neck n: a watershed of -d from the two peak pixels
// (Meyer's flooding by a priority queue, highest distance first, ties by
// pixel index, 8-neighbours), the marker-controlled watershed of the
// distance transform that the classical pipeline for touching objects
// uses (Soille 2003, section 9.3), here with only the two markers the
// neck separates. It returns side 1 or 2 per pixel (0 outside).
func splitAtNeck(d []float64, cw, ch int, n neck) []uint8 {
	side := make([]uint8, len(d))
	side[n.peakA], side[n.peakB] = 1, 2
	floodFrom(d, cw, ch, side, []int32{int32(n.peakA), int32(n.peakB)})
	return side
}

// floodFrom is the marker-controlled watershed of -d (Meyer's flooding by
// a priority queue, highest distance first, ties by pixel index,
// 8-neighbours; Soille 2003, section 9.3): lab holds a nonzero label at
// each of the marker pixels and 0 elsewhere, and every inside pixel (d >
// 0) a marker's flood reaches takes the label of the pixel it was
// reached from. The queue's order is strict, so the result does not
// depend on the markers' order.
func floodFrom[L uint8 | int32](d []float64, cw, ch int, lab []L, markers []int32) {
	q := floodQueue{d: d}
	for _, p := range markers {
		q.push(p)
	}
	for len(q.pix) > 0 {
		i := int(q.pop())
		x, y := i%cw, i/cw
		for dy := -1; dy <= 1; dy++ {
			for dx := -1; dx <= 1; dx++ {
				xx, yy := x+dx, y+dy
				if (dx == 0 && dy == 0) || xx < 0 || yy < 0 || xx >= cw || yy >= ch {
					continue
				}
				j := yy*cw + xx
				if d[j] > 0 && lab[j] == 0 {
					lab[j] = lab[i]
					q.push(int32(j))
				}
			}
		}
	}
}

// floodQueue is a binary heap of pixels (Williams 1964), highest
// distance first, then lowest index: a strict total order, so the pixels
// come out in one order whatever the heap's layout.
type floodQueue struct {
	d   []float64
	pix []int32
}

// before reports whether pixel a comes out before pixel b.
func (q *floodQueue) before(a, b int32) bool {
	da, db := q.d[a], q.d[b]
	if da != db {
		return da > db
	}
	return a < b
}

func (q *floodQueue) push(p int32) {
	q.pix = append(q.pix, p)
	h := q.pix
	for c := len(h) - 1; c > 0; {
		up := (c - 1) / 2
		if !q.before(h[c], h[up]) {
			break
		}
		h[c], h[up] = h[up], h[c]
		c = up
	}
}

func (q *floodQueue) pop() int32 {
	h := q.pix
	top := h[0]
	last := len(h) - 1
	h[0] = h[last]
	h = h[:last]
	q.pix = h
	for c := 0; ; {
		l := 2*c + 1
		if l >= len(h) {
			break
		}
		m := l
		if r := l + 1; r < len(h) && q.before(h[r], h[l]) {
			m = r
		}
		if !q.before(h[m], h[c]) {
			break
		}
		h[c], h[m] = h[m], h[c]
		c = m
	}
	return top
}

// floodOrder returns the pixels i with d[i] > 0 in descending order of
// d, ties by ascending index. For positive floats the IEEE 754 bit
// patterns order as the values do, so the pixels are sorted by the
// complement of d's bits (radixSortKeyed), stable from index order:
// ties keep ascending indices. Each key is read from d once and moved
// with its pixel. A map
// whose values are all square roots of integers (distanceInside's) is
// ordered by floodOrderRadii instead.
func floodOrder(d []float64) []int32 {
	if order, ok := floodOrderRadii(d); ok {
		return order
	}
	var keys []keyed
	for i, v := range d {
		if v > 0 {
			keys = append(keys, keyed{^math.Float64bits(v), int32(i)})
		}
	}
	if len(keys) == 0 {
		return nil
	}
	keys = radixSortKeyed(keys)
	order := make([]int32, len(keys))
	for k, e := range keys {
		order[k] = e.idx
	}
	return order
}

// floodOrderRadii is floodOrder for a map whose positive values are all
// square roots of integers m (the Euclidean distances between pixel
// centres that distanceInside returns): a counting sort on m (Knuth,
// TAOCP vol. 3, section 5.2), stable from index order, in one pass to
// count and one to place. The square root is monotone and, rounded
// correctly (IEEE 754), takes distinct integers below 2^52 to distinct
// values, so the order and its ties are floodOrder's. It reports false,
// and returns nothing, when a value is not such a root or the largest m
// exceeds 4 (len(d) + 64), where the counts would cost more than the
// radix passes.
func floodOrderRadii(d []float64) ([]int32, bool) {
	limit := 4 * (len(d) + 64)
	sq := make([]int32, len(d))
	n, top := 0, 0
	for i, v := range d {
		if !(v > 0) {
			continue
		}
		if v*v > float64(limit) {
			return nil, false
		}
		m := int(v*v + 0.5)
		if math.Sqrt(float64(m)) != v {
			return nil, false
		}
		sq[i] = int32(m)
		top = max(top, m)
		n++
	}
	if n == 0 {
		return nil, true
	}
	start := make([]int, top+2)
	for i, v := range d {
		if v > 0 {
			start[top-int(sq[i])+1]++ // descending m
		}
	}
	for k := 1; k < len(start); k++ {
		start[k] += start[k-1]
	}
	order := make([]int32, n)
	for i, v := range d {
		if v > 0 {
			k := top - int(sq[i])
			order[start[k]] = int32(i)
			start[k]++
		}
	}
	return order, true
}

// keyed is a sort key and the index it belongs to (radixSortKeyed).
type keyed struct {
	key uint64
	idx int32
}

// radixSortKeyed sorts keys by key, stably, with an LSD radix sort
// (Knuth, TAOCP vol. 3, section 5.2.5) of eight bits a pass; the eight
// byte histograms are counted in one pass over the keys, and a pass over
// a byte that every key shares is skipped. It returns the sorted keys,
// in keys' array or in one of its own length.
func radixSortKeyed(keys []keyed) []keyed {
	if len(keys) == 0 {
		return keys
	}
	var count [8][256]int
	for _, e := range keys {
		k := e.key
		for b := range count {
			count[b][k&0xff]++
			k >>= 8
		}
	}
	tmp := make([]keyed, len(keys))
	for b := range count {
		c := &count[b]
		if c[(keys[0].key>>(8*b))&0xff] == len(keys) {
			continue // every key has this byte
		}
		sum := 0
		for v, n := range c {
			c[v] = sum
			sum += n
		}
		shift := uint(8 * b)
		for _, e := range keys {
			v := (e.key >> shift) & 0xff
			tmp[c[v]] = e
			c[v]++
		}
		keys, tmp = tmp, keys
	}
	return keys
}

// neckScaleFactor is how far the typical peak of a neck partition's
// pieces may lie from the image's object radius, as a factor either way:
// the peak of the distance map of a disc of radius R is about R, of an
// ellipse its minor half-axis, and the objects of a cluster are of the
// image's kind; a factor of two spans the radii of one kind of object in
// a field (othershapes.py dense: 7-12 px). Our choice.
const neckScaleFactor = 2

// neckPartition divides a shape (distance map d, inside pixels > 0, crop
// cw x ch) at all its necks at once, where neckPieces would divide it one
// neck at a time: the pixels are flooded from the top as in deepestNecks,
// and where two pieces meet at a saddle s the lower, of peak p, is kept
// as a piece of its own when its neck is deep enough to part two objects
// by its depth alone, p - s > neckNoise and (p - s)/(p - 1/2) >=
// refineNeckAlone (neckPieces' rule); it merges into the other otherwise.
// This is the selection of markers by their dynamics (the h-maxima of the
// distance transform, Soille 2003, Morphological Image Analysis, 2nd ed.,
// section 6.3) with cleave's relative floor beside the absolute one. The
// pieces' peaks are then the markers of a watershed of -d (Meyer's
// flooding, as splitAtNeck, with as many markers as pieces; section 9.3
// there).
//
// It returns the piece (0..n-1) of every pixel, -1 outside, and the count
// n, or nil and 0 unless there are at least minPieces pieces (and two),
// every piece holds at least minPart pixels and is compact (compactSide
// of its area and peak), and the median of the pieces' peaks lies within
// a factor neckScaleFactor of radius, the image's object radius
// (ObjectRadius; 0 or less: no partition). A chain or a cluster of
// touching objects is parted into its objects, while a vessel or a
// ragged outline, whose pieces between necks are long, and a region
// whose blobs are not of the image's objects' size (the paper between
// the lines of a printed page taken for the object class) are left to
// the cut. The cost is that of the flood, about linear in the pixels,
// against one eigensolve a split for the cut.
func neckPartition(d []float64, cw, ch int, minPart, minPieces int, radius float64) ([]int32, int) {
	if !(radius > 0) {
		return nil, 0
	}
	var markers []int32 // peaks of the pieces kept apart
	last := floodMerges(d, cw, ch, floodOrder(d), func(i int, ta, tb int32) {
		// The lower piece ends here and joins the other (of equal
		// peaks, tb's joins ta's, as floodMerges does).
		lo, low := d[tb], tb
		if d[ta] < d[tb] {
			lo, low = d[ta], ta
		}
		if drop := lo - d[i]; lo > 0.5 && drop > neckNoise && drop/(lo-0.5) >= refineNeckAlone {
			markers = append(markers, low)
		}
	})
	if len(markers)+1 < max(minPieces, 2) {
		return nil, 0
	}
	// The highest peak of all is the last piece's.
	markers = append(markers, last)
	// Flood with labels 1..n (0: not reached), then make them 0..n-1,
	// -1 outside.
	piece := make([]int32, len(d))
	for m, p := range markers {
		piece[p] = int32(m) + 1
	}
	floodFrom(d, cw, ch, piece, markers)
	area := make([]int, len(markers))
	for i, p := range piece {
		if p > 0 {
			area[p-1]++
		} else if d[i] > 0 {
			return nil, 0 // a second component: no marker reached it
		}
		piece[i] = p - 1
	}
	peaks := make([]float64, len(markers))
	for m, p := range markers {
		if area[m] < minPart || !compactSide(area[m], d[p]) {
			return nil, 0
		}
		peaks[m] = d[p]
	}
	if med := medianOf(peaks); med < radius/neckScaleFactor || med > radius*neckScaleFactor {
		return nil, 0
	}
	return piece, len(markers)
}
