package measure

import (
	"math"
	"math/big"
	"math/bits"
	"slices"
	"sort"
)

// index maps labels to region slots: a dense table when the labels are
// not much larger than the image, a map otherwise (a label map with a few
// huge label values must not allocate a table of their size).
type index struct {
	dense  []int32
	sparse map[int32]int
}

func newIndex(labels []int32) *index {
	var m int32
	for _, l := range labels {
		m = max(m, l)
	}
	if int64(m) <= int64(len(labels))+1 {
		d := make([]int32, int(m)+1)
		for i := range d {
			d[i] = -1
		}
		return &index{dense: d}
	}
	return &index{sparse: map[int32]int{}}
}

func (x *index) get(l int32) int {
	if x.dense != nil {
		return int(x.dense[l])
	}
	if k, ok := x.sparse[l]; ok {
		return k
	}
	return -1
}

func (x *index) set(l int32, k int) {
	if x.dense != nil {
		x.dense[l] = int32(k)
		return
	}
	x.sparse[l] = k
}

// order returns the regions in ascending label order.
func (x *index) order(accs []*acc) []*acc {
	out := slices.Clone(accs)
	sort.Slice(out, func(i, j int) bool { return out[i].label < out[j].label })
	return out
}

// majorityClasses gives each region whose pixels disagree on their class
// the class most of them hold (the smallest on a tie), counting over the
// row spans of those regions alone.
func majorityClasses(accs []*acc, labels, classes []int32, w int) {
	for _, a := range accs {
		if !a.mixed {
			continue
		}
		c := map[int32]int{}
		for _, r := range a.runs {
			i0 := int(r.y) * w
			for i := i0 + int(r.a); i <= i0+int(r.b); i++ {
				if labels[i] == a.label {
					c[classes[i]]++
				}
			}
		}
		best, bn := int32(0), -1
		for cl, n := range c {
			if n > bn || (n == bn && cl < best) {
				best, bn = cl, n
			}
		}
		a.class = best
	}
}

// finish turns the sums of a region into its measurements.
func (a *acc) finish() Region {
	n := float64(a.area)
	r := Region{Label: a.label, Area: a.area, MinX: a.x0, MinY: a.y0, MaxX: a.x1, MaxY: a.y1,
		Perimeter: a.perim, TouchesBorder: a.border, Class: a.class, Intensity: a.stats}
	for c := range r.Intensity {
		r.Intensity[c].Std = math.Sqrt(a.dev[c] / float64(r.Intensity[c].Count)) // NaN for no count
	}
	r.EquivDiameter = math.Sqrt(4 * n / math.Pi)
	if a.perim > 0 {
		r.Circularity = 4 * math.Pi * n / (a.perim * a.perim)
	}
	// Exact central moments times A: A Sxx - Sx^2 and so on.
	cx, cy, p, s, q, ok := a.smallMoments()
	if !ok {
		N := big.NewInt(int64(a.area))
		sx, sy := a.sx.big(), a.sy.big()
		cx, cy = ratio(sx, N), ratio(sy, N)
		central := func(s2 u128, s, t *big.Int) *big.Int {
			v := new(big.Int).Mul(N, s2.big())
			return v.Sub(v, new(big.Int).Mul(s, t))
		}
		cxx, cyy, cxy := central(a.sxx, sx, sx), central(a.syy, sy, sy), central(a.sxy, sx, sy)
		NN := new(big.Int).Mul(N, N)
		// The covariance matrix [[p, q], [q, s]] of the pixel coordinates.
		p, s, q = ratio(cxx, NN), ratio(cyy, NN), ratio(cxy, NN)
	}
	r.CentroidX = float64(a.x0) + cx
	r.CentroidY = float64(a.y0) + cy
	mid, rad := (p+s)/2, math.Hypot((p-s)/2, q)
	l1, l2 := max(mid+rad, 0), max(mid-rad, 0)
	r.MajorAxis, r.MinorAxis = 4*math.Sqrt(l1), 4*math.Sqrt(l2)
	if l1 > 0 {
		r.Eccentricity = math.Sqrt(1 - l2/l1)
	}
	r.Orientation = 0.5 * math.Atan2(2*q, s-p)
	hull := convexHull(a.diamondPoints())
	rows := hullRows(hull, a.y0, a.y1)
	for _, iv := range rows {
		if iv.b >= iv.a {
			r.ConvexArea += int(iv.b - iv.a + 1)
		}
	}
	r.Solidity = n / float64(r.ConvexArea)
	r.FeretMax = maxDistance(convexHull(crackMidpoints(rows, a.y0))) / 2
	return r
}

// exactFloat is the largest integer below which every integer is a
// float64 (2^53).
const exactFloat = 1 << 53

// smallMoments is the centroid offsets Sx / A, Sy / A and the covariance
// entries p = (A Sxx - Sx^2) / A^2, s = (A Syy - Sy^2) / A^2 and q = (A
// Sxy - Sx Sy) / A^2 of the region, as ratio rounds them, when every
// product fits in 64 bits and every numerator and denominator is below
// 2^53 (ok): the integers are then exact in float64 and one IEEE 754
// division rounds their quotient to the nearest float64, ties to even,
// which is what big.Rat's Float64 gives. ok is false otherwise (large
// regions), for the exact path.
func (a *acc) smallMoments() (cx, cy, p, s, q float64, ok bool) {
	n := uint64(a.area)
	if a.sx.hi|a.sy.hi|a.sxx.hi|a.syy.hi|a.sxy.hi != 0 || n >= 1<<26 {
		return 0, 0, 0, 0, 0, false
	}
	central := func(s2, u, v uint64) (int64, bool) {
		h1, l1 := bits.Mul64(n, s2)
		h2, l2 := bits.Mul64(u, v)
		if h1 != 0 || h2 != 0 || l1 >= 1<<63 || l2 >= 1<<63 {
			return 0, false
		}
		d := int64(l1) - int64(l2)
		if d <= -exactFloat || d >= exactFloat {
			return 0, false
		}
		return d, true
	}
	sx, sy := a.sx.lo, a.sy.lo
	cxx, ok1 := central(a.sxx.lo, sx, sx)
	cyy, ok2 := central(a.syy.lo, sy, sy)
	cxy, ok3 := central(a.sxy.lo, sx, sy)
	if !ok1 || !ok2 || !ok3 || sx >= exactFloat || sy >= exactFloat {
		return 0, 0, 0, 0, 0, false
	}
	N, NN := float64(n), float64(n*n) // n < 2^26: n^2 < 2^52
	return float64(sx) / N, float64(sy) / N, float64(cxx) / NN, float64(cyy) / NN, float64(cxy) / NN, true
}

// ratio is num / den rounded to float64 (den > 0).
func ratio(num, den *big.Int) float64 {
	f, _ := new(big.Rat).SetFrac(num, den).Float64()
	return f
}

// pt is a point in doubled coordinates (2x, 2y), so that pixel centres
// and the midpoints of pixel edges are integers.
type pt struct{ x, y int64 }

// diamondPoints are the midpoints of the four edges of the first and
// last pixel of each row run: their convex hull is that of the midpoints
// of every pixel of the region (a pixel between two others of its row
// adds nothing).
func (a *acc) diamondPoints() []pt {
	ps := make([]pt, 0, 8*len(a.runs))
	for _, r := range a.runs {
		y := 2 * int64(r.y)
		for _, x := range [2]int64{2 * int64(r.a), 2 * int64(r.b)} {
			ps = append(ps, pt{x - 1, y}, pt{x + 1, y}, pt{x, y - 1}, pt{x, y + 1})
		}
	}
	return ps
}

func cross(o, a, b pt) int64 { return (a.x-o.x)*(b.y-o.y) - (a.y-o.y)*(b.x-o.x) }

// convexHull is Andrew's monotone chain (Andrew 1979, "Another efficient
// algorithm for convex hulls in two dimensions", Information Processing
// Letters 9:216-219) in exact integer arithmetic: the hull's vertices
// without collinear points, in order. The points of a region lie on few
// rows, so instead of a sort by coordinates only the leftmost and
// rightmost point of each row are kept (the others lie between them and
// are never vertices), which lists them in order of (y, x) with one pass
// over the points; the chain runs along y, giving the same vertices as a
// run along x, in the other turning direction.
func convexHull(ps []pt) []pt {
	if len(ps) == 0 {
		return ps
	}
	y0, y1 := ps[0].y, ps[0].y
	for _, p := range ps {
		y0, y1 = min(y0, p.y), max(y1, p.y)
	}
	n := int(y1 - y0 + 1)
	ext := make([]int64, 2*n) // per row: the smallest x, the largest x
	for k := 0; k < n; k++ {
		ext[2*k], ext[2*k+1] = math.MaxInt64, math.MinInt64
	}
	for _, p := range ps {
		k := 2 * int(p.y-y0)
		ext[k], ext[k+1] = min(ext[k], p.x), max(ext[k+1], p.x)
	}
	sorted := ps[:0] // the extremes use no more room than the points
	for k := 0; k < n; k++ {
		lo, hi := ext[2*k], ext[2*k+1]
		if lo > hi {
			continue
		}
		sorted = append(sorted, pt{lo, y0 + int64(k)})
		if hi > lo {
			sorted = append(sorted, pt{hi, y0 + int64(k)})
		}
	}
	ps = sorted
	if len(ps) < 3 {
		return ps
	}
	h := make([]pt, 0, 2*len(ps))
	for _, p := range ps {
		for len(h) >= 2 && cross(h[len(h)-2], h[len(h)-1], p) <= 0 {
			h = h[:len(h)-1]
		}
		h = append(h, p)
	}
	lower := len(h) + 1
	for i := len(ps) - 2; i >= 0; i-- {
		p := ps[i]
		for len(h) >= lower && cross(h[len(h)-2], h[len(h)-1], p) <= 0 {
			h = h[:len(h)-1]
		}
		h = append(h, p)
	}
	return h[:len(h)-1]
}

// interval is the first and last pixel column of a row of the convex
// image (empty when b < a).
type interval struct{ a, b int64 }

// hullRows returns, for each pixel row y0..y1, the columns whose pixel
// centres lie inside or on the hull polygon (doubled coordinates): the
// convex image of scikit-image's convex_hull_image, which counts points
// on the hull's edges as inside. Exact: edge crossings are rationals.
func hullRows(hull []pt, y0, y1 int) []interval {
	rows := make([]interval, y1-y0+1)
	for k := range rows {
		Y := 2 * int64(y0+k)
		lo, hi := int64(math.MaxInt64), int64(math.MinInt64)
		for i := range hull {
			p, q := hull[i], hull[(i+1)%len(hull)]
			if p.y == q.y {
				if p.y == Y {
					lo, hi = min(lo, ceilDiv(min(p.x, q.x), 2)), max(hi, floorDiv(max(p.x, q.x), 2))
				}
				continue
			}
			if Y < min(p.y, q.y) || Y > max(p.y, q.y) {
				continue
			}
			// X = p.x + (Y - p.y)(q.x - p.x)/(q.y - p.y) = num/den.
			den := q.y - p.y
			num := p.x*den + (Y-p.y)*(q.x-p.x)
			if den < 0 {
				num, den = -num, -den
			}
			lo, hi = min(lo, ceilDiv(num, 2*den)), max(hi, floorDiv(num, 2*den))
		}
		rows[k] = interval{lo, hi}
		if lo == math.MaxInt64 {
			rows[k] = interval{1, 0}
		}
	}
	return rows
}

func floorDiv(a, b int64) int64 {
	q := a / b
	if (a%b != 0) && ((a < 0) != (b < 0)) {
		q--
	}
	return q
}

func ceilDiv(a, b int64) int64 { return -floorDiv(-a, b) }

// crackMidpoints returns the midpoints (doubled coordinates) of the
// pixel edges between the convex image (rows, from row y0) and the rest;
// along a row of edges only the two ends are kept, as only they can be
// vertices of the points' hull.
func crackMidpoints(rows []interval, y0 int) []pt {
	var ps []pt
	empty := interval{1, 0}
	get := func(k int) interval {
		if k < 0 || k >= len(rows) {
			return empty
		}
		return rows[k]
	}
	// addRange adds the ends of the columns of r not in o, at height Y.
	addRange := func(r, o interval, Y int64) {
		add := func(a, b int64) {
			if a <= b {
				ps = append(ps, pt{2 * a, Y}, pt{2 * b, Y})
			}
		}
		if o.b < o.a {
			add(r.a, r.b)
			return
		}
		add(r.a, min(r.b, o.a-1))
		add(max(r.a, o.b+1), r.b)
	}
	for k, r := range rows {
		if r.b < r.a {
			continue
		}
		Y := 2 * int64(y0+k)
		ps = append(ps, pt{2*r.a - 1, Y}, pt{2*r.b + 1, Y})
		addRange(r, get(k-1), Y-1)
		addRange(r, get(k+1), Y+1)
	}
	return ps
}

// maxDistance is the largest distance between two of the points (all
// pairs: hulls of pixel sets have few vertices).
func maxDistance(ps []pt) float64 {
	var best float64
	for i := range ps {
		for j := i + 1; j < len(ps); j++ {
			dx, dy := float64(ps[i].x-ps[j].x), float64(ps[i].y-ps[j].y)
			best = max(best, dx*dx+dy*dy)
		}
	}
	return math.Sqrt(best)
}
