package measure

// The region measurements as they were computed before the single pass
// over the label map with per-run moments (as on main at 608075e): kept here
// verbatim so that TestRegionsMatchFormerPasses can check the new code
// against them value for value.

import (
	"cmp"
	"fmt"
	"math"
	"math/big"
	"slices"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

func regionsOld(m labelmap.Map, planes [][]float32, classes []int32) ([]Region, error) {
	labels, w, h := m.Pix, m.Width, m.Height
	if w <= 0 || h <= 0 || len(labels) != w*h {
		return nil, fmt.Errorf("%w: %d labels for %d x %d pixels", ErrSize, len(labels), w, h)
	}
	for k, p := range planes {
		if len(p) != w*h {
			return nil, fmt.Errorf("%w: intensity plane %d has %d values for %d x %d pixels", ErrSize, k, len(p), w, h)
		}
	}
	if classes != nil && len(classes) != w*h {
		return nil, fmt.Errorf("%w: class map has %d values for %d x %d pixels", ErrSize, len(classes), w, h)
	}
	idx := newIndex(labels)
	var accs []*acc
	np := len(planes)
	// Pass 1: area, box, border, class, intensity extremes and sums,
	// row runs.
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			l := labels[i]
			if l <= 0 {
				continue
			}
			k := idx.get(l)
			if k < 0 {
				k = len(accs)
				idx.set(l, k)
				a := &acc{label: l, x0: x, y0: y, x1: x, y1: y, class: -1, stats: make([]Stats, np), dev: make([]float64, np)}
				for c := range a.stats {
					a.stats[c].Min, a.stats[c].Max = math.Inf(1), math.Inf(-1)
				}
				if classes != nil {
					a.class = classes[i]
				}
				accs = append(accs, a)
			}
			a := accs[k]
			a.area++
			a.x0, a.x1, a.y1 = min(a.x0, x), max(a.x1, x), y
			if x == 0 || y == 0 || x == w-1 || y == h-1 {
				a.border = true
			}
			if classes != nil && classes[i] != a.class {
				a.mixed = true
			}
			for c, p := range planes {
				v := float64(p[i])
				if math.IsNaN(v) || math.IsInf(v, 0) {
					continue
				}
				s := &a.stats[c]
				s.Count++
				s.Sum += v
				s.Min, s.Max = math.Min(s.Min, v), math.Max(s.Max, v)
			}
			if n := len(a.runs); n > 0 && a.runs[n-1].y == int32(y) {
				a.runs[n-1].b = int32(x)
			} else {
				a.runs = append(a.runs, run{int32(y), int32(x), int32(x)})
			}
		}
	}
	for _, a := range accs {
		for c := range a.stats {
			s := &a.stats[c]
			if s.Count == 0 {
				s.Mean, s.Min, s.Max, s.Sum = math.NaN(), math.NaN(), math.NaN(), math.NaN()
				continue
			}
			s.Mean = s.Sum / float64(s.Count)
		}
	}
	// Pass 2: moments about the box corner, squared deviations.
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			l := labels[i]
			if l <= 0 {
				continue
			}
			a := accs[idx.get(l)]
			dx, dy := uint64(x-a.x0), uint64(y-a.y0)
			a.sx.add(dx)
			a.sy.add(dy)
			a.sxx.add(dx * dx)
			a.syy.add(dy * dy)
			a.sxy.add(dx * dy)
			for c, p := range planes {
				if v := float64(p[i]); !math.IsNaN(v) && !math.IsInf(v, 0) {
					d := v - a.stats[c].Mean
					a.dev[c] += d * d
				}
			}
		}
	}
	// Crofton perimeter: every 2 x 2 block of the image surrounded by
	// background; (x, y) is its bottom-right pixel.
	at := func(x, y int) int32 {
		if x < 0 || y < 0 || x >= w || y >= h {
			return 0
		}
		return labels[y*w+x]
	}
	for y := 0; y <= h; y++ {
		for x := 0; x <= w; x++ {
			br, tr, bl, tl := at(x, y), at(x, y-1), at(x-1, y), at(x-1, y-1)
			if br == tr && br == bl && br == tl {
				continue
			}
			b := [4]int32{br, tr, bl, tl}
			for j, l := range b {
				if l <= 0 || (j > 0 && b[0] == l) || (j > 1 && b[1] == l) || (j > 2 && b[2] == l) {
					continue // background, or a label already counted in this block
				}
				code := 0
				for k, bit := range [4]int{1, 2, 4, 8} {
					if b[k] == l {
						code |= bit
					}
				}
				accs[idx.get(l)].perim += croftonWeights[code]
			}
		}
	}
	if classes != nil {
		majorityClassesOld(accs, idx, labels, classes)
	}
	// Ascending label order.
	order := idx.order(accs)
	out := make([]Region, 0, len(accs))
	for _, a := range order {
		out = append(out, a.finishOld())
	}
	return out, nil
}

// majorityClasses gives each region whose pixels disagree on their class
// the class most of them hold (the smallest on a tie).
func majorityClassesOld(accs []*acc, idx *index, labels, classes []int32) {
	counts := map[*acc]map[int32]int{}
	for _, a := range accs {
		if a.mixed {
			counts[a] = map[int32]int{}
		}
	}
	if len(counts) == 0 {
		return
	}
	for i, l := range labels {
		if l <= 0 {
			continue
		}
		if c, ok := counts[accs[idx.get(l)]]; ok {
			c[classes[i]]++
		}
	}
	for a, c := range counts {
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
func (a *acc) finishOld() Region {
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
	N := big.NewInt(int64(a.area))
	sx, sy := a.sx.big(), a.sy.big()
	r.CentroidX = float64(a.x0) + ratio(sx, N)
	r.CentroidY = float64(a.y0) + ratio(sy, N)
	central := func(s2 u128, s, t *big.Int) *big.Int {
		v := new(big.Int).Mul(N, s2.big())
		return v.Sub(v, new(big.Int).Mul(s, t))
	}
	cxx, cyy, cxy := central(a.sxx, sx, sx), central(a.syy, sy, sy), central(a.sxy, sx, sy)
	NN := new(big.Int).Mul(N, N)
	// The covariance matrix [[p, q], [q, s]] of the pixel coordinates.
	p, s, q := ratio(cxx, NN), ratio(cyy, NN), ratio(cxy, NN)
	mid, rad := (p+s)/2, math.Hypot((p-s)/2, q)
	l1, l2 := max(mid+rad, 0), max(mid-rad, 0)
	r.MajorAxis, r.MinorAxis = 4*math.Sqrt(l1), 4*math.Sqrt(l2)
	if l1 > 0 {
		r.Eccentricity = math.Sqrt(1 - l2/l1)
	}
	r.Orientation = 0.5 * math.Atan2(2*q, s-p)
	hull := convexHullSorted(a.diamondPoints())
	rows := hullRows(hull, a.y0, a.y1)
	for _, iv := range rows {
		if iv.b >= iv.a {
			r.ConvexArea += int(iv.b - iv.a + 1)
		}
	}
	r.Solidity = n / float64(r.ConvexArea)
	r.FeretMax = maxDistance(convexHullSorted(crackMidpoints(rows, a.y0))) / 2
	return r
}

// convexHullSorted is Andrew's monotone chain (Andrew 1979, "Another efficient
// algorithm for convex hulls in two dimensions", Information Processing
// Letters 9:216-219) in exact integer arithmetic: the hull's vertices
// without collinear points, in order.
func convexHullSorted(ps []pt) []pt {
	slices.SortFunc(ps, func(a, b pt) int {
		if a.x != b.x {
			return cmp.Compare(a.x, b.x)
		}
		return cmp.Compare(a.y, b.y)
	})
	ps = slices.Compact(ps)
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
