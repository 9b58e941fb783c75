package segment

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/internal/unionfind"
)

// basins partitions the masked pixels of a crop (cw x ch) into the
// catchment basins of the significant maxima of v, by flooding from the
// top (watershed by immersion, Vincent and Soille 1991, here on -v): the
// pixels are taken in descending order of v (ties by index) and merged
// with their 4-neighbours' components (unionfind.Forest). Where two components
// meet at a pixel of value s, the lower one (by peak) stays apart if its
// dynamic, its peak minus s (Grimaud 1992), exceeds both h and rel times
// its peak, and it holds at least minSize pixels; otherwise it joins the
// higher one. A component kept apart stays apart, and every pixel joins
// the highest component among its neighbours. It returns the basin of
// every crop pixel (-1 outside the mask) and the number of basins.
func basins(v []float32, mask []bool, cw, ch int, h, rel float32, minSize int) ([]int32, int) {
	var order []int
	for c, in := range mask {
		if in {
			order = append(order, c)
		}
	}
	slices.SortFunc(order, func(a, b int) int {
		switch {
		case v[a] > v[b]:
			return -1
		case v[a] < v[b]:
			return 1
		}
		return a - b
	})
	parent := make(unionfind.Forest, len(v)) // -1: not flooded yet
	for i := range parent {
		parent[i] = -1
	}
	peak := make([]float32, len(v))
	size := make([]int, len(v))
	apart := make([]bool, len(v))
	higher := func(a, b int32) int { // peaks descending, then index
		switch {
		case peak[a] > peak[b]:
			return -1
		case peak[a] < peak[b]:
			return 1
		}
		return int(a - b)
	}
	var roots []int32
	for _, c := range order {
		x, y := c%cw, c/cw
		roots = roots[:0]
		for _, d := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
			xx, yy := x+d[0], y+d[1]
			if xx < 0 || yy < 0 || xx >= cw || yy >= ch || parent[yy*cw+xx] < 0 {
				continue
			}
			if r := parent.Find(int32(yy*cw + xx)); !slices.Contains(roots, r) {
				roots = append(roots, r)
			}
		}
		if len(roots) == 0 {
			parent[c], peak[c], size[c] = int32(c), v[c], 1
			continue
		}
		slices.SortFunc(roots, higher)
		top := roots[0]
		for _, r := range roots[1:] {
			if apart[r] || (peak[r]-v[c] > max(h, rel*peak[r]) && size[r] >= minSize) {
				apart[r] = true
				continue
			}
			parent[r] = top
			size[top] += size[r]
		}
		parent[c] = top
		size[top]++
	}
	label := make([]int32, len(v))
	id := map[int32]int32{}
	for c := range label {
		label[c] = -1
		if parent[c] < 0 {
			continue
		}
		r := parent.Find(int32(c))
		l, ok := id[r]
		if !ok {
			l = int32(len(id))
			id[r] = l
		}
		label[c] = l
	}
	return label, len(id)
}

// peakRadius is the largest inscribed radius (peak of the distance map,
// in pixels) of a region that peakPieces splits at its maxima: twice the
// re-cut graph's radius. A smaller region is a few pixels across, so
// its pixel graph links every pixel of a lobe to the next lobe's and the
// normalized cut peels off the dim rim instead of following the dip
// between lobes, and its necks are within digitization (neckNoise).
// Larger lobes are left to the cut: at 5 px, peakPieces split textured
// rods along their length (othershapes.py rods, choice seeds 950-957:
// object F1 0.973 -> 0.964 at rel = refineStep, 0.906 without it);
// DEVELOPERS.md, "Measured choices", gives the measurement.
const peakRadius = 2 * refineRadius

// peakPieces splits each region of one object's cut (region, regions as
// refineOne has them; nil for one region) whose distance map peaks at
// most peakRadius into the basins of its significant maxima (basins) of
// the scaled contrast's 3x3 mean over the region (maskedMean3), or failing
// that of its Laplacian of Gaussian (shoulderBasins): a maximum counts
// when its dynamic exceeds seamSigmas standard deviations of that mean
// (o.noise/3 for white noise, away from the region's edge) and refineStep
// of its height (the relative step differ
// asks of two sides), and each basin keeps minPart pixels. Small spots
// pressed together (puncta, fine particles) show one bright maximum
// each with a dip between them, which is what a seam is at that scale.
// The Ncut of each basin against the rest of its region on g (the
// object's pixel graph, node k at crop pixel o.nodes[k]) is appended to
// splits.
func peakPieces(g *affinity.Graph, o *objectCrop, region []int32, regions int, splits []float64, minPart int) ([]int32, int, []float64) {
	nodes, cw := o.nodes, o.cw
	if region == nil {
		region = make([]int32, len(nodes))
	} else {
		region = slices.Clone(region)
	}
	h := float32(seamSigmas * o.noise / 3)
	for r := int32(0); r < int32(regions); r++ {
		var rc, inR []int // the region's crop pixels and node indices
		for k, c := range nodes {
			if region[k] == r {
				rc = append(rc, c)
				inR = append(inR, k)
			}
		}
		if len(rc) < 2*minPart {
			continue
		}
		// The whole object's distance map is known already (refineOne).
		var d []float64
		var b partBox
		if o.whole != nil && len(rc) == len(nodes) {
			d, b = o.whole.dist, partBox{0, 0, cw, o.ch}
		} else {
			pm := o.part(inR)
			d, b = pm.d, pm.b
		}
		if slices.Max(d) > peakRadius {
			continue
		}
		mask := make([]bool, b.w*b.h)
		f := make([]float32, b.w*b.h)
		for _, c := range rc {
			mask[b.at(c, cw)] = true
			f[b.at(c, cw)] = o.feat[c]
		}
		v := maskedMean3(f, mask, b.w, b.h)
		lab, n := basins(v, mask, b.w, b.h, h, refineStep, minPart)
		if n < 2 {
			// A dim spot on the flank of a bright one has no maximum
			// of its own; the band-pass of a Laplacian of Gaussian
			// gives it one (blob detection, Lindeberg 1998).
			lab, n = shoulderBasins(o, rc, inR, mask, d, b, minPart)
		}
		if n < 2 {
			continue
		}
		count := make([]int, n)
		peak := make([]float64, n) // the basin's largest distance to the region's border
		for _, c := range rc {
			i := b.at(c, cw)
			count[lab[i]]++
			peak[lab[i]] = max(peak[lab[i]], d[i])
		}
		if slices.Min(count) < minPart || !allCompact(count, peak) {
			continue
		}
		sub := g.Subgraph(inR)
		for l := int32(1); l < int32(n); l++ {
			inA := make([]bool, len(inR))
			for i, k := range inR {
				inA[i] = lab[b.at(nodes[k], cw)] == l
			}
			splits = append(splits, Ncut(sub, inA))
		}
		for _, k := range inR {
			if l := lab[b.at(nodes[k], cw)]; l > 0 {
				region[k] = int32(regions) + l - 1
			}
		}
		regions += n - 1
	}
	if regions == 1 {
		return nil, 1, splits
	}
	return region, regions, splits
}

// maskedMean3 returns the mean of v over the masked pixels of each masked
// pixel's 3x3 neighbourhood (0 outside the mask): unlike boxMean3 it does
// not pull the values near the mask's edge down towards the 0 outside,
// which on a thin region makes false maxima where it widens.
func maskedMean3(v []float32, mask []bool, w, h int) []float32 {
	out := make([]float32, len(v))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if !mask[y*w+x] {
				continue
			}
			var s float32
			var c int
			for yy := max(y-1, 0); yy <= min(y+1, h-1); yy++ {
				for xx := max(x-1, 0); xx <= min(x+1, w-1); xx++ {
					if mask[yy*w+xx] {
						s += v[yy*w+xx]
						c++
					}
				}
			}
			out[y*w+x] = s / float32(c)
		}
	}
	return out
}

// peakAspect bounds the aspect of each basin peakPieces makes: its area
// at most peakAspect times that of the disc of its peak distance p, πp²
// (the aspect ratio of an ellipse, as neckAspect). Spots are round;
// the pieces of a thin stroke or of a strip of texture cut at the ripples
// along it are not (on scikit-image's text.png, bright background, the
// strokes were cut at ripples with neckAspect's bound of 4: 68 objects
// before peakPieces, 72 with the bound 4, 69 with 2). Our choice: specks
// choice seeds 950-955 gave object F1 0.821, 0.829 and 0.828 at 1.5, 2
// and 3.
const peakAspect = 2

// allCompact reports whether every piece (area[l] pixels, its distance
// map peaking at peak[l]) is compact enough (peakAspect).
func allCompact(area []int, peak []float64) bool {
	for l := range area {
		if float64(area[l]) > peakAspect*math.Pi*peak[l]*peak[l] {
			return false
		}
	}
	return true
}

// shoulderBasins partitions a small region of an object's cut (crop
// pixels rc, node indices inR, its mask and distance map d on box b, as
// in peakPieces) into the basins of the significant maxima of the scaled
// contrast's scale-normalized Laplacian of Gaussian, -σ²∇²(G_σ * f), at
// σ = half the region's inscribed radius, so that a lobe about as wide as
// the region's widest gives an extremum of its own (the response peaks
// on blobs of radius √2σ; Lindeberg 1998). The contrast outside the
// object is 0, so the filter sees the outline too: a thin shape's
// widenings have maxima as well. A split is therefore kept only where
// each basin differs from the rest of the region in plateau contrast
// (objectCrop.differ): a dim spot beside a bright one, not the joints of
// a uniform limb (scikit-image's horse.png, bright background: 5 objects
// with the test, 13 without). The dynamic must exceed seamSigmas
// standard deviations of the filtered noise (o.noise times the kernel's
// L2 norm) and refineStep of the peak. It returns the basins as basins
// does, or n < 2 for no split.
func shoulderBasins(o *objectCrop, rc, inR []int, mask []bool, d []float64, b partBox, minPart int) ([]int32, int) {
	cw := o.cw
	// The whole object's contrast on the box: the filter sees the
	// neighbouring regions of the cut, not a hole where they are.
	f := make([]float32, b.w*b.h)
	for y := 0; y < b.h; y++ {
		copy(f[y*b.w:(y+1)*b.w], o.feat[(y+b.y0)*cw+b.x0:(y+b.y0)*cw+b.x0+b.w])
	}
	v, gain := logFilter(f, b.w, b.h, slices.Max(d)/2)
	lab, n := basins(v, mask, b.w, b.h, float32(seamSigmas*o.noise*gain), refineStep, minPart)
	for l := int32(1); l < int32(n); l++ {
		inA := make([]bool, len(inR))
		for i, c := range rc {
			inA[i] = lab[b.at(c, cw)] == l
		}
		if !o.differ(inR, inA) {
			return nil, 1
		}
	}
	return lab, n
}

// logFilter returns the scale-normalized Laplacian of Gaussian
// -σ²∇²(G_σ * f) of a w x h crop (0 beyond it; separable sampled kernels
// G_σ and its second derivative, truncated at 3σ as scipy.ndimage does)
// and its noise gain: the L2 norm of the 2-D kernel, the factor that
// takes the standard deviation of white noise in f to that of the output.
func logFilter(f []float32, w, h int, sigma float64) ([]float32, float64) {
	r := int(3*sigma + 0.5) // as scipy.ndimage truncates at 3σ
	n := 2*r + 1
	g0, g2 := make([]float64, n), make([]float64, n)
	var s0 float64
	for k := -r; k <= r; k++ {
		x := float64(k)
		g0[k+r] = math.Exp(-x * x / (2 * sigma * sigma))
		s0 += g0[k+r]
	}
	for k := range g0 {
		x := float64(k - r)
		g0[k] /= s0
		g2[k] = g0[k] * (x*x - sigma*sigma) / (sigma * sigma * sigma * sigma)
	}
	// Kernel K(x, y) = g2(x) g0(y) + g0(x) g2(y); its squared norm.
	var norm2 float64
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			k := g2[a]*g0[b] + g0[a]*g2[b]
			norm2 += k * k
		}
	}
	conv := func(in []float64, k []float64, dx, dy int) []float64 {
		out := make([]float64, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				var s float64
				for t := -r; t <= r; t++ {
					xx, yy := x+t*dx, y+t*dy
					if xx < 0 || yy < 0 || xx >= w || yy >= h {
						continue
					}
					s += k[t+r] * in[yy*w+xx]
				}
				out[y*w+x] = s
			}
		}
		return out
	}
	in := make([]float64, len(f))
	for i, v := range f {
		in[i] = float64(v)
	}
	xx := conv(conv(in, g2, 1, 0), g0, 0, 1)
	yy := conv(conv(in, g0, 1, 0), g2, 0, 1)
	out := make([]float32, len(f))
	s2 := sigma * sigma
	for i := range out {
		out[i] = float32(-s2 * (xx[i] + yy[i]))
	}
	return out, s2 * math.Sqrt(norm2)
}
