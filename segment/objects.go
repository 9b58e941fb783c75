package segment

import "math"

// seamRatio: two adjacent foreground regions stay separate objects when the
// contrast along their shared boundary is below seamRatio times the weaker
// region's contrast (a dim seam between touching objects). Chosen on the
// project's synthetic scenes.
const seamRatio = 0.8

// objectsFrom turns a region map and a class per region into objects: each
// connected piece (4-neighbours) of non-background pixels is an object,
// except that neighbouring pixels of two different regions are joined only
// when the boundary between those regions is not a seam. A seam is a
// boundary whose mean contrast |I/B - 1| (B the background field) is below
// seamRatio times the mean contrast of the weaker of the two regions: the
// dim line between two nuclei pressed together, or the bright ridge between
// two touching pits. Objects under minArea pixels go to the background.
// It returns labels 0 (background) and 1..N in raster order, and N.
func objectsFrom(inten, field []float32, w, h int, reg []int32, n int, cls []int32, bgClass int32, minArea int) ([]int32, int) {
	contrast := func(i int) float64 {
		return math.Abs(float64(inten[i])/math.Max(float64(field[i]), fieldFloor) - 1)
	}
	regC := make([]float64, n)
	regA := make([]float64, n)
	for i, r := range reg {
		regC[r] += contrast(i)
		regA[r]++
	}
	for r := range regC {
		if regA[r] > 0 {
			regC[r] /= regA[r]
		}
	}
	seamSum := map[uint64]float64{}
	seamCnt := map[uint64]float64{}
	add := func(i, j int) {
		a, b := reg[i], reg[j]
		if a == b || cls[a] == bgClass || cls[b] == bgClass {
			return
		}
		k := pairKey(a, b)
		seamSum[k] += contrast(i) + contrast(j)
		seamCnt[k] += 2
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			if x+1 < w {
				add(i, i+1)
			}
			if y+1 < h {
				add(i, i+w)
			}
		}
	}
	// Union the regions whose shared boundary is not a seam.
	parent := make([]int32, n)
	for i := range parent {
		parent[i] = int32(i)
	}
	find := func(x int32) int32 {
		for parent[x] != x {
			parent[x] = parent[parent[x]]
			x = parent[x]
		}
		return x
	}
	for k, s := range seamSum {
		a, b := int32(k>>32), int32(uint32(k))
		seam := s / seamCnt[k]
		if seam < seamRatio*math.Min(regC[a], regC[b]) {
			continue
		}
		ra, rb := find(a), find(b)
		if ra < rb {
			parent[rb] = ra
		} else if rb < ra {
			parent[ra] = rb
		}
	}
	group := make([]int32, len(reg))
	for i, r := range reg {
		if cls[r] == bgClass {
			group[i] = -1
		} else {
			group[i] = find(r)
		}
	}
	return componentsOfGroups(group, w, h, minArea)
}

// componentsOfGroups labels the 4-connected pieces of pixels sharing the
// same group (group < 0 is background) as 1..N in raster order; pieces under
// minArea pixels become background.
func componentsOfGroups(group []int32, w, h, minArea int) ([]int32, int) {
	lab := make([]int32, len(group))
	for i := range lab {
		lab[i] = -1
	}
	stack := make([]int, 0, 256)
	var pieces [][]int
	for s := range group {
		if group[s] < 0 || lab[s] >= 0 {
			continue
		}
		id := int32(len(pieces))
		g := group[s]
		lab[s] = id
		stack = append(stack[:0], s)
		var members []int
		for len(stack) > 0 {
			i := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			members = append(members, i)
			x, y := i%w, i/w
			try := func(j int) {
				if group[j] == g && lab[j] < 0 {
					lab[j] = id
					stack = append(stack, j)
				}
			}
			if x > 0 {
				try(i - 1)
			}
			if x+1 < w {
				try(i + 1)
			}
			if y > 0 {
				try(i - w)
			}
			if y+1 < h {
				try(i + w)
			}
		}
		pieces = append(pieces, members)
	}
	out := make([]int32, len(group))
	n := 0
	for _, m := range pieces { // pieces are already in raster order of their first pixel
		if len(m) < minArea {
			continue
		}
		n++
		for _, i := range m {
			out[i] = int32(n)
		}
	}
	return out, n
}
