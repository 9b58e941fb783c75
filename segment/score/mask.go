package score

import "github.com/cleave-seg/cleave/segment/labelmap"

// BinaryValue reports whether labels is a binary mask: exactly two values,
// 0 and one other, which it returns. A map of one value (all background,
// or one label everywhere) is not a mask.
func BinaryValue(labels []int32) (value int32, ok bool) {
	zero := false
	for _, l := range labels {
		switch {
		case l == 0:
			zero = true
		case value == 0:
			value = l
		case l != value:
			return 0, false
		}
	}
	return value, zero && value != 0
}

// MaskComponents labels the 8-connected components of the pixels of a
// label map that are not 0: each pixel joins the pixels of its
// 3 x 3 neighbourhood (sides and corners), and the components are numbered
// 1..n in raster order of their first pixel; 0 stays 0. In a binary mask
// the objects touch nothing but background, so its components are its
// objects; 8-connectivity keeps an outline or a thin diagonal stroke one
// pixel wide in one piece (4-connectivity would break it into single
// pixels), at the price of joining two objects that touch only at a
// corner. This is the full connectivity of the 2-D grid (Rosenfeld and
// Pfaltz 1966, Sequential operations in digital picture processing, JACM
// 13(4)), the default of scikit-image's measure.label for 2-D images.
func MaskComponents(m labelmap.Map) (labelmap.Map, int) {
	labels, width, height := m.Pix, m.Width, m.Height
	comp := make([]int32, len(labels))
	out := labelmap.Map{Pix: comp, Width: width, Height: height}
	if width <= 0 || height <= 0 || len(labels) != width*height {
		return out, 0
	}
	n := 0
	var stack []int32
	for start, l := range labels {
		if l == 0 || comp[start] != 0 {
			continue
		}
		n++
		id := int32(n)
		comp[start] = id
		stack = append(stack[:0], int32(start))
		for len(stack) > 0 {
			i := int(stack[len(stack)-1])
			stack = stack[:len(stack)-1]
			x, y := i%width, i/width
			for dy := -1; dy <= 1; dy++ {
				yy := y + dy
				if yy < 0 || yy >= height {
					continue
				}
				for dx := -1; dx <= 1; dx++ {
					xx := x + dx
					if xx < 0 || xx >= width {
						continue
					}
					j := yy*width + xx
					if labels[j] != 0 && comp[j] == 0 {
						comp[j] = id
						stack = append(stack, int32(j))
					}
				}
			}
		}
	}
	return out, n
}
