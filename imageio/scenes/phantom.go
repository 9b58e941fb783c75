package scenes

import (
	"fmt"
	"math"
	"slices"
)

// sheppLoganEllipse is one row of the phantom's table: intensity A added
// inside the ellipse with centre (x0, y0), semi-axes a (along the rotated x
// axis) and b, rotated by phi degrees counter-clockwise, on the square
// [-1, 1]² with y pointing up.
type sheppLoganEllipse struct {
	A, a, b, x0, y0, phi float64
}

// modifiedSheppLogan is the ten-ellipse head phantom of Shepp and Logan
// (1974), "The Fourier reconstruction of a head section", IEEE Trans.
// Nucl. Sci. 21, with the higher-contrast intensities of Toft (1996), PhD
// thesis, DTU. The table was written from memory; TestSheppLoganSkimage
// cross-checks the rendering against scikit-image's
// shepp_logan_phantom() (Debian python3-skimage) through a committed
// reference.
var modifiedSheppLogan = [10]sheppLoganEllipse{
	{1.0, 0.6900, 0.9200, 0.00, 0.0000, 0},
	{-0.8, 0.6624, 0.8740, 0.00, -0.0184, 0},
	{-0.2, 0.1100, 0.3100, 0.22, 0.0000, -18},
	{-0.2, 0.1600, 0.4100, -0.22, 0.0000, 18},
	{0.1, 0.2100, 0.2500, 0.00, 0.3500, 0},
	{0.1, 0.0460, 0.0460, 0.00, 0.1000, 0},
	{0.1, 0.0460, 0.0460, 0.00, -0.1000, 0},
	{0.1, 0.0460, 0.0230, -0.08, -0.6050, 0},
	{0.1, 0.0230, 0.0230, 0.00, -0.6060, 0},
	{0.1, 0.0230, 0.0460, 0.06, -0.6050, 0},
}

// SheppLogan renders the modified Shepp–Logan phantom on an n×n grid
// covering [-1, 1]², sampling each pixel at its centre: column j maps to
// x = (2j+1)/n - 1 and row i to y = 1 - (2i+1)/n (row 0 at the top). A
// point belongs to an ellipse when
//
//	((x'cos φ + y'sin φ)/a)² + ((-x'sin φ + y'cos φ)/b)² <= 1,
//	x' = x - x0, y' = y - y0,
//
// and its value is the sum of the intensities A of the ellipses holding it.
// values[i*n+j] is that sum; regions[i*n+j] numbers the distinct regions:
// 0 outside the head, otherwise 1..R indexing the set of ellipses holding
// the pixel (equal sets have equal sums), numbered in increasing order of
// the set's bitmask (bit k for ellipse k of the table), so the numbering is
// fixed for every n at which all sets appear. It panics if n < 1.
func SheppLogan(n int) (values []float64, regions []int32) {
	if n < 1 {
		panic(fmt.Sprintf("scenes: SheppLogan: size %d < 1", n))
	}
	type rot struct{ s, c float64 }
	var rs [len(modifiedSheppLogan)]rot
	for k, e := range modifiedSheppLogan {
		s, c := math.Sincos(e.phi * math.Pi / 180)
		rs[k] = rot{s, c}
	}
	values = make([]float64, n*n)
	masks := make([]uint16, n*n)
	for i := 0; i < n; i++ {
		y := 1 - float64(2*i+1)/float64(n)
		for j := 0; j < n; j++ {
			x := float64(2*j+1)/float64(n) - 1
			var v float64
			var m uint16
			for k, e := range modifiedSheppLogan {
				dx, dy := x-e.x0, y-e.y0
				u := (dx*rs[k].c + dy*rs[k].s) / e.a
				w := (-dx*rs[k].s + dy*rs[k].c) / e.b
				if u*u+w*w <= 1 {
					v += e.A
					m |= 1 << k
				}
			}
			values[i*n+j] = v
			masks[i*n+j] = m
		}
	}
	var present []uint16
	seen := make(map[uint16]bool)
	for _, m := range masks {
		if m&1 != 0 && !seen[m] {
			seen[m] = true
			present = append(present, m)
		}
	}
	slices.Sort(present)
	id := make(map[uint16]int32, len(present))
	for r, m := range present {
		id[m] = int32(r + 1)
	}
	regions = make([]int32, n*n)
	for p, m := range masks {
		if m&1 != 0 {
			regions[p] = id[m]
		}
	}
	return values, regions
}
