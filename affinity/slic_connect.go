package affinity

import "github.com/cleave-seg/cleave/segment/labelmap"

// enforceConnectivity relabels a clustering so that every label is one
// 4-connected piece, following the post-processing of Achanta et al.
// (2012): pieces are flood-filled in raster order; a piece of at most
// minSize pixels takes the new label of the pixel left of (or else
// above) its first pixel, which the raster scan has labelled already, and
// is thereby joined to a connected label; any other piece gets the next
// new label. New labels are thus numbered in raster order of their first
// pixel. The piece holding pixel 0 has no labelled neighbour and always
// keeps its own label. It runs in O(pixels). scratch, when it holds at
// least len(old) values, is used for the flood fill's stack (SLIC hands
// over its distance buffer, no longer needed), else a stack is
// allocated.
func enforceConnectivity(clusters labelmap.Map, minSize int, scratch []uint32) (labelmap.Map, int) {
	old, w, h := clusters.Pix, clusters.Width, clusters.Height
	out := make([]int32, len(old))
	for i := range out {
		out[i] = -1
	}
	stack := scratch[:0]
	if cap(stack) < len(old) {
		stack = make([]uint32, 0, len(old))
	}
	n := int32(0)
	for p := range old {
		if out[p] >= 0 {
			continue
		}
		adj := int32(-1)
		if x := p % w; x > 0 {
			adj = out[p-1]
		} else if p >= w {
			adj = out[p-w]
		}
		// Flood fill the piece of old[p] containing p; stack doubles as
		// the list of the piece's pixels.
		want := old[p]
		stack = append(stack[:0], uint32(p))
		out[p] = n
		for k := 0; k < len(stack); k++ {
			q := int(stack[k])
			x := q % w
			if x > 0 && out[q-1] < 0 && old[q-1] == want {
				out[q-1] = n
				stack = append(stack, uint32(q-1))
			}
			if x < w-1 && out[q+1] < 0 && old[q+1] == want {
				out[q+1] = n
				stack = append(stack, uint32(q+1))
			}
			if q >= w && out[q-w] < 0 && old[q-w] == want {
				out[q-w] = n
				stack = append(stack, uint32(q-w))
			}
			if q+w < len(old) && out[q+w] < 0 && old[q+w] == want {
				out[q+w] = n
				stack = append(stack, uint32(q+w))
			}
		}
		if len(stack) <= minSize && adj >= 0 {
			for _, q := range stack {
				out[q] = adj
			}
			continue
		}
		n++
	}
	return labelmap.Map{Pix: out, Width: w, Height: h}, int(n)
}
