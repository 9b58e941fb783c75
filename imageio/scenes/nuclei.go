package scenes

import (
	"fmt"
	"math"
)

// NucleiOptions configures Nuclei. Zero values select the defaults given in
// each field's comment; invalid values are reported by Validate.
type NucleiOptions struct {
	Width, Height int    // image size in pixels; default 512 x 512
	Count         int    // nuclei to place; default 34 per 512² pixels (at least 1)
	Seed          uint64 // random seed; the scene is a function of the options
	BitDepth      int    // 8 or 16; default 16

	// RadiusMin and RadiusMax bound the mean radius sqrt(a·b) of a nucleus
	// in pixels; defaults 8 and 20.
	RadiusMin, RadiusMax float64
	// PairFraction is the fraction of nuclei placed in touching pairs;
	// default 0.5, a negative value means no pairs.
	PairFraction float64
	// DimFraction is the fraction of nuclei (or pairs) drawn dim: 12–28 %
	// of the brightest and in the lower half of the radius range;
	// default 0.1, a negative value means none.
	DimFraction float64
	// CornerLevel is the illumination at the corner farthest from the
	// optical axis relative to the axis; default 0.4.
	CornerLevel float64
	// Haze is the mean additive glow relative to the brightest nucleus;
	// default 0.08, a negative value means none.
	Haze float64
	// Photons is the expected photoelectron count of a nucleus of
	// brightness 1 on the optical axis; default 800. It sets the shot-noise
	// level: the signal-to-noise ratio there is about sqrt(Photons).
	Photons float64
	// ReadNoise is the camera read noise in electrons; default 3, a
	// negative value means none.
	ReadNoise float64
}

func (o NucleiOptions) withDefaults() NucleiOptions {
	defaultFrame(&o.Width, &o.Height, &o.BitDepth)
	o.Count = orDefault(o.Count, max(1, int(math.Round(34*float64(o.Width*o.Height)/(512*512)))))
	defaultRadii(&o.RadiusMin, &o.RadiusMax, 8, 20)
	o.PairFraction = defaultFrac(o.PairFraction, 0.5)
	o.DimFraction = defaultFrac(o.DimFraction, 0.1)
	o.Haze = defaultFrac(o.Haze, 0.08)
	o.CornerLevel = orDefault(o.CornerLevel, 0.4)
	defaultCamera(&o.Photons, &o.ReadNoise, 800, 3)
	return o
}

// Validate reports the first invalid option, naming it.
func (o NucleiOptions) Validate() error {
	o = o.withDefaults()
	const kind = "nuclei"
	return firstError(
		checkGeometry(kind, o.Width, o.Height, o.BitDepth),
		checkNuclei(kind, o.Count, o.RadiusMin, o.RadiusMax, 2, o.Width, o.Height),
		checkFraction(kind, "PairFraction", o.PairFraction),
		checkFraction(kind, "DimFraction", o.DimFraction),
		invalidIf(o.CornerLevel < 0 || o.CornerLevel > 1, kind, "CornerLevel %g outside (0, 1]", o.CornerLevel),
		checkFraction(kind, "Haze", o.Haze),
		checkCamera(kind, o.Photons, o.ReadNoise),
		checkCrowding(kind, o.Count, o.RadiusMin, o.RadiusMax, o.Width, o.Height),
	)
}

// ellipse is a nucleus outline: centre (cx, cy), semi-axes a, b and the
// angle theta of axis a to the x axis.
type ellipse struct {
	cx, cy, a, b, theta float64
}

// rho is the normalized radius sqrt((u/a)² + (v/b)²) of the point (x, y) in
// the ellipse's own axes (u, v); the ellipse is rho <= 1.
func (e ellipse) rho(x, y float64) float64 {
	dx, dy := x-e.cx, y-e.cy
	s, c := math.Sincos(e.theta)
	u := c*dx + s*dy
	v := -s*dx + c*dy
	return math.Hypot(u/e.a, v/e.b)
}

// margin is the signed distance, along the ray from the centre, from (x, y)
// to the outline: d(1/rho - 1) with d the distance to the centre, positive
// inside. It is exact along each ray and is the inside test used for both
// rendering and truth (inside ⇔ margin > 0).
func (e ellipse) margin(x, y float64) float64 {
	d := math.Hypot(x-e.cx, y-e.cy)
	r := e.rho(x, y)
	if r == 0 {
		return e.b
	}
	return d * (1/r - 1)
}

// radiusAt is the distance from the centre to the outline in direction phi.
func (e ellipse) radiusAt(phi float64) float64 {
	s, c := math.Sincos(phi - e.theta)
	return 1 / math.Hypot(c/e.a, s/e.b)
}

// box returns the pixel box x0, y0, x1, y1 (inclusive, not clipped) of the
// disc of radius a + pad around the centre, which holds the ellipse
// (a >= b) grown by pad pixels.
func (e ellipse) box(pad float64) [4]int {
	return [4]int{
		int(math.Floor(e.cx - e.a - pad)), int(math.Floor(e.cy - e.a - pad)),
		int(math.Ceil(e.cx + e.a + pad)), int(math.Ceil(e.cy + e.a + pad)),
	}
}

// nucleus is one placed object with its brightness.
type nucleus struct {
	shape      ellipse
	brightness float64
}

// Nuclei renders a fluorescence-like field of nuclei: bright objects on a
// dark background. The model, in order:
//
//   - Shapes: ellipses of mean radius sqrt(ab) uniform in
//     [RadiusMin, RadiusMax], aspect a/b uniform in [1, 1.6], random angle.
//     Apart from the two partners of a pair, nuclei keep at least 4 px
//     apart and 2 px from the border. A fraction PairFraction of the
//     nuclei come as touching pairs: the second centre sits at 0.78–0.9 of
//     the summed outline radii from the first along a random direction, so
//     the outlines overlap; each pixel of the overlap goes to the nucleus
//     with the larger margin, so the pair is two truth objects sharing a
//     boundary. The two nuclei of a pair (daughters of one division)
//     differ in mean radius by at most 12 % and in brightness by at most
//     10 %.
//   - Brightness b: uniform in [0.55, 1], or [0.12, 0.28] for a dim
//     nucleus (probability DimFraction; its radius is drawn from the lower
//     half of the range). Inside a nucleus the emitted intensity is
//     b·(0.85 + 0.15(1-ρ²))·(1 + 0.18 T) with ρ the normalized radius and
//     T a unit-variance texture (white noise smoothed by a Gaussian of
//     σ = 1.5 px, chromatin-like granularity). Near the shared boundary of
//     a pair it is multiplied by 1 - (1-s)·exp(-δ²/2), where δ is half the
//     margin difference (≈ distance in pixels to the shared boundary) and
//     the seam level s is uniform in [0.5, 0.7].
//   - Edges are anti-aliased with coverage clamp(1/2 + margin, 0, 1); then
//     the optics blur everything with a Gaussian PSF of σ = 1 px.
//   - Haze: an additive glow, Haze·(0.4 + 1.2 G/max G) with G a sum of
//     three broad Gaussians (σ 15–35 % of the short side).
//   - Illumination falls off quadratically from an optical axis near the
//     centre, V = 1 - (1-CornerLevel)(d/d_max)², reaching CornerLevel at
//     the farthest corner (a common approximation of vignetting).
//   - Camera: expected electrons e = Photons·V·(signal + haze), Poisson
//     shot noise in its Gaussian approximation plus ReadNoise, digital
//     number = offset + gain·e with the offset 2 % of full scale and the
//     gain putting brightness 1 on the axis at 60 % of full scale.
//
// Truth labels are 1..Objects in placement order (pairs first, the two
// nuclei of a pair consecutive). When the field is too crowded to place a
// nucleus after a bounded number of tries it is left out, so Objects may be
// below Count. Nuclei panics if o.Validate() fails: check options from
// users with Validate first.
func Nuclei(o NucleiOptions) *Scene {
	o = mustValidate(o)
	w, h := o.Width, o.Height
	rng := newRand(o.Seed, 0x6e75636c6569) // "nuclei"

	nPairs := int(math.Round(float64(o.Count) * o.PairFraction / 2))
	nSingles := o.Count - 2*nPairs

	truth := make([]int32, w*h)
	var placed []nucleus
	var pairs [][2]int      // indices into placed
	var seamLevel []float64 // per pair
	const tries = 400

	shape := func(cx, cy, r float64) ellipse {
		asp := uniform(rng, 1, 1.6)
		return ellipse{cx: cx, cy: cy, a: r * math.Sqrt(asp), b: r / math.Sqrt(asp), theta: uniform(rng, 0, math.Pi)}
	}
	// draw returns the mean radius and brightness of a new nucleus (or of
	// the first of a pair); dim nuclei are small and weakly stained.
	draw := func() (r, b float64) {
		if rng.Float64() < o.DimFraction {
			return uniform(rng, o.RadiusMin, (o.RadiusMin+o.RadiusMax)/2), uniform(rng, 0.12, 0.28)
		}
		return uniform(rng, o.RadiusMin, o.RadiusMax), uniform(rng, 0.55, 1)
	}
	// inside returns the pixels whose centres lie inside any of the shapes,
	// or nil if one falls within 2 px of the image border.
	inside := func(es ...ellipse) []int {
		var pix []int
		for _, e := range es {
			p, ok := insidePixels(e.margin, e.box(1), w, h)
			if !ok {
				return nil
			}
			pix = append(pix, p...)
		}
		return pix
	}
	randomCentre := func() (float64, float64) {
		return uniform(rng, 0, float64(w)), uniform(rng, 0, float64(h))
	}

	for range nPairs {
		for range tries {
			cx, cy := randomCentre()
			// Daughter nuclei of one division: similar size and brightness.
			r1, b1 := draw()
			r2 := max(o.RadiusMin, min(o.RadiusMax, r1*uniform(rng, 0.88, 1.12)))
			b2 := b1 * uniform(rng, 0.9, 1.1)
			e1, e2 := shape(cx, cy, r1), shape(0, 0, r2)
			phi := uniform(rng, 0, 2*math.Pi)
			dist := (e1.radiusAt(phi) + e2.radiusAt(phi+math.Pi)) * uniform(rng, 0.78, 0.9)
			e2.cx, e2.cy = cx+dist*math.Cos(phi), cy+dist*math.Sin(phi)
			s := uniform(rng, 0.5, 0.7)
			pix := inside(e1, e2)
			if pix == nil || touchesLabelled(truth, w, h, pix, 4) {
				continue
			}
			l1, l2 := int32(len(placed)+1), int32(len(placed)+2)
			if !labelPair(truth, w, pix, e1, e2, l1, l2) {
				continue
			}
			pairs = append(pairs, [2]int{len(placed), len(placed) + 1})
			seamLevel = append(seamLevel, s)
			placed = append(placed, nucleus{e1, b1}, nucleus{e2, b2})
			break
		}
	}
	for range nSingles {
		for range tries {
			cx, cy := randomCentre()
			r, b := draw()
			e := shape(cx, cy, r)
			pix := inside(e)
			if pix == nil || touchesLabelled(truth, w, h, pix, 4) {
				continue
			}
			l := int32(len(placed) + 1)
			for _, p := range pix {
				truth[p] = l
			}
			placed = append(placed, nucleus{e, b})
			break
		}
	}

	// Emitted signal.
	texture := smoothNoise(rng, w, h, 1.5)
	signal := make([]float64, w*h)
	partner := make([]int, len(placed))
	for i := range partner {
		partner[i] = -1
	}
	pairOf := make([]int, len(placed))
	for k, p := range pairs {
		partner[p[0]], partner[p[1]] = p[1], p[0]
		pairOf[p[0]], pairOf[p[1]] = k, k
	}
	for i, n := range placed {
		e := n.shape
		j := partner[i]
		if j >= 0 && j < i {
			continue // drawn with its partner
		}
		b := e.box(2)
		if j >= 0 {
			f := placed[j].shape.box(2)
			b = [4]int{min(b[0], f[0]), min(b[1], f[1]), max(b[2], f[2]), max(b[3], f[3])}
		}
		x0, y0, x1, y1 := max(0, b[0]), max(0, b[1]), min(w-1, b[2]), min(h-1, b[3])
		for y := y0; y <= y1; y++ {
			for x := x0; x <= x1; x++ {
				px, py := float64(x)+0.5, float64(y)+0.5
				m1 := e.margin(px, py)
				own, m := n, m1
				seam := 1.0
				if j >= 0 {
					m2 := placed[j].shape.margin(px, py)
					if m2 > m1 {
						own, m = placed[j], m2
					}
					seam = seamFactor(seamLevel[pairOf[i]], m1, m2)
				}
				c := coverage(m)
				if c == 0 {
					continue
				}
				r := own.shape.rho(px, py)
				v := own.brightness * (0.85 + 0.15*(1-r*r)) * (1 + 0.18*texture[y*w+x]) * seam
				signal[y*w+x] += c * max(v, 0)
			}
		}
	}
	signal = blur(signal, w, h, 1.0)

	// Haze and vignetting.
	haze := glow(rng, w, h, o.Haze)
	illum := vignette(rng, w, h, o.CornerLevel)
	electrons := make([]float64, w*h)
	for i := range electrons {
		electrons[i] = o.Photons * illum[i] * (signal[i] + haze[i])
	}
	pixels := expose(rng, electrons, o.BitDepth, 0.6, o.Photons, o.ReadNoise)
	return &Scene{Name: fmt.Sprintf("nuclei-%d", o.Seed), Width: w, Height: h, BitDepth: o.BitDepth,
		Pixels: pixels, Truth: truth, Objects: len(placed)}
}

// labelPair assigns each candidate pixel to the ellipse with the larger
// margin and reports whether both labels form one 4-connected piece each
// and share a boundary; otherwise it leaves truth unchanged.
func labelPair(truth []int32, w int, pix []int, e1, e2 ellipse, l1, l2 int32) bool {
	lab := make(map[int]int32, len(pix))
	for _, p := range pix {
		x, y := float64(p%w)+0.5, float64(p/w)+0.5
		if e1.margin(x, y) >= e2.margin(x, y) {
			lab[p] = l1
		} else {
			lab[p] = l2
		}
	}
	get := func(p int) int32 { return lab[p] }
	for _, l := range []int32{l1, l2} {
		if pieces4(lab, w, l) != 1 {
			return false
		}
	}
	touch := false
	for _, p := range pix {
		if get(p) == l1 && (get(p+1) == l2 || get(p-1) == l2 || get(p+w) == l2 || get(p-w) == l2) {
			touch = true
			break
		}
	}
	if !touch {
		return false
	}
	for p, l := range lab {
		truth[p] = l
	}
	return true
}
