package scenes

// Truth masks: the pixels a shape covers and the tests that decide whether
// a new object may join a mask.

// insidePixels returns the flat indices, row by row, of the pixels in box
// (x0, y0, x1, y1 inclusive) whose centres lie inside the shape
// (margin > 0), and false when one of them lies within 2 px of the border
// of the w x h field (or beyond it).
func insidePixels(margin func(x, y float64) float64, box [4]int, w, h int) ([]int, bool) {
	var pix []int
	for y := box[1]; y <= box[3]; y++ {
		for x := box[0]; x <= box[2]; x++ {
			if margin(float64(x)+0.5, float64(y)+0.5) > 0 {
				if x < 2 || y < 2 || x >= w-2 || y >= h-2 {
					return nil, false
				}
				pix = append(pix, y*w+x)
			}
		}
	}
	return pix, true
}

// touchesLabelled reports whether any pixel of the candidate set (flat
// indices) lies within margin pixels (Chebyshev distance) of a pixel that
// truth already assigns to an object.
func touchesLabelled(truth []int32, w, h int, cand []int, margin int) bool {
	for _, p := range cand {
		x, y := p%w, p/w
		for yy := max(0, y-margin); yy <= min(h-1, y+margin); yy++ {
			for xx := max(0, x-margin); xx <= min(w-1, x+margin); xx++ {
				if truth[yy*w+xx] != 0 {
					return true
				}
			}
		}
	}
	return false
}

// onePiece reports whether the pixels (flat indices in a field w wide)
// form one 4-connected piece.
func onePiece(pix []int, w int) bool {
	lab := make(map[int]int32, len(pix))
	for _, p := range pix {
		lab[p] = 1
	}
	return pieces4(lab, w, 1) == 1
}

// pieces4 counts the 4-connected pieces of label l in a sparse labelling
// (pixels absent from the map are background). The count does not depend
// on the map's iteration order.
func pieces4(lab map[int]int32, w int, l int32) int {
	seen := make(map[int]bool)
	n := 0
	for p, v := range lab {
		if v != l || seen[p] {
			continue
		}
		n++
		stack := []int{p}
		seen[p] = true
		for len(stack) > 0 {
			q := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			x := q % w
			for _, nb := range []int{q + w, q - w, q + 1, q - 1} {
				if (nb == q+1 && x == w-1) || (nb == q-1 && x == 0) {
					continue
				}
				if lab[nb] == l && !seen[nb] {
					seen[nb] = true
					stack = append(stack, nb)
				}
			}
		}
	}
	return n
}
