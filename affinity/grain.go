package affinity

import (
	"math"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// Grain is the directional texture model of a machined surface (grinding
// or milling marks, rolling lines): intensity that changes quickly across
// one direction and stays alike for a long way along it.
type Grain struct {
	// Angle is the direction along the grain, radians in (-π/2, π/2],
	// x right and y down.
	Angle float64
	// Share is the oriented share of the gradient energy,
	// c = (E_n - E_t)/(E_n + E_t) in [0, 1], where E_n and E_t are the
	// energies of the derivative across and along the grain (the
	// coherence of the structure tensor).
	Share float64
	// Length is ℓ, the lag along the grain (pixels) at which the
	// autocorrelation of the across-grain derivative falls to 1/2.
	Length float64
}

// Sigma is the standard deviation (pixels) of the smoothing along the
// grain in RemoveGrain: ℓ/2, so that the window's central ±2σ (95 % of
// its weight) stays within the length ℓ over which the grain is alike.
func (g Grain) Sigma() float64 { return g.Length / 2 }

// grainMaxLagDivisor bounds the length search: lags up to max(w, h)/8,
// the scale of the smooth background field of the class grouping, so the
// along-grain window never spans more of the image than the shading
// model does.
const grainMaxLagDivisor = 8

// EstimateGrain measures the dominant orientation of the texture of a
// plane and how much of it is directional, from the structure tensor of
// Bigün and Granlund (1987, Optimal orientation detection of linear
// symmetry, ICCV) and Kass and Witkin (1987, Analyzing oriented patterns,
// CVGIP 37) summed over the whole image:
//
//	J = Σ_x ∇I_σ ∇I_σᵀ,  σ = ContourScale,
//	θ_n = ½ atan2(2 J_xy, J_xx - J_yy)   (across the grain; Angle = θ_n + π/2),
//	c = sqrt((J_xx - J_yy)² + 4 J_xy²) / (J_xx + J_yy),
//
// c being (E_n - E_t)/(E_n + E_t) with E_n, E_t the eigenvalues of J:
// if the texture is an oriented part (energy O, across only) plus an
// isotropic part (energy J₀ per direction), c = O/(O + 2J₀), the share of
// the gradient energy the oriented part explains. Objects (pits, nuclei)
// have edges in every direction and add to the isotropic part only.
// Length is the smallest lag d (pixels, on lags 2^(k/4), linearly
// interpolated) at which the autocorrelation along the grain of the
// across-grain derivative g_n = ∇I_σ · n falls to 1/2,
//
//	ρ(d) = Σ g_n(x) g_n(x + d t) / sqrt(Σ g_n(x)² Σ g_n(x + d t)²),
//
// over the pixels x whose partner x + d t (bilinear) lies inside the
// image; it is the half-correlation length of the grain's lines (common
// practice for a correlation length), clamped to [2σ, max(w, h)/8].
// Rows are processed in fixed chunks and summed in row order, so the
// result does not depend on workers.
func EstimateGrain(plane []float32, w, h int, workers int) Grain {
	gx, gy := make([]float32, w*h), make([]float32, w*h)
	gaussianJet(plane, w, h, ContourScale, workers, func(y int, ix, iy, _, _, _ []float64) {
		for x := range w {
			gx[y*w+x], gy[y*w+x] = float32(ix[x]), float32(iy[x])
		}
	})
	rows := make([][3]float64, h)
	parallel.Blocks(h, bandRows, workers, func(_, y0, y1 int) {
		for y := y0; y < y1; y++ {
			var a, b, c float64
			for i := y * w; i < (y+1)*w; i++ {
				x, yy := float64(gx[i]), float64(gy[i])
				a += x * x
				b += x * yy
				c += yy * yy
			}
			rows[y] = [3]float64{a, b, c}
		}
	})
	var jxx, jxy, jyy float64
	for _, r := range rows {
		jxx, jxy, jyy = jxx+r[0], jxy+r[1], jyy+r[2]
	}
	lo := 2 * ContourScale
	hi := max(lo, float64(max(w, h))/grainMaxLagDivisor)
	if !(jxx+jyy > 0) {
		return Grain{Length: lo}
	}
	thn := 0.5 * math.Atan2(2*jxy, jxx-jyy)
	g := Grain{Share: min(1, math.Hypot(jxx-jyy, 2*jxy)/(jxx+jyy))}
	g.Angle = thn + math.Pi/2
	if g.Angle > math.Pi/2 {
		g.Angle -= math.Pi
	}
	sn, cn := math.Sincos(thn)
	gn := make([]float32, w*h)
	for i := range gn {
		gn[i] = float32(cn*float64(gx[i]) + sn*float64(gy[i]))
	}
	st, ct := math.Sincos(g.Angle)
	g.Length = hi
	prevD, prevR := 0.0, 1.0
	for k := 0; ; k++ {
		d := math.Exp2(float64(k) / 4)
		if d > hi {
			break
		}
		r := alongCorrelation(gn, w, h, d*ct, d*st, workers)
		if r < 0.5 {
			g.Length = prevD + (d-prevD)*(prevR-0.5)/(prevR-r)
			break
		}
		prevD, prevR = d, r
	}
	g.Length = min(max(g.Length, lo), hi)
	return g
}

// alongCorrelation returns the normalized correlation of v with itself
// shifted by (dx, dy) pixels (bilinear), over the pixels whose partner
// lies inside the image; 0 when there are none or v vanishes there.
func alongCorrelation(v []float32, w, h int, dx, dy float64, workers int) float64 {
	rows := make([][3]float64, h)
	parallel.Blocks(h, bandRows, workers, func(_, y0, y1 int) {
		for y := y0; y < y1; y++ {
			py := float64(y) + dy
			if py < 0 || py > float64(h-1) {
				continue
			}
			y0 := min(int(py), h-1)
			y1 := min(y0+1, h-1)
			ty := py - float64(y0)
			var sab, saa, sbb float64
			for x := 0; x < w; x++ {
				px := float64(x) + dx
				if px < 0 || px > float64(w-1) {
					continue
				}
				x0 := min(int(px), w-1)
				x1 := min(x0+1, w-1)
				tx := px - float64(x0)
				b := (1-ty)*((1-tx)*float64(v[y0*w+x0])+tx*float64(v[y0*w+x1])) +
					ty*((1-tx)*float64(v[y1*w+x0])+tx*float64(v[y1*w+x1]))
				a := float64(v[y*w+x])
				sab += a * b
				saa += a * a
				sbb += b * b
			}
			rows[y] = [3]float64{sab, saa, sbb}
		}
	})
	var sab, saa, sbb float64
	for _, r := range rows {
		sab, saa, sbb = sab+r[0], saa+r[1], sbb+r[2]
	}
	if !(saa > 0 && sbb > 0) {
		return 0
	}
	return sab / math.Sqrt(saa*sbb)
}

// RemoveGrain subtracts the directional texture g from a plane:
//
//	I' = I - c · (G_σ^t * I - G_σ * I),
//
// where G_σ^t * I is I smoothed along the grain only (a sampled 1-D
// Gaussian of σ = g.Sigma() along t, bilinear taps), G_σ * I the
// isotropic Gaussian of the same σ, and c = g.Share. Along the grain the
// texture stays alike over σ, so the first smoothing keeps it while the
// isotropic one averages it out; their difference is the grain, and
// objects much shorter than σ along t enter it only weakly. This is the
// removal of an oriented pattern by filtering along its flow (Kass and
// Witkin 1987), weighted by the share of the gradient energy the
// orientation explains, so an isotropic image (c near 0) is barely
// changed. Edges are reflected (scipy.ndimage's "reflect"). Rows are
// processed in fixed chunks, so the result does not depend on workers.
func RemoveGrain(plane []float32, w, h int, g Grain, workers int) []float32 {
	s := g.Sigma()
	iso := make([]float32, w*h)
	gaussBlur(plane, iso, make([]float32, w*h), w, h, s, workers)
	// Taps along t at offsets k = -r..r: the bilinear weights of the
	// sample at (x + k t_x, y + k t_y) are the same for every pixel.
	half := gaussKernel(s)
	r := len(half) - 1
	type tap struct {
		ox, oy int        // integer part of the offset
		w      [4]float32 // bilinear weights at (0,0), (1,0), (0,1), (1,1), times the kernel weight
	}
	st, ct := math.Sincos(g.Angle)
	taps := make([]tap, 0, 2*r+1)
	for k := -r; k <= r; k++ {
		kw := float64(half[abs(k)])
		fx, fy := float64(k)*ct, float64(k)*st
		ox, oy := math.Floor(fx), math.Floor(fy)
		tx, ty := fx-ox, fy-oy
		taps = append(taps, tap{int(ox), int(oy), [4]float32{
			float32(kw * (1 - tx) * (1 - ty)), float32(kw * tx * (1 - ty)),
			float32(kw * (1 - tx) * ty), float32(kw * tx * ty)}})
	}
	// Pixels whose every tap lies inside the image skip the reflection.
	oxLo, oxHi, oyLo, oyHi := 0, 0, 0, 0
	for _, tp := range taps {
		oxLo, oxHi = min(oxLo, tp.ox), max(oxHi, tp.ox+1)
		oyLo, oyHi = min(oyLo, tp.oy), max(oyHi, tp.oy+1)
	}
	out := make([]float32, w*h)
	c := float32(g.Share)
	parallel.Blocks(h, bandRows, workers, func(_, y0, y1 int) {
		for y := y0; y < y1; y++ {
			inY := y+oyLo >= 0 && y+oyHi < h
			for x := 0; x < w; x++ {
				var a float32
				if inY && x+oxLo >= 0 && x+oxHi < w {
					for _, tp := range taps {
						j := (y+tp.oy)*w + x + tp.ox
						a += tp.w[0]*plane[j] + tp.w[1]*plane[j+1] + tp.w[2]*plane[j+w] + tp.w[3]*plane[j+w+1]
					}
				} else {
					for _, tp := range taps {
						xa, xb := mirror(x+tp.ox, w), mirror(x+tp.ox+1, w)
						ya, yb := mirror(y+tp.oy, h)*w, mirror(y+tp.oy+1, h)*w
						a += tp.w[0]*plane[ya+xa] + tp.w[1]*plane[ya+xb] + tp.w[2]*plane[yb+xa] + tp.w[3]*plane[yb+xb]
					}
				}
				i := y*w + x
				out[i] = plane[i] - c*(a-iso[i])
			}
		}
	})
	return out
}
