package scenes

import "fmt"

// Otsu returns the global threshold of Otsu (1979), "A threshold selection
// method from gray-level histograms", IEEE SMC 9(1), computed exactly on
// the full histogram of the integer gray values 0..2^bitDepth-1 (one bin
// per value, no re-binning). Pixels with value <= t form class 1 and pixels
// > t class 2; the returned t maximizes the between-class variance
//
//	σ_B²(t) = ω₁ω₂(μ₁-μ₂)² ∝ (N·s(t) - S·c(t))² / (c(t)(N-c(t))),
//
// with c(t) and s(t) the count and the sum of values <= t, N and S the
// totals. The first maximum is taken, so within an empty gap of the
// histogram the lowest value wins. This is the convention of
// scikit-image's threshold_otsu for integer images, whose bin centres are
// the integers themselves (foreground = image > threshold). A constant
// image returns its value and an empty one 0. Otsu panics if bitDepth is
// not 8 or 16 or a value exceeds 2^bitDepth-1 (programmer error).
func Otsu(pixels []uint16, bitDepth int) uint16 {
	if bitDepth != 8 && bitDepth != 16 {
		panic(fmt.Sprintf("scenes: Otsu: bit depth %d is not 8 or 16", bitDepth))
	}
	if len(pixels) == 0 {
		return 0
	}
	maxv := 1<<bitDepth - 1
	hist := make([]int64, maxv+1)
	var sum int64
	for _, v := range pixels {
		if int(v) > maxv {
			panic(fmt.Sprintf("scenes: Otsu: value %d exceeds the %d-bit range", v, bitDepth))
		}
		hist[v]++
		sum += int64(v)
	}
	n := int64(len(pixels))
	nf, sf := float64(n), float64(sum)
	best, bestVar := int(pixels[0]), -1.0
	var c, s int64
	for t := 0; t < maxv; t++ {
		c += hist[t]
		s += int64(t) * hist[t]
		if c == 0 {
			continue
		}
		if c == n {
			break
		}
		d := nf*float64(s) - sf*float64(c)
		v := d * d / (float64(c) * float64(n-c))
		if v > bestVar {
			best, bestVar = t, v
		}
	}
	return uint16(best)
}

// OtsuObjects is the baseline segmentation: Otsu's threshold t on the scene
// pixels, foreground = pixels > t (or <= t when darkObjects), then the
// 8-connected components of the foreground (the default connectivity of
// scikit-image's measure.label for 2-D images) labelled 1..N in raster
// order of their first pixel. Background is 0.
func OtsuObjects(s *Scene, darkObjects bool) []int32 {
	t := Otsu(s.Pixels, s.BitDepth)
	fg := make([]bool, len(s.Pixels))
	for i, v := range s.Pixels {
		fg[i] = (v > t) != darkObjects
	}
	return components8(fg, s.Width, s.Height)
}

// components8 labels the 8-connected components of fg 1..N in raster order.
func components8(fg []bool, w, h int) []int32 {
	lab := make([]int32, len(fg))
	var next int32
	var stack []int
	for p, on := range fg {
		if !on || lab[p] != 0 {
			continue
		}
		next++
		lab[p] = next
		stack = append(stack[:0], p)
		for len(stack) > 0 {
			q := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			qx, qy := q%w, q/w
			for dy := -1; dy <= 1; dy++ {
				for dx := -1; dx <= 1; dx++ {
					x, y := qx+dx, qy+dy
					if x < 0 || y < 0 || x >= w || y >= h {
						continue
					}
					r := y*w + x
					if fg[r] && lab[r] == 0 {
						lab[r] = next
						stack = append(stack, r)
					}
				}
			}
		}
	}
	return lab
}
