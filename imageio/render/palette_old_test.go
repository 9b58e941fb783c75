package render

// ColourLabels as it was before its scan for touching pairs skipped the
// background and repeated pairs (as on main at 608075e), kept verbatim for
// TestColourLabelsMatchesFormer.

import (
	"slices"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

func colourLabelsOld(m labelmap.Map) *LabelColours {
	labels, width, height := m.Pix, m.Width, m.Height
	maxLabel := int32(0)
	for _, l := range labels {
		maxLabel = max(maxLabel, l)
	}
	// Distinct labels in increasing order, and each one's index.
	var ids []int32
	index := func(l int32) int { i, _ := slices.BinarySearch(ids, l); return i }
	if int(maxLabel) <= len(labels) {
		seen := make([]bool, int(maxLabel)+1)
		for _, l := range labels {
			if l > 0 {
				seen[l] = true
			}
		}
		for l, s := range seen {
			if s {
				ids = append(ids, int32(l))
			}
		}
	} else {
		set := map[int32]bool{}
		for _, l := range labels {
			if l > 0 {
				set[l] = true
			}
		}
		for l := range set {
			ids = append(ids, l)
		}
		slices.Sort(ids)
	}
	// Touching pairs (a < b), found on the right, lower, lower-left and
	// lower-right neighbours of each pixel.
	var pairs [][2]int32
	add := func(a, b int32) {
		if a > 0 && b > 0 && a != b {
			pairs = append(pairs, [2]int32{min(a, b), max(a, b)})
		}
	}
	for y := range height {
		row := labels[y*width : (y+1)*width]
		for x, l := range row {
			if x+1 < width {
				add(l, row[x+1])
			}
			if y+1 < height {
				next := labels[(y+1)*width : (y+2)*width]
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
	slices.SortFunc(pairs, func(p, q [2]int32) int {
		if p[0] != q[0] {
			return int(p[0]) - int(q[0])
		}
		return int(p[1]) - int(q[1])
	})
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
