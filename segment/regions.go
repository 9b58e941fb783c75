package segment

import (
	"container/heap"
	"slices"
	"sort"

	"github.com/cleave-seg/cleave/segment/internal/unionfind"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// pairKey packs an unordered label pair (a < b) into one map key.
func pairKey(a, b int32) uint64 {
	if a > b {
		a, b = b, a
	}
	return uint64(uint32(a))<<32 | uint64(uint32(b))
}

// boundaryLengths counts, for every pair of distinct labels, the 4-neighbour
// pixel pairs that straddle them: the length of their shared boundary in
// pixel edges.
func boundaryLengths(labels labelmap.Map) map[uint64]int {
	lab, w, h := labels.Pix, labels.Width, labels.Height
	m := make(map[uint64]int)
	for y := 0; y < h; y++ {
		row := lab[y*w : (y+1)*w]
		for x := 0; x < w; x++ {
			a := row[x]
			if x+1 < w && row[x+1] != a {
				m[pairKey(a, row[x+1])]++
			}
			if y+1 < h && lab[(y+1)*w+x] != a {
				m[pairKey(a, lab[(y+1)*w+x])]++
			}
		}
	}
	return m
}

// relabel renumbers the labels 0..n-1 in raster order of first appearance
// and returns the count.
func relabel(lab []int32, n int) int {
	id := make([]int32, n)
	for i := range id {
		id[i] = -1
	}
	k := int32(0)
	for i := 0; i < len(lab); {
		j := runEnd(lab, i)
		l := lab[i]
		if id[l] < 0 {
			id[l] = k
			k++
		}
		fillRun(lab[i:j], id[l])
		i = j
	}
	return int(k)
}

type areaItem struct{ area, id int }
type areaHeap []areaItem

func (h areaHeap) Len() int { return len(h) }
func (h areaHeap) Less(a, b int) bool {
	if h[a].area != h[b].area {
		return h[a].area < h[b].area
	}
	return h[a].id < h[b].id
}
func (h areaHeap) Swap(a, b int) { h[a], h[b] = h[b], h[a] }
func (h *areaHeap) Push(x any)   { *h = append(*h, x.(areaItem)) }
func (h *areaHeap) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}

// mergeSmall merges every region of fewer than minArea pixels into the
// neighbour it shares the longest boundary with (ties: the lower label),
// smallest region first, until none is left or a small region has no
// neighbour. regions holds labels 0..n-1 and is rewritten in place,
// renumbered in raster order. It returns the new count.
func mergeSmall(regions labelmap.Map, n, minArea int) int {
	lab := regions.Pix
	if minArea <= 1 || n <= 1 {
		return relabel(lab, n)
	}
	area := make([]int, n)
	countLabels(lab, area)
	// Only a region of 1 to minArea-1 pixels merges (an empty label has
	// no neighbour, and nothing merges into a region unless it is taken
	// from the heap): with none, every label stays and the boundary
	// lengths (a map entry per boundary pixel pair, one pass over the
	// map) are not needed.
	if !slices.ContainsFunc(area, func(a int) bool { return a > 0 && a < minArea }) {
		return relabel(lab, n)
	}
	adj := make([]map[int32]int, n)
	for i := range adj {
		adj[i] = map[int32]int{}
	}
	for k, c := range boundaryLengths(regions) {
		a, b := int32(k>>32), int32(uint32(k))
		adj[a][b] = c
		adj[b][a] = c
	}
	into := make([]int32, n)
	for i := range into {
		into[i] = int32(i)
	}
	hp := &areaHeap{}
	for i, a := range area {
		if a < minArea {
			*hp = append(*hp, areaItem{a, i})
		}
	}
	heap.Init(hp)
	for hp.Len() > 0 {
		it := heap.Pop(hp).(areaItem)
		a := int32(it.id)
		if into[a] != a || area[a] != it.area || area[a] >= minArea {
			continue
		}
		best, bestLen := int32(-1), 0
		nb := make([]int32, 0, len(adj[a]))
		for b := range adj[a] {
			nb = append(nb, b)
		}
		sort.Slice(nb, func(i, j int) bool { return nb[i] < nb[j] })
		for _, b := range nb {
			if l := adj[a][b]; l > bestLen {
				best, bestLen = b, l
			}
		}
		if best < 0 {
			continue
		}
		b := best
		for c, l := range adj[a] {
			delete(adj[c], a)
			if c == b {
				continue
			}
			adj[b][c] += l
			adj[c][b] += l
		}
		adj[a] = nil
		into[a] = b
		area[b] += area[a]
		area[a] = 0
		if area[b] < minArea {
			heap.Push(hp, areaItem{area[b], int(b)})
		}
	}
	// into links each merged region towards the one that took it in:
	// a forest whose roots are the regions left.
	for i := 0; i < len(lab); {
		j := runEnd(lab, i)
		fillRun(lab[i:j], unionfind.Forest(into).Find(lab[i]))
		i = j
	}
	return relabel(lab, n)
}
