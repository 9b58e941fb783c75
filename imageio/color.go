package imageio

import (
	"math"
	"slices"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// Rec. 709 / sRGB luma coefficients (ITU-R BT.709-6, item 3.2; the middle
// row of the IEC 61966-2-1 RGB-to-XYZ matrix).
const (
	lumaR = 0.2126
	lumaG = 0.7152
	lumaB = 0.0722
)

// luminance returns Y' = 0.2126 R + 0.7152 G + 0.0722 B applied to the
// stored (gamma-encoded) samples, in the image's own units; a gray image's
// plane is returned as is (see below). Applying the coefficients to encoded values gives
// luma, not linear-light luminance: it keeps the perceptual spacing of the
// stored levels, which is what the intensity kernel compares.
func luminance(im *Image, workers int) []float32 {
	n := im.Width * im.Height
	if im.Channels == 1 {
		// The image's own plane, when it is a slice of its own (not a
		// window on a larger buffer that it would keep alive): read only
		// here and by every caller of MakeFeatures.
		if p := im.Planes[0]; cap(p) == n {
			return p
		}
		return slices.Clone(im.Planes[0][:n])
	}
	out := make([]float32, n)
	r, g, b := im.Planes[0], im.Planes[1], im.Planes[2]
	parallel.Blocks(n, pixelBlock, workers, func(_, lo, hi int) {
		for i := lo; i < hi; i++ {
			out[i] = float32(lumaR*float64(r[i]) + lumaG*float64(g[i]) + lumaB*float64(b[i]))
		}
	})
	return out
}

// xyzFromRGB is the linear sRGB to CIE XYZ matrix, derived from the
// chromaticities that IEC 61966-2-1 (and ITU-R BT.709) specify: red
// (0.64, 0.33), green (0.30, 0.60), blue (0.15, 0.06), white D65
// (0.3127, 0.3290). Each column is the primary's XYZ (x/y, 1, (1-x-y)/y)
// scaled by S, where S solves P S = W_XYZ so that RGB (1, 1, 1) maps to the
// white with Y = 1 (SMPTE RP 177-1993). The result agrees with the
// standard's four-digit matrix (0.4124 0.3576 0.1805 / 0.2126 0.7152
// 0.0722 / 0.0193 0.1192 0.9505) when rounded.
var xyzFromRGB = rgbToXYZMatrix([3][2]float64{{0.64, 0.33}, {0.30, 0.60}, {0.15, 0.06}}, [2]float64{0.3127, 0.3290})

// whiteXYZ is the reference white (Xn, Yn, Zn): the XYZ of RGB (1, 1, 1),
// D65 with Yn = 1, so sRGB white maps exactly to L*=100, a*=b*=0.
var whiteXYZ = [3]float64{
	xyzFromRGB[0][0] + xyzFromRGB[0][1] + xyzFromRGB[0][2],
	xyzFromRGB[1][0] + xyzFromRGB[1][1] + xyzFromRGB[1][2],
	xyzFromRGB[2][0] + xyzFromRGB[2][1] + xyzFromRGB[2][2],
}

// rgbToXYZMatrix builds the RGB to XYZ matrix of three primaries and a
// white point given as xy chromaticities (SMPTE RP 177-1993), solving the
// 3x3 system by Cramer's rule.
func rgbToXYZMatrix(prim [3][2]float64, white [2]float64) [3][3]float64 {
	var p [3][3]float64 // columns: XYZ of each primary with Y = 1
	for j, c := range prim {
		p[0][j] = c[0] / c[1]
		p[1][j] = 1
		p[2][j] = (1 - c[0] - c[1]) / c[1]
	}
	w := [3]float64{white[0] / white[1], 1, (1 - white[0] - white[1]) / white[1]}
	det := func(m [3][3]float64) float64 {
		return m[0][0]*(m[1][1]*m[2][2]-m[1][2]*m[2][1]) -
			m[0][1]*(m[1][0]*m[2][2]-m[1][2]*m[2][0]) +
			m[0][2]*(m[1][0]*m[2][1]-m[1][1]*m[2][0])
	}
	d := det(p)
	var m [3][3]float64
	for j := 0; j < 3; j++ {
		q := p
		for i := 0; i < 3; i++ {
			q[i][j] = w[i]
		}
		s := det(q) / d
		for i := 0; i < 3; i++ {
			m[i][j] = p[i][j] * s
		}
	}
	return m
}

// srgbToLinear is the IEC 61966-2-1 decoding curve on a value in [0, 1]:
// c/12.92 for c <= 0.04045, else ((c+0.055)/1.055)^2.4.
func srgbToLinear(c float64) float64 {
	if c <= 0.04045 {
		return c / 12.92
	}
	return math.Pow((c+0.055)/1.055, 2.4)
}

// labF is the CIE 1976 function f(t) = t^(1/3) for t > (6/29)^3, else
// t/(3 (6/29)^2) + 4/29 (CIE 15:2004, section 8.2.1).
func labF(t float64) float64 {
	const d = 6.0 / 29
	if t > d*d*d {
		return math.Cbrt(t)
	}
	return t/(3*d*d) + 4.0/29
}

// linearTable tabulates srgbToLinear(v/max) for every integer sample v of
// the bit depth (samples are integers, so the table is exact).
func linearTable(bitDepth int) []float64 {
	max := 1<<bitDepth - 1
	t := make([]float64, max+1)
	for v := range t {
		t[v] = srgbToLinear(float64(v) / float64(max))
	}
	return t
}

// linearOf looks a sample up in the table, or computes it for a sample that
// is not an integer in range.
func linearOf(t []float64, v float32) float64 {
	if i := int(v); float32(i) == v && i >= 0 && i < len(t) {
		return t[i]
	}
	c := float64(v) / float64(len(t)-1)
	return srgbToLinear(math.Min(math.Max(c, 0), 1))
}

// rgbToLab converts linear-light sRGB (r, g, b) to CIE L*a*b* (CIE 15:2004):
//
//	L* = 116 f(Y/Yn) - 16,  a* = 500 (f(X/Xn) - f(Y/Yn)),  b* = 200 (f(Y/Yn) - f(Z/Zn)).
func rgbToLab(r, g, b float64) (L, A, B float64) {
	x := (xyzFromRGB[0][0]*r + xyzFromRGB[0][1]*g + xyzFromRGB[0][2]*b) / whiteXYZ[0]
	y := (xyzFromRGB[1][0]*r + xyzFromRGB[1][1]*g + xyzFromRGB[1][2]*b) / whiteXYZ[1]
	z := (xyzFromRGB[2][0]*r + xyzFromRGB[2][1]*g + xyzFromRGB[2][2]*b) / whiteXYZ[2]
	fx, fy, fz := labF(x), labF(y), labF(z)
	return 116*fy - 16, 500 * (fx - fy), 200 * (fy - fz)
}

// labPlanes returns CIE L*a*b* of an sRGB image as three planes in the CIE
// units (L* in 0..100, a* and b* roughly -128..128). A gray image gives the
// L* plane only (a* = b* = 0 carry no information): Y = linearized gray.
func labPlanes(im *Image, workers int) [][]float32 {
	n := im.Width * im.Height
	lin := linearTable(im.BitDepth)
	L := make([]float32, n)
	if im.Channels == 1 {
		g := im.Planes[0]
		parallel.Blocks(n, pixelBlock, workers, func(_, lo, hi int) {
			for i := lo; i < hi; i++ {
				L[i] = float32(116*labF(linearOf(lin, g[i])) - 16)
			}
		})
		return [][]float32{L}
	}
	A, B := make([]float32, n), make([]float32, n)
	r, g, b := im.Planes[0], im.Planes[1], im.Planes[2]
	parallel.Blocks(n, pixelBlock, workers, func(_, lo, hi int) {
		for i := lo; i < hi; i++ {
			l, a, bb := rgbToLab(linearOf(lin, r[i]), linearOf(lin, g[i]), linearOf(lin, b[i]))
			L[i], A[i], B[i] = float32(l), float32(a), float32(bb)
		}
	})
	return [][]float32{L, A, B}
}
