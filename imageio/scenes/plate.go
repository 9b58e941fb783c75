package scenes

import (
	"fmt"
	"math"
	"slices"
)

// PlateOptions configures Plate. Zero values select the defaults given in
// each field's comment; invalid values are reported by Validate.
type PlateOptions struct {
	Width, Height int    // image size in pixels; default 512 x 512
	Seed          uint64 // random seed; the scene is a function of the options
	BitDepth      int    // 8 or 16; default 16

	// Pits is the number of pits to place; default a draw from 5..9 per
	// 512² pixels, a negative value means none.
	Pits int
	// Scratches is the number of scratches; default 1 or 2 (drawn), a
	// negative value means none.
	Scratches int
	// Gradient is the ratio of the brightest to the darkest illumination
	// across the field from the raking light; default 2.5.
	Gradient float64
	// Grain is the standard deviation of the surface texture relative to
	// the mean reflectance; default 0.08, a negative value means none.
	Grain float64
	// Photons is the expected electron count of bare surface at the
	// brightest illumination; default 2000.
	Photons float64
	// ReadNoise is the camera read noise in electrons; default 3, a
	// negative value means none.
	ReadNoise float64
}

func (o PlateOptions) withDefaults() PlateOptions {
	defaultFrame(&o.Width, &o.Height, &o.BitDepth)
	o.Gradient = orDefault(o.Gradient, 2.5)
	o.Grain = defaultFrac(o.Grain, 0.08)
	defaultCamera(&o.Photons, &o.ReadNoise, 2000, 3)
	return o
}

// Validate reports the first invalid option, naming it.
func (o PlateOptions) Validate() error {
	o = o.withDefaults()
	const kind = "plate"
	return firstError(
		checkGeometry(kind, o.Width, o.Height, o.BitDepth),
		checkLineRoom(kind, "scratch", o.Width, o.Height),
		checkDefectCount(kind, "Pits", o.Pits, o.Width, o.Height),
		invalidIf(o.Scratches > 8, kind, "Scratches %d exceeds 8", o.Scratches),
		invalidIf(o.Gradient < 1 || o.Gradient > 100, kind, "Gradient %g outside [1, 100]", o.Gradient),
		invalidIf(o.Grain > 0.5, kind, "Grain %g exceeds 0.5", o.Grain),
		checkCamera(kind, o.Photons, o.ReadNoise),
	)
}

// scratch is a thick polyline: the points within width/2 of the segments
// joining its vertices.
type scratch struct {
	xs, ys []float64
	width  float64
}

// margin is width/2 minus the distance from (x, y) to the polyline.
func (s scratch) margin(x, y float64) float64 {
	best := math.Inf(1)
	for i := 0; i+1 < len(s.xs); i++ {
		_, d := nearestOnSegment(x, y, s.xs[i], s.ys[i], s.xs[i+1], s.ys[i+1])
		best = min(best, d)
	}
	return s.width/2 - best
}

// Plate renders a metal inspection plate under raking light: a bright,
// grainy surface with dark pits and thin dark scratches. The model:
//
//   - Surface reflectance 1 + Grain·(0.6 g + 0.8 s), where g is white
//     noise smoothed by a Gaussian of σ = 1.2 px (isotropic grain) and s are
//     brushing streaks, a 1-D noise profile (σ = 0.8 px) across a random
//     brushing direction, constant along it; both have unit variance, so
//     the texture's standard deviation is Grain.
//   - Scratches (1 or 2 by default): polylines of 3–4 vertices, about
//     100–300 px long, turning by at most 25° per vertex, 3–6 px wide;
//     reflectance multiplied by a level in [0.45, 0.6] inside.
//   - Pits (5–9 per 512² by default): star-shaped blobs with mean radius
//     4–15 px and harmonics k = 2, 3, 4 of relative amplitude up to 0.12;
//     reflectance multiplied by a depth level in [0.3, 0.5], shaded by
//     1 - 0.3 (p-c)·l/r0 with l the direction the light comes from: the
//     wall facing the light (on the far side from it) is brighter, the
//     wall under the near rim darker.
//     Objects keep at least 4 px apart and 2 px from the border.
//   - Edges anti-aliased with coverage clamp(1/2 + margin, 0, 1), then a
//     Gaussian PSF of σ = 0.8 px on the reflectance.
//   - Raking light: illumination Gradient^(-t) with t in [0, 1] the
//     position along the light direction l across the field, so the
//     surface falls from bright to dark by the factor Gradient.
//   - Camera: electrons e = Photons·illumination·reflectance, shot noise
//     (Gaussian approximation of Poisson) and ReadNoise, digital number =
//     offset + gain·e with offset 2 % of full scale and bare surface at the
//     brightest point near 70 % of full scale.
//
// Each pit and scratch is one truth object, scratches labelled first,
// then pits, in placement order. An object that cannot be placed after a
// bounded number of tries is left out. Plate panics if o.Validate() fails.
func Plate(o PlateOptions) *Scene {
	o = mustValidate(o)
	w, h := o.Width, o.Height
	fw, fh := float64(w), float64(h)
	rng := newRand(o.Seed, 0x706c617465) // "plate"
	area := fw * fh / (512 * 512)

	nPits := countPerField(rng, o.Pits, 5, 9, area)
	nPits = max(nPits, 0)
	nScr := o.Scratches
	if nScr == 0 {
		nScr = 1 + rng.IntN(2)
	}
	nScr = max(nScr, 0)

	lightAngle := uniform(rng, 0, 2*math.Pi)
	lx, ly := math.Cos(lightAngle), math.Sin(lightAngle)

	defects := newDefectSet(w, h, false)
	const tries = 400

	for range nScr {
		for range tries {
			nv := 3 + rng.IntN(2)
			length := uniform(rng, 100, 300) * math.Sqrt(area)
			step := length / float64(nv-1)
			dir := uniform(rng, 0, 2*math.Pi)
			s := scratch{width: uniform(rng, 3, 6)}
			x, y := uniform(rng, 0.1*fw, 0.9*fw), uniform(rng, 0.1*fh, 0.9*fh)
			s.xs, s.ys = append(s.xs, x), append(s.ys, y)
			for range nv - 1 {
				dir += uniform(rng, -25, 25) * math.Pi / 180
				x, y = x+step*math.Cos(dir), y+step*math.Sin(dir)
				s.xs, s.ys = append(s.xs, x), append(s.ys, y)
			}
			box := [4]int{
				int(math.Floor(slices.Min(s.xs) - s.width)), int(math.Floor(slices.Min(s.ys) - s.width)),
				int(math.Ceil(slices.Max(s.xs) + s.width)), int(math.Ceil(slices.Max(s.ys) + s.width)),
			}
			if box[0] < 0 || box[1] < 0 || box[2] >= w || box[3] >= h {
				continue
			}
			level := uniform(rng, 0.45, 0.6)
			phase, period := uniform(rng, 0, 2*math.Pi), uniform(rng, 20, 60)
			shade := func(x, y float64) float64 {
				return level * (1 + 0.1*math.Sin((x*lx+y*ly)/period+phase))
			}
			if defects.add(defect{s.margin, box, shade}) {
				break
			}
		}
	}
	for range nPits {
		for range tries {
			// A blob with the harmonics k = 2, 3, 4 only (amp[3:] stay 0).
			p := blob{cx: uniform(rng, 0, fw), cy: uniform(rng, 0, fh), r0: uniform(rng, 4, 15)}
			for k := range 3 {
				p.amp[k] = uniform(rng, 0, 0.12)
				p.ph[k] = uniform(rng, 0, 2*math.Pi)
			}
			rmax := p.r0*1.36 + 2
			box := [4]int{
				max(0, int(math.Floor(p.cx-rmax))), max(0, int(math.Floor(p.cy-rmax))),
				min(w-1, int(math.Ceil(p.cx+rmax))), min(h-1, int(math.Ceil(p.cy+rmax))),
			}
			shade := pitWall(p, uniform(rng, 0.3, 0.5), 0.3, lx, ly)
			if defects.add(defect{p.margin, box, shade}) {
				break
			}
		}
	}

	// Surface reflectance with grain and brushing streaks.
	grain := smoothNoise(rng, w, h, 1.2)
	beta := uniform(rng, 0, math.Pi)
	bx, by := math.Sin(beta), -math.Cos(beta)
	umin := math.Min(0, bx*fw) + math.Min(0, by*fh) - 2
	umax := math.Max(0, bx*fw) + math.Max(0, by*fh) + 2
	nu := int(math.Ceil(umax-umin)) + 1
	streak := smoothNoise(rng, nu, 1, 0.8)
	refl := make([]float64, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			u := bx*(float64(x)+0.5) + by*(float64(y)+0.5) - umin
			i0 := int(u)
			f := u - float64(i0)
			i1 := min(i0+1, nu-1)
			s := (1-f)*streak[i0] + f*streak[i1]
			refl[y*w+x] = 1 + o.Grain*(0.6*grain[y*w+x]+0.8*s)
		}
	}
	defects.darken(refl)
	refl = blur(refl, w, h, 0.8)

	// The light comes from the +l side: bright there, dark at -l.
	ill := rakingLight(w, h, lx, ly, o.Gradient)
	electrons := make([]float64, w*h)
	for i := range electrons {
		electrons[i] = o.Photons * ill[i] * max(refl[i], 0)
	}
	pixels := expose(rng, electrons, o.BitDepth, 0.7, o.Photons, o.ReadNoise)
	return &Scene{Name: fmt.Sprintf("plate-%d", o.Seed), Width: w, Height: h, BitDepth: o.BitDepth,
		Pixels: pixels, Truth: defects.truth, Objects: len(defects.list)}
}
