package render

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// palette is the set of colours given to labels: twelve hues 30 degrees
// apart in CIE LCh(ab) (the polar form of CIE 1976 L*a*b*, CIE 15:2004),
// chroma 48, lightness alternating 58 and 78 so that colours next in hue
// also differ in lightness, converted to sRGB (D65, IEC 61966-2-1) and
// clipped to the gamut. The order visits the hues in steps of 150 degrees
// (5 of the 12), so colours chosen one after another differ strongly.
// None is near black, the colour of label 0.
var palette = makePalette()

func makePalette() [][3]uint8 {
	const n = 12
	out := make([][3]uint8, n)
	for k := range n {
		j := k * 5 % n
		L := 58.0
		if j%2 == 1 {
			L = 78
		}
		h := float64(j) * 2 * math.Pi / n
		out[k] = labToSRGB(L, 48*math.Cos(h+0.5), 48*math.Sin(h+0.5))
	}
	return out
}

// labToSRGB converts CIE L*a*b* (D65 white, Xn = 0.95047, Zn = 1.08883)
// to 8-bit sRGB: the inverse of CIE 15:2004's f, the XYZ-to-linear-sRGB
// matrix and the sRGB transfer curve of IEC 61966-2-1, clipped to [0, 1].
func labToSRGB(L, a, b float64) [3]uint8 {
	fy := (L + 16) / 116
	fx, fz := fy+a/500, fy-b/200
	finv := func(t float64) float64 {
		if t > 6.0/29 {
			return t * t * t
		}
		return 3 * (6.0 / 29) * (6.0 / 29) * (t - 4.0/29)
	}
	x, y, z := 0.95047*finv(fx), finv(fy), 1.08883*finv(fz)
	lin := [3]float64{
		3.2404542*x - 1.5371385*y - 0.4985314*z,
		-0.9692660*x + 1.8760108*y + 0.0415560*z,
		0.0556434*x - 0.2040259*y + 1.0572252*z,
	}
	var out [3]uint8
	for k, v := range lin {
		v = min(max(v, 0), 1)
		if v <= 0.0031308 {
			v *= 12.92
		} else {
			v = 1.055*math.Pow(v, 1/2.4) - 0.055
		}
		out[k] = uint8(math.Round(255 * v))
	}
	return out
}

// LabelColours gives every label of a label map a colour of palette.
type LabelColours struct {
	dense  [][3]uint8 // by label, when the labels are at most the pixel count
	sparse map[int32][3]uint8
}

// comparePairs orders label pairs by their first label, then their second.
func comparePairs(p, q [2]int32) int {
	if p[0] != q[0] {
		return int(p[0]) - int(q[0])
	}
	return int(p[1]) - int(q[1])
}

// Of is the colour of label l (black for 0 and for labels not in the map).
func (c *LabelColours) Of(l int32) [3]uint8 {
	if c.dense != nil {
		if l >= 0 && int(l) < len(c.dense) {
			return c.dense[l]
		}
		return [3]uint8{}
	}
	return c.sparse[l]
}

// ColourLabels colours the labels (> 0) of a label map so
// that labels that touch, side or corner (8-connectivity), get different
// palette entries whenever fewer than len(palette) colours are taken by
// a label's neighbours: greedy colouring in increasing label order, each
// label taking, among the colours none of its already-coloured neighbours
// has, the one used least so far (ties: the earlier palette entry), which
// spreads the colours evenly. A label whose neighbours hold every colour
// takes the one fewest of them hold. A map whose objects touch as a plane
// map does (a region adjacency graph is planar when regions are
// connected and touch along sides) needs at most four colours (Appel and
// Haken 1977), so twelve leave room for corner contacts and
// disconnected labels. The result depends on the map only.
func ColourLabels(m labelmap.Map) *LabelColours { return ColourLabelsWorkers(m, 1) }

// colourBand is the number of rows of a band of ColourLabelsWorkers.
const colourBand = 64

// ColourLabelsWorkers is ColourLabels with the passes over the pixels on
// bands of colourBand rows on workers goroutines (parallel's rules). The
// colouring depends only on the set of labels and the set of touching
// pairs, which the bands find between them (each band reads the row below
// its last), so the result is ColourLabels' for any workers.
func ColourLabelsWorkers(m labelmap.Map, workers int) *LabelColours {
	labels, width, height := m.Pix, m.Width, m.Height
	nb := (height + colourBand - 1) / colourBand
	// Each band lists its labels (> 0; one entry a run of one label) and
	// its touching pairs (a < b), found on the right, lower, lower-left
	// and lower-right neighbours of each pixel of a label > 0; a pair
	// found again right after itself (along a shared border) is not
	// appended twice. Each band sorts and compacts its lists; their
	// concatenations are sorted and compacted again.
	bandIDs := make([][]int32, nb)
	bandPairs := make([][][2]int32, nb)
	parallel.Blocks(height, colourBand, workers, func(b, y0, y1 int) {
		var ids []int32
		var pairs [][2]int32
		last := [2]int32{-1, -1}
		add := func(a, b int32) {
			if b > 0 && a != b {
				p := [2]int32{min(a, b), max(a, b)}
				if p != last {
					pairs = append(pairs, p)
					last = p
				}
			}
		}
		for y := y0; y < y1; y++ {
			row := labels[y*width : (y+1)*width]
			var next []int32
			if y+1 < height {
				next = labels[(y+1)*width : (y+2)*width]
			}
			for x, l := range row {
				if l <= 0 {
					continue
				}
				if x == 0 || row[x-1] != l {
					ids = append(ids, l)
				}
				if x+1 < width {
					add(l, row[x+1])
				}
				if next != nil {
					add(l, next[x])
					if x > 0 {
						add(l, next[x-1])
					}
					if x+1 < width {
						add(l, next[x+1])
					}
				}
			}
		}
		slices.Sort(ids)
		bandIDs[b] = slices.Compact(ids)
		slices.SortFunc(pairs, comparePairs)
		bandPairs[b] = slices.Compact(pairs)
	})
	// Distinct labels in increasing order, and each one's index.
	ids := slices.Concat(bandIDs...)
	slices.Sort(ids)
	ids = slices.Compact(ids)
	maxLabel := int32(0)
	if len(ids) > 0 {
		maxLabel = ids[len(ids)-1]
	}
	index := func(l int32) int { i, _ := slices.BinarySearch(ids, l); return i }
	pairs := slices.Concat(bandPairs...)
	slices.SortFunc(pairs, comparePairs)
	pairs = slices.Compact(pairs)
	// Adjacency lists by index.
	start := make([]int, len(ids)+1)
	for _, p := range pairs {
		start[index(p[0])+1]++
		start[index(p[1])+1]++
	}
	for i := range ids {
		start[i+1] += start[i]
	}
	adj := make([]int, start[len(ids)])
	fill := slices.Clone(start[:len(ids)])
	for _, p := range pairs {
		a, b := index(p[0]), index(p[1])
		adj[fill[a]] = b
		fill[a]++
		adj[fill[b]] = a
		fill[b]++
	}
	colour := make([]int, len(ids))
	used := make([]int, len(palette))
	for i := range ids {
		var taken [16]int // neighbours holding each colour (len(palette) <= 16)
		for _, j := range adj[start[i]:start[i+1]] {
			if j < i {
				taken[colour[j]]++
			}
		}
		best := -1
		for k := range palette {
			if taken[k] == 0 && (best < 0 || used[k] < used[best]) {
				best = k
			}
		}
		if best < 0 {
			best = 0
			for k := range palette {
				if taken[k] < taken[best] {
					best = k
				}
			}
		}
		colour[i] = best
		used[best]++
	}
	out := &LabelColours{}
	if int(maxLabel) <= len(labels) {
		out.dense = make([][3]uint8, int(maxLabel)+1)
		for i, l := range ids {
			out.dense[l] = palette[colour[i]]
		}
	} else {
		out.sparse = make(map[int32][3]uint8, len(ids))
		for i, l := range ids {
			out.sparse[l] = palette[colour[i]]
		}
	}
	return out
}
