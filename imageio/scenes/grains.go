package scenes

import (
	"fmt"
	"math"
)

// GrainsOptions configures Grains. Zero values select the defaults given
// in each field's comment; invalid values are reported by Validate.
type GrainsOptions struct {
	Width, Height int    // image size in pixels; default 512 x 512
	Seed          uint64 // random seed; the scene is a function of the options
	BitDepth      int    // 8 or 16; default 16

	// Count is the number of grain seeds; default drawn log-uniformly in
	// [40, 300] per 512² pixels, so the grain size varies per scene.
	Count int
	// BoundaryWidth is the width of the dark boundaries in pixels; default
	// drawn in [1.2, 3] per scene.
	BoundaryWidth float64
	// Photons is the electron count of the brightest grain at the
	// brightest illumination; default 1500.
	Photons float64
	// ReadNoise is the camera read noise in electrons; default 4, a
	// negative value means none.
	ReadNoise float64
}

func (o GrainsOptions) withDefaults() GrainsOptions {
	defaultFrame(&o.Width, &o.Height, &o.BitDepth)
	defaultCamera(&o.Photons, &o.ReadNoise, 1500, 4)
	return o
}

// Validate reports the first invalid option, naming it.
func (o GrainsOptions) Validate() error {
	o = o.withDefaults()
	const kind = "grains"
	return firstError(
		checkGeometry(kind, o.Width, o.Height, o.BitDepth),
		invalidIf(o.Count < 0 || (o.Count > 0 && o.Count < 2), kind, "Count %d below 2", o.Count),
		invalidIf(o.Count > o.Width*o.Height/100, kind, "Count %d too large for a %dx%d image (at most one grain per 100 pixels)", o.Count, o.Width, o.Height),
		invalidIf(o.BoundaryWidth < 0 || o.BoundaryWidth > 8, kind, "BoundaryWidth %g outside (0, 8]", o.BoundaryWidth),
		checkCamera(kind, o.Photons, o.ReadNoise),
	)
}

// Grains renders a densely packed layer of grains (a polished polycrystal,
// a powder compact or a confluent cell monolayer): a Laguerre (power)
// tessellation with thin dark boundaries. The model:
//
//   - Seeds: Count points drawn uniformly with a hard-core distance of
//     0.55 times the mean spacing sqrt(area/Count) (relaxed when the field
//     is full), each with a power weight w_i = (0.25 s·exp(0.3 Z))², s the
//     spacing and Z standard normal. Pixel p belongs to the grain i with
//     the smallest power distance |p' - c_i|² - w_i, where p' is p moved
//     by a smooth displacement (two unit-variance noise fields smoothed by
//     σ = 25 px, amplitude 1.5-3 px per scene) so that the straight
//     Laguerre edges bend gently like real grain boundaries.
//   - Boundaries: the distance from p' to the radical line of grains i and
//     j is ((|p'-c_j|² - w_j) - (|p'-c_i|² - w_i)) / (2|c_i - c_j|); the
//     margin of p is its minimum over j minus BoundaryWidth/2. Pixels
//     with margin <= 0 are boundary (truth 0), the others belong to grain
//     i. A grain left with fewer than 6 pixels is merged into the
//     boundary.
//   - Brightness: per grain uniform in [0.35, 1] (orientation contrast),
//     shaded linearly across it by up to ±6 % in a random direction,
//     times (1 + 0.04 T), T fine texture (σ = 1 px); boundaries at a level
//     of 0.08-0.25 per scene. Edges anti-aliased with coverage
//     clamp(1/2 + m, 0, 1), PSF σ = 0.9 px.
//   - Illumination: 1 + 0.08 N₉₀ (N₉₀ unit-variance noise smoothed by
//     σ = 90 px) times a ramp falling by up to 25 % across the field.
//   - Camera: electrons e = Photons·illumination·signal, shot and read
//     noise, offset 2 % of full scale, brightness 1 at 70 % of full scale.
//
// Truth labels are 1..Objects in seed order among the grains kept. Grains
// panics if o.Validate() fails.
func Grains(o GrainsOptions) *Scene {
	o = mustValidate(o)
	w, h := o.Width, o.Height
	fw, fh := float64(w), float64(h)
	rng := newRand(o.Seed, 0x677261696e) // "grain"
	area := fw * fh / (512 * 512)
	count := o.Count
	if count == 0 {
		count = max(2, int(math.Round(math.Exp(uniform(rng, math.Log(40), math.Log(300)))*area)))
	}
	bw := uniformUnlessSet(rng, o.BoundaryWidth, 1.2, 3)

	spacing := math.Sqrt(fw * fh / float64(count))
	type seed struct{ x, y, wt float64 }
	seeds := make([]seed, 0, count)
	hard := 0.55 * spacing
	for len(seeds) < count {
		ok := false
		for range 200 {
			x, y := uniform(rng, 0, fw), uniform(rng, 0, fh)
			near := false
			for _, s := range seeds {
				if math.Hypot(s.x-x, s.y-y) < hard {
					near = true
					break
				}
			}
			if !near {
				r := 0.25 * spacing * math.Exp(0.3*rng.NormFloat64())
				seeds = append(seeds, seed{x, y, r * r})
				ok = true
				break
			}
		}
		if !ok {
			hard *= 0.9
		}
	}

	amp := uniform(rng, 1.5, 3)
	wx, wy := smoothNoise(rng, w, h, 25), smoothNoise(rng, w, h, 25)
	owner := make([]int32, w*h)
	margin := make([]float64, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			p := y*w + x
			px, py := float64(x)+0.5+amp*wx[p], float64(y)+0.5+amp*wy[p]
			best, bi := math.Inf(1), 0
			for i, s := range seeds {
				dx, dy := px-s.x, py-s.y
				if d := dx*dx + dy*dy - s.wt; d < best {
					best, bi = d, i
				}
			}
			m := math.Inf(1)
			si := seeds[bi]
			for j, s := range seeds {
				if j == bi {
					continue
				}
				dx, dy := px-s.x, py-s.y
				dj := dx*dx + dy*dy - s.wt
				ex, ey := s.x-si.x, s.y-si.y
				m = min(m, (dj-best)/(2*math.Hypot(ex, ey)))
			}
			owner[p] = int32(bi)
			margin[p] = m - bw/2
		}
	}
	// Keep grains with at least 6 pixels; label them in seed order.
	size := make([]int, len(seeds))
	for p, i := range owner {
		if margin[p] > 0 {
			size[i]++
		}
	}
	label := make([]int32, len(seeds))
	var n int32
	for i, s := range size {
		if s >= 6 {
			n++
			label[i] = n
		}
	}
	truth := make([]int32, w*h)
	for p, i := range owner {
		if margin[p] > 0 && label[i] > 0 {
			truth[p] = label[i]
		}
	}

	type look struct{ b, gx, gy float64 }
	looks := make([]look, len(seeds))
	for i := range looks {
		a := uniform(rng, 0, 2*math.Pi)
		g := uniform(rng, 0, 0.06) / (0.5 * spacing)
		looks[i] = look{uniform(rng, 0.35, 1), g * math.Cos(a), g * math.Sin(a)}
	}
	boundary := uniform(rng, 0.08, 0.25)
	tex := smoothNoise(rng, w, h, 1)
	signal := make([]float64, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			p := y*w + x
			i := owner[p]
			c := coverage(margin[p])
			if label[i] == 0 {
				c = 0
			}
			lk, s := looks[i], seeds[i]
			v := lk.b * (1 + lk.gx*(float64(x)+0.5-s.x) + lk.gy*(float64(y)+0.5-s.y)) * (1 + 0.04*tex[p])
			signal[p] = c*max(v, 0) + (1-c)*boundary
		}
	}
	signal = blur(signal, w, h, 0.9)

	broad := smoothNoise(rng, w, h, 90)
	ang := uniform(rng, 0, 2*math.Pi)
	lx, ly := math.Cos(ang), math.Sin(ang)
	fall := uniform(rng, 0, 0.25)
	t := rampAlong(w, h, lx, ly)
	electrons := make([]float64, w*h)
	for p := range electrons {
		ill := (1 + 0.08*broad[p]) * (1 - fall*t[p])
		electrons[p] = o.Photons * ill * signal[p]
	}
	pixels := expose(rng, electrons, o.BitDepth, 0.7, o.Photons, o.ReadNoise)
	return &Scene{Name: fmt.Sprintf("grains-%d", o.Seed), Width: w, Height: h, BitDepth: o.BitDepth,
		Pixels: pixels, Truth: truth, Objects: int(n)}
}
