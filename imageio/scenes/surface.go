package scenes

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// SurfaceOptions configures Surface. Zero values select the defaults given
// in each field's comment; invalid values are reported by Validate.
type SurfaceOptions struct {
	Width, Height int    // image size in pixels; default 512 x 512
	Seed          uint64 // random seed; the scene is a function of the options
	BitDepth      int    // 8 or 16; default 16

	// Pits is the number of pits; default a draw from 4..12 per 512²
	// pixels, a negative value means none.
	Pits int
	// Inclusions is the number of inclusions (bright or dark); default a
	// draw from 3..10 per 512² pixels, a negative value means none.
	Inclusions int
	// Cracks is the number of cracks; default 1, a negative value means
	// none.
	Cracks int
	// Grain is the standard deviation of the machining texture relative to
	// the mean reflectance; default drawn in [0.06, 0.12] per scene.
	Grain float64
	// Gradient is the ratio of the brightest to the darkest illumination
	// from the raking light; default drawn in [1.5, 3] per scene.
	Gradient float64
	// Photons is the electron count of bare metal at the brightest
	// illumination; default 3000.
	Photons float64
	// ReadNoise is the camera read noise in electrons; default 4, a
	// negative value means none.
	ReadNoise float64
}

func (o SurfaceOptions) withDefaults() SurfaceOptions {
	defaultFrame(&o.Width, &o.Height, &o.BitDepth)
	o.Cracks = orDefault(o.Cracks, 1)
	defaultCamera(&o.Photons, &o.ReadNoise, 3000, 4)
	return o
}

// Validate reports the first invalid option, naming it.
func (o SurfaceOptions) Validate() error {
	o = o.withDefaults()
	const kind = "surface"
	return firstError(
		checkGeometry(kind, o.Width, o.Height, o.BitDepth),
		checkLineRoom(kind, "crack", o.Width, o.Height),
		checkDefectCount(kind, "Pits", o.Pits, o.Width, o.Height),
		checkDefectCount(kind, "Inclusions", o.Inclusions, o.Width, o.Height),
		invalidIf(o.Cracks > 4, kind, "Cracks %d exceeds 4", o.Cracks),
		invalidIf(o.Grain < 0 || o.Grain > 0.4, kind, "Grain %g outside [0, 0.4]", o.Grain),
		invalidIf(o.Gradient != 0 && (o.Gradient < 1 || o.Gradient > 100), kind, "Gradient %g outside [1, 100]", o.Gradient),
		checkCamera(kind, o.Photons, o.ReadNoise),
	)
}

// crack is a thin curvy line: the points within width(s)/2 of a polyline
// with many short segments, width varying along the arc length s.
type crack struct {
	xs, ys []float64
	ws     []float64 // half-width at each vertex
}

// margin is the local half-width minus the distance to the polyline; the
// half-width is interpolated linearly along the nearest segment.
func (c crack) margin(x, y float64) float64 {
	best := math.Inf(-1)
	for i := 0; i+1 < len(c.xs); i++ {
		t, d := nearestOnSegment(x, y, c.xs[i], c.ys[i], c.xs[i+1], c.ys[i+1])
		best = max(best, c.ws[i]+(c.ws[i+1]-c.ws[i])*t-d)
	}
	return best
}

// newCrack draws a crack as a walk of 4-px steps: the heading is a base
// direction plus a meander that reverts to it (an autoregressive process,
// w ← 0.9 w + 0.12 Z, stationary spread about 0.28 rad) plus a jag of
// 0.2 Z rad per step, 120-350 px long, with half-width wandering in
// [0.9, 2.2] px.
func newCrack(rng *rand.Rand, fw, fh, scale float64) crack {
	n := int(uniform(rng, 120, 350)*scale/4) + 1
	x, y := uniform(rng, 0.15*fw, 0.85*fw), uniform(rng, 0.15*fh, 0.85*fh)
	base := uniform(rng, 0, 2*math.Pi)
	wander := 0.0
	hw := uniform(rng, 1.1, 2)
	var c crack
	for range n {
		c.xs, c.ys, c.ws = append(c.xs, x), append(c.ys, y), append(c.ws, hw)
		wander = 0.9*wander + 0.12*rng.NormFloat64()
		dir := base + wander + 0.2*rng.NormFloat64()
		x, y = x+4*math.Cos(dir), y+4*math.Sin(dir)
		hw = min(2.2, max(0.9, hw+0.15*rng.NormFloat64()))
	}
	return c
}

// anisoNoise returns standardized noise (see standardize) correlated over
// sigmaAlong pixels along the direction theta and sigmaAcross across it:
// white noise on a grid aligned with theta, blurred separably there
// (blurAxes) and sampled bilinearly at the rotated pixel centres.
func anisoNoise(rng *rand.Rand, w, h int, theta, sigmaAlong, sigmaAcross float64) []float64 {
	// The grid covers the image diagonal plus the kernel radius 3σ on
	// each side, so that no pixel sees the grid's replicated edge.
	d := int(math.Ceil(math.Hypot(float64(w), float64(h))+6*max(sigmaAlong, sigmaAcross))) + 4
	g := make([]float64, d*d)
	for i := range g {
		g[i] = rng.NormFloat64()
	}
	// Grid axis u (columns) runs along theta, v (rows) across.
	g = blurAxes(g, d, d, sigmaAlong, sigmaAcross)
	s, c := math.Sincos(theta)
	cx, cy := float64(w)/2, float64(h)/2
	half := float64(d) / 2
	out := make([]float64, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			dx, dy := float64(x)+0.5-cx, float64(y)+0.5-cy
			u := c*dx + s*dy + half
			v := -s*dx + c*dy + half
			out[y*w+x] = sampleBilinear(g, d, d, u, v)
		}
	}
	standardize(out)
	return out
}

// Surface renders a machined metal surface under raking light with pits,
// inclusions and a crack. The model:
//
//   - Machining texture: reflectance 1 + Grain·(0.75 A + 0.45 M + 0.3 F)/k
//     (k normalizes the sum to standard deviation Grain), where A is grain
//     noise correlated 25-60 px along a random direction θ and 0.6-1.2 px
//     across it, M tool marks (a sinusoid across θ with a period of 5-12
//     px whose phase wanders with a 1-D noise), F fine isotropic noise
//     (σ = 0.8 px).
//   - Cracks (1 by default, placed first): thin curvy dark lines, a meandering
//     walk of 4-px steps (see newCrack), 120-350 px long,
//     2-4.4 px wide (half-width wandering in [0.9, 2.2]); reflectance
//     times a level in [0.25, 0.5] varying ±20 % along it.
//   - Pits (4-12 per 512² by default): dark irregular blobs (see blob) of
//     mean radius 1.5-10 px (a few to 20 px across), reflectance times
//     [0.25, 0.55], shaded 1 - 0.35 (p-c)·l/r0 across the pit, l the light
//     direction (the wall facing the light brighter).
//   - Inclusions (3-10 per 512²): small irregular blobs of mean radius 2-6
//     px, dark (reflectance times [0.45, 0.75]) or bright (times
//     [1.3, 1.7]) with equal probability.
//   - Objects keep 4 px apart and 2 px from the border. Edges
//     anti-aliased (coverage clamp(1/2 + m, 0, 1)), PSF σ = 0.9 px.
//   - Raking light Gradient^(-(1-t)), t in [0, 1] along the light
//     direction, times 1 + 0.05 N₈₀ (broad unevenness, N₈₀ unit-variance
//     noise smoothed by σ = 80 px).
//   - Camera: electrons e = Photons·illumination·reflectance, shot and
//     read noise, offset 2 % of full scale, bare metal at the brightest
//     illumination near 60 % of full scale.
//
// Each crack, pit and inclusion is one truth object, labelled in that
// order. Surface panics if o.Validate() fails.
func Surface(o SurfaceOptions) *Scene {
	o = mustValidate(o)
	w, h := o.Width, o.Height
	fw, fh := float64(w), float64(h)
	rng := newRand(o.Seed, 0x73757266616365) // "surface"
	area := fw * fh / (512 * 512)
	grain := uniformUnlessSet(rng, o.Grain, 0.06, 0.12)
	gradient := uniformUnlessSet(rng, o.Gradient, 1.5, 3)
	nPits := countPerField(rng, o.Pits, 4, 12, area)
	nInc := countPerField(rng, o.Inclusions, 3, 10, area)
	lightAngle := uniform(rng, 0, 2*math.Pi)
	lx, ly := math.Cos(lightAngle), math.Sin(lightAngle)

	defects := newDefectSet(w, h, true)
	blobBox := func(b blob) [4]int {
		r := b.rmax() + 2
		return [4]int{int(math.Floor(b.cx - r)), int(math.Floor(b.cy - r)), int(math.Ceil(b.cx + r)), int(math.Ceil(b.cy + r))}
	}
	const tries = 300
	for range max(o.Cracks, 0) {
		for range tries {
			c := newCrack(rng, fw, fh, math.Sqrt(area))
			box := [4]int{int(slices.Min(c.xs)) - 4, int(slices.Min(c.ys)) - 4, int(slices.Max(c.xs)) + 4, int(slices.Max(c.ys)) + 4}
			level, phase, period := uniform(rng, 0.25, 0.5), uniform(rng, 0, 2*math.Pi), uniform(rng, 15, 40)
			factor := func(x, y float64) float64 {
				return level * (1 + 0.2*math.Sin((x+y)/period+phase))
			}
			if defects.add(defect{c.margin, box, factor}) {
				break
			}
		}
	}
	for range max(nPits, 0) {
		for range tries {
			b := newBlob(rng, uniform(rng, 0, fw), uniform(rng, 0, fh), uniform(rng, 1.5, 10), 0.8)
			factor := pitWall(b, uniform(rng, 0.25, 0.55), 0.35, lx, ly)
			if defects.add(defect{b.margin, blobBox(b), factor}) {
				break
			}
		}
	}
	for range max(nInc, 0) {
		for range tries {
			b := newBlob(rng, uniform(rng, 0, fw), uniform(rng, 0, fh), uniform(rng, 2, 6), 1)
			f := uniform(rng, 0.45, 0.75)
			if rng.IntN(2) == 1 {
				f = uniform(rng, 1.3, 1.7)
			}
			factor := func(x, y float64) float64 { return f }
			if defects.add(defect{b.margin, blobBox(b), factor}) {
				break
			}
		}
	}

	// Machining texture.
	theta := uniform(rng, 0, math.Pi)
	along := anisoNoise(rng, w, h, theta, uniform(rng, 25, 60), uniform(rng, 0.6, 1.2))
	fine := smoothNoise(rng, w, h, 0.8)
	period := uniform(rng, 5, 12)
	nx, ny := -math.Sin(theta), math.Cos(theta) // across the grain
	dd := int(math.Ceil(math.Hypot(fw, fh))) + 4
	jitter := smoothNoise(rng, dd, 1, 20)
	refl := make([]float64, w*h)
	norm := math.Sqrt(0.75*0.75 + 0.45*0.45/2 + 0.3*0.3)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			px, py := float64(x)+0.5-fw/2, float64(y)+0.5-fh/2
			u := px*nx + py*ny
			j := jitter[min(dd-1, max(0, int(u+float64(dd)/2)))]
			mark := math.Sin(2*math.Pi*u/period + 1.5*j)
			i := y*w + x
			refl[i] = 1 + grain*(0.75*along[i]+0.45*mark+0.3*fine[i])/norm
		}
	}
	defects.darken(refl)
	refl = blur(refl, w, h, 0.9)

	broad := smoothNoise(rng, w, h, 80)
	raking := rakingLight(w, h, lx, ly, gradient)
	electrons := make([]float64, w*h)
	for i := range electrons {
		ill := raking[i] * (1 + 0.05*broad[i])
		electrons[i] = o.Photons * ill * max(refl[i], 0)
	}
	pixels := expose(rng, electrons, o.BitDepth, 0.6, o.Photons, o.ReadNoise)
	return &Scene{Name: fmt.Sprintf("surface-%d", o.Seed), Width: w, Height: h, BitDepth: o.BitDepth,
		Pixels: pixels, Truth: defects.truth, Objects: len(defects.list)}
}
