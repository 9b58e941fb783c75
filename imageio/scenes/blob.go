package scenes

import (
	"math"
	"math/rand/v2"
)

// blob is an irregular star-shaped outline around (cx, cy) with radius
//
//	r(φ) = r0·(1 + Σ_{k=2..6} amp_k cos(kφ + ph_k)),
//
// a radial harmonic perturbation of a circle: k = 2 elongates it, k = 3..6
// give the dents and bulges of real nuclei and pits. The amplitudes sum to
// less than 1/2, so r(φ) > r0/2 and the shape is star-shaped about its
// centre.
type blob struct {
	cx, cy, r0 float64
	amp, ph    [5]float64
}

// newBlob draws a blob of mean radius r0 at (cx, cy). irregular in [0, 1]
// scales the harmonic amplitudes, whose bounds are 0.22 for k = 2 (an
// aspect ratio up to about 1.6) and 0.24/k for k = 3..6.
func newBlob(rng *rand.Rand, cx, cy, r0, irregular float64) blob {
	b := blob{cx: cx, cy: cy, r0: r0}
	for k := range b.amp {
		bound := 0.24 / float64(k+2)
		if k == 0 {
			bound = 0.22
		}
		b.amp[k] = irregular * uniform(rng, 0, bound)
		b.ph[k] = uniform(rng, 0, 2*math.Pi)
	}
	return b
}

// radius is r(φ), the distance from the centre to the outline in direction φ.
func (b blob) radius(phi float64) float64 {
	r := 1.0
	for k := range b.amp {
		r += b.amp[k] * math.Cos(float64(k+2)*phi+b.ph[k])
	}
	return b.r0 * r
}

// rmax bounds r(φ) from above.
func (b blob) rmax() float64 {
	s := 1.0
	for _, a := range b.amp {
		s += a
	}
	return b.r0 * s
}

// margin is r(φ) - d with d the distance from the centre to (x, y) and φ
// its direction: the signed radial distance to the outline, positive
// inside. It is the inside test used both for rendering and for truth.
func (b blob) margin(x, y float64) float64 {
	dx, dy := x-b.cx, y-b.cy
	return b.radius(math.Atan2(dy, dx)) - math.Hypot(dx, dy)
}

// group is a set of blobs placed together: a single nucleus or a cluster
// of touching ones. Each pixel inside the union belongs to the member with
// the largest margin there, so touching members share a boundary and
// never overlap in the truth.
type group struct {
	members []blob
	first   int32 // label of members[0]; the others follow consecutively
}

// box returns the pixel bounding box x0, y0, x1, y1 (inclusive) of the
// group grown by pad pixels, clipped to the image.
func (g group) box(w, h, pad int) (x0, y0, x1, y1 int) {
	x0, y0, x1, y1 = w, h, -1, -1
	for _, b := range g.members {
		r := b.rmax() + float64(pad)
		x0 = min(x0, int(math.Floor(b.cx-r)))
		y0 = min(y0, int(math.Floor(b.cy-r)))
		x1 = max(x1, int(math.Ceil(b.cx+r)))
		y1 = max(y1, int(math.Ceil(b.cy+r)))
	}
	return max(0, x0), max(0, y0), min(w-1, x1), min(h-1, y1)
}

// owner returns the index of the member with the largest margin at
// (x, y), that margin, and the largest margin among the other members
// (-Inf for a single blob).
func (g group) owner(x, y float64) (i int, m, second float64) {
	m, second = math.Inf(-1), math.Inf(-1)
	for k, b := range g.members {
		v := b.margin(x, y)
		if v > m {
			second = m
			i, m = k, v
		} else if v > second {
			second = v
		}
	}
	return i, m, second
}

// hit is one pixel of a group with nonzero coverage, as paint reports it.
type hit struct {
	p         int     // flat index y·w + x
	x, y      float64 // the pixel centre
	member    int     // the member that owns it (see owner)
	m, second float64 // its margin and the largest margin of the others
	cover     float64 // coverage(m), in (0, 1]
}

// paint calls draw for every pixel of the group's box grown by 2 px that
// the group covers (coverage of the owner's margin above 0), in row-major
// order.
func (g group) paint(w, h int, draw func(hit)) {
	x0, y0, x1, y1 := g.box(w, h, 2)
	for y := y0; y <= y1; y++ {
		for x := x0; x <= x1; x++ {
			px, py := float64(x)+0.5, float64(y)+0.5
			i, m, second := g.owner(px, py)
			c := coverage(m)
			if c == 0 {
				continue
			}
			draw(hit{p: y*w + x, x: px, y: py, member: i, m: m, second: second, cover: c})
		}
	}
}

// seamFactor is the dimming 1 - (1-level)·exp(-δ²/2) of the contact line
// between two touching objects at a pixel with margins m and second to
// their outlines, δ = (m - second)/2 half the margin difference (about the
// distance in pixels to the shared boundary); 1 where there is no seam
// (level >= 1) or either margin is -3 px or less (the pixel lies away
// from the contact).
func seamFactor(level, m, second float64) float64 {
	if level >= 1 || m <= -3 || second <= -3 {
		return 1
	}
	d := (m - second) / 2
	return 1 - (1-level)*math.Exp(-d*d/2)
}

// grow attaches new members to random earlier ones (see attach) until the
// group has size members, each of log-normal mean radius around r (σ 0.12,
// clamped to [lo, hi], see logNormalRadius) with the given irregularity.
func (g *group) grow(rng *rand.Rand, size int, r, lo, hi, irregular float64) {
	for len(g.members) < size {
		a := g.members[rng.IntN(len(g.members))]
		g.members = append(g.members, attach(rng, a, logNormalRadius(rng, r, 0.12, lo, hi), irregular))
	}
}

// placer puts groups into a truth mask without touching earlier ones.
type placer struct {
	w, h  int
	truth []int32
	next  int32 // the next free label
	gap   int   // minimal Chebyshev distance to earlier objects
}

func newPlacer(w, h, gap int) *placer {
	return &placer{w: w, h: h, truth: make([]int32, w*h), next: 1, gap: gap}
}

// place labels the group if every member owns at least minOwn of its own
// area (pixels inside it), every member is one 4-connected piece, the
// members of a cluster form one 4-connected piece together, no pixel
// lies within 2 px of the border and none within gap of an earlier
// object. On success the members get consecutive labels and it returns
// true; otherwise truth is unchanged.
func (p *placer) place(g *group, minOwn float64) bool {
	w, h := p.w, p.h
	x0, y0, x1, y1 := g.box(w, h, 1)
	own := make([]int, len(g.members))
	area := make([]int, len(g.members))
	lab := make(map[int]int32)
	var pix []int
	for y := y0; y <= y1; y++ {
		for x := x0; x <= x1; x++ {
			px, py := float64(x)+0.5, float64(y)+0.5
			i, m, _ := g.owner(px, py)
			if m <= 0 {
				continue
			}
			for k, b := range g.members {
				if b.margin(px, py) > 0 {
					area[k]++
				}
			}
			if x < 2 || y < 2 || x >= w-2 || y >= h-2 {
				return false
			}
			own[i]++
			lab[y*w+x] = int32(i + 1)
			pix = append(pix, y*w+x)
		}
	}
	for k := range g.members {
		if area[k] == 0 || float64(own[k]) < minOwn*float64(area[k]) {
			return false
		}
		if pieces4(lab, w, int32(k+1)) != 1 {
			return false
		}
	}
	if len(g.members) > 1 && !onePiece(pix, w) {
		return false
	}
	if touchesLabelled(p.truth, w, h, pix, p.gap) {
		return false
	}
	g.first = p.next
	for _, q := range pix {
		p.truth[q] = p.next - 1 + lab[q]
	}
	p.next += int32(len(g.members))
	return true
}

// attach returns a blob of mean radius r0 touching member a of the group:
// its centre lies in a random direction φ from a's centre at a distance of
// (r_a(φ) + r_new(φ+π)) times a factor in [0.74, 0.9], so the outlines
// overlap a little and the contact has a visible neck.
func attach(rng *rand.Rand, a blob, r0, irregular float64) blob {
	b := newBlob(rng, 0, 0, r0, irregular)
	phi := uniform(rng, 0, 2*math.Pi)
	d := (a.radius(phi) + b.radius(phi+math.Pi)) * uniform(rng, 0.74, 0.9)
	b.cx, b.cy = a.cx+d*math.Cos(phi), a.cy+d*math.Sin(phi)
	return b
}

// clusterSizes splits n objects into singles and clusters of 2-4: about
// fraction·n of them go into clusters (sizes uniform in 2..4, the last one
// trimmed), the rest are singles. The result lists the group sizes,
// clusters first.
func clusterSizes(rng *rand.Rand, n int, fraction float64) []int {
	inClusters := int(math.Round(float64(n) * fraction))
	var sizes []int
	for inClusters >= 2 {
		k := min(2+rng.IntN(3), inClusters)
		sizes = append(sizes, k)
		inClusters -= k
	}
	used := 0
	for _, k := range sizes {
		used += k
	}
	for range n - used {
		sizes = append(sizes, 1)
	}
	return sizes
}

// logNormalRadius draws r·exp(s·Z), Z standard normal, clamped to
// [lo, hi]: size distributions of cells and particles are close to
// log-normal (common practice).
func logNormalRadius(rng *rand.Rand, r, s, lo, hi float64) float64 {
	return min(hi, max(lo, r*math.Exp(s*rng.NormFloat64())))
}
