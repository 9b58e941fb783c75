package segment

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/internal/unionfind"
)

// member is a dim object inside another object's region (dimMembers):
// its pixels (frame indices, the part of the region that floods from its
// own peak down to the saddle where it meets a brighter part) and its own
// outline level.
type member struct {
	pix    []int
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
// its own. The region is flooded from the top (the component tree of
// the upper level sets, as in the morphological dynamics of Grimaud 1992,
// "A new measure of contrast: the dynamics", Proc. SPIE 1769; cited from
// memory): its pixels are
// taken in decreasing order of the Gaussian mean of the contrast at
// textureFill (gauss, the region's cropGaussian; crop pixels beyond the
// region ignored), each joining the
// 4-connected components of those taken before, with union-find. When
// two components meet at a pixel of value s, the one with the lower peak
// p is a member when
//
//   - s < tightenLevel·p: the saddle between them lies below its half
//     maximum, so its half-maximum outline closes around it alone (a
//     shoulder on a brighter object's slope, or its halo, has no such
//     saddle and stays part of it);
//   - p < plateau, the region's plateau (level/tightenLevel): it is
//     dimmer than the object the level was drawn for;
//   - it has at least minArea pixels.
//
// Its own level is halfMaxLevel of the 3x3 means sm(i) over its pixels, as
// for any object (tightenObjects then takes the level of the rest of the
// region without the members' pixels, since a large dim member pulls the
// region's plateau down and the bright object's outline out). Members
// are returned innermost first: a member found inside a larger one keeps
// its pixels (callers give each pixel to the first member holding it).
// px are the region's pixels (frame indices), b its box, w x h the frame.
func dimMembers(sm func(i int) float32, gauss func() gaussCrop, px []int, b box, w, h int, level float32, minArea int) []member {
	plateau := float64(level) / tightenLevel
	if len(px) < 2*minArea || !(plateau > 0) {
		return nil
	}
	g := gauss()
	cw, ch := b.x1-b.x0+1, b.y1-b.y0+1
	at := make([]int32, cw*ch) // crop pixel -> index in px, or -1
	for i := range at {
		at[i] = -1
	}
	val := make([]float32, len(px))
	for k, i := range px {
		x, y := i%w, i/w
		at[(y-b.y0)*cw+x-b.x0] = int32(k)
		val[k] = g.at(i, w)
	}
	order := make([]int32, len(px))
	for k := range order {
		order[k] = int32(k)
	}
	slices.SortStableFunc(order, func(a, b int32) int {
		switch {
		case val[a] > val[b]:
			return -1
		case val[a] < val[b]:
			return 1
		}
		return 0
	})
	f := unionfind.New(len(px))
	on := make([]bool, len(px))
	peak := make([]float32, len(px))
	// Each root's pixels, the smaller list appended to the larger
	// (O(n log n) copies in all).
	pixels := make([][]int32, len(px))
	var found []member
	for _, k := range order {
		on[k], peak[k], pixels[k] = true, val[k], []int32{k}
		c := px[k]
		x, y := c%w-b.x0, c/w-b.y0
		for _, d := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
			xx, yy := x+d[0], y+d[1]
			if xx < 0 || yy < 0 || xx >= cw || yy >= ch {
				continue
			}
			j := at[yy*cw+xx]
			if j < 0 || !on[j] {
				continue
			}
			ra, rb := f.Find(k), f.Find(j)
			if ra == rb {
				continue
			}
			hi, lo := ra, rb
			if peak[lo] > peak[hi] || (peak[lo] == peak[hi] && lo < hi) {
				hi, lo = lo, hi
			}
			if s := float64(val[k]); s < tightenLevel*float64(peak[lo]) && float64(peak[lo]) < plateau && len(pixels[lo]) >= minArea {
				found = append(found, memberOf(pixels[lo], px, sm))
			}
			if len(pixels[hi]) < len(pixels[lo]) {
				pixels[hi], pixels[lo] = pixels[lo], pixels[hi]
			}
			pixels[hi] = append(pixels[hi], pixels[lo]...)
			pixels[lo] = nil
			f[lo] = hi
		}
	}
	return found
}

// memberOf makes a member of the region pixels ks (indices into px): its
// frame pixels and the level and median of sm over them.
func memberOf(ks []int32, px []int, sm func(i int) float32) member {
	m := member{pix: make([]int, len(ks))}
	vals := make([]float32, len(ks))
	for q, k := range ks {
		m.pix[q] = px[k]
		vals[q] = sm(px[k])
	}
	slices.Sort(m.pix)
	slices.Sort(vals)
	m.level = halfMaxLevel(vals)
	m.median = vals[(len(vals)-1)/2]
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
