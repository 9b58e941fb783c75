package scenes

import (
	"fmt"
	"math"
)

// HazeOptions configures Haze. Zero values select the defaults given in
// each field's comment; invalid values are reported by Validate.
type HazeOptions struct {
	Width, Height int    // image size in pixels; default 512 x 512
	Seed          uint64 // random seed; the scene is a function of the options
	BitDepth      int    // 8 or 16; default 16

	// Count is the number of nuclei; default a draw from 8..20 per 512²
	// pixels.
	Count int
	// RadiusMin and RadiusMax bound the mean radius of a nucleus in
	// pixels; defaults 6 and 16.
	RadiusMin, RadiusMax float64
	// Glow is the mean level of the out-of-focus haze in units of the
	// brightness scale (electrons = Photons·Glow on the axis); default 1.
	Glow float64
	// FaintFraction is the fraction of nuclei whose contrast is only 2-4
	// times the local noise; default 0.4, a negative value means none.
	// The others get 4-12 times the noise.
	FaintFraction float64
	// Photons is the electron count of brightness 1 on the optical axis;
	// default 300.
	Photons float64
	// ReadNoise is the camera read noise in electrons; default 4, a
	// negative value means none.
	ReadNoise float64
}

func (o HazeOptions) withDefaults() HazeOptions {
	defaultFrame(&o.Width, &o.Height, &o.BitDepth)
	defaultRadii(&o.RadiusMin, &o.RadiusMax, 6, 16)
	o.Glow = orDefault(o.Glow, 1)
	o.FaintFraction = defaultFrac(o.FaintFraction, 0.4)
	defaultCamera(&o.Photons, &o.ReadNoise, 300, 4)
	return o
}

// Validate reports the first invalid option, naming it.
func (o HazeOptions) Validate() error {
	o = o.withDefaults()
	const kind = "haze"
	r := (o.RadiusMin + o.RadiusMax) / 2
	return firstError(
		checkGeometry(kind, o.Width, o.Height, o.BitDepth),
		checkNuclei(kind, o.Count, o.RadiusMin, o.RadiusMax, 3, o.Width, o.Height),
		invalidIf(o.Glow < 0 || o.Glow > 100, kind, "Glow %g outside (0, 100]", o.Glow),
		checkFraction(kind, "FaintFraction", o.FaintFraction),
		checkCamera(kind, o.Photons, o.ReadNoise),
		invalidIf(float64(o.Count)*4*math.Pi*r*r > 0.4*float64(o.Width*o.Height), kind,
			"Count %d too large for a sparse %dx%d field", o.Count, o.Width, o.Height),
	)
}

// Haze renders sparse, dim nuclei in a thick specimen: the light of
// out-of-focus planes lies over the field as a bright, uneven glow, and
// many nuclei stand only 2-4 noise levels above it. The model:
//
//   - Nuclei: irregular star-shaped outlines (see blob, irregularity 0.7)
//     of mean radius uniform in [RadiusMin, RadiusMax], single, at least
//     8 px apart and 2 px from the border.
//   - Haze, in units of the brightness scale: Glow·(0.4 + 1.2 G/max G)
//     (three broad Gaussians, see glow) plus Glow·0.12·N₂₅ (white noise
//     smoothed by σ = 25 px, unit variance: mottled out-of-focus light)
//     plus 4-10 "ghost" nuclei of other planes: discs of radius 10-25 px
//     and level 0.2-0.6·Glow blurred by σ 7-12 px. Ghosts are not objects.
//     The sum is clipped at 0.
//   - Each nucleus gets the contrast k·sqrt(Photons·V·H + read²)/(Photons·V)
//     over the local haze H and illumination V, with k in [2, 4] for a
//     faint nucleus (FaintFraction) and in [4, 12] otherwise; its
//     profile is flat with a soft edge, (0.85 + 0.15 tanh(m/3)) with m
//     the margin, times (1 + 0.1 T), T chromatin texture (σ = 1.5 px).
//   - Edges anti-aliased (coverage clamp(1/2 + m, 0, 1)), PSF σ = 1.3 px.
//   - Vignetting to a corner level in [0.6, 0.9]; camera as in Nuclei
//     (offset 2 % of full scale, brightness max(1, Glow) on the axis at 30 %
//     of full scale, the haze taking most of the range).
//
// Truth labels are 1..Objects in placement order. Haze panics if
// o.Validate() fails.
func Haze(o HazeOptions) *Scene {
	o = mustValidate(o)
	w, h := o.Width, o.Height
	fw, fh := float64(w), float64(h)
	rng := newRand(o.Seed, 0x68617a65) // "haze"
	area := fw * fh / (512 * 512)
	count := countPerField(rng, o.Count, 8, 20, area)

	illum := vignette(rng, w, h, uniform(rng, 0.6, 0.9))
	haze := glow(rng, w, h, o.Glow)
	mottle := smoothNoise(rng, w, h, 25)
	ghosts := make([]float64, w*h)
	short := float64(min(w, h))
	for range 4 + rng.IntN(7) {
		b := newBlob(rng, uniform(rng, 0, fw), uniform(rng, 0, fh), min(uniform(rng, 10, 25), short/6), 0.6)
		lvl := o.Glow * uniform(rng, 0.2, 0.6)
		x0, y0 := max(0, int(b.cx-b.rmax()-2)), max(0, int(b.cy-b.rmax()-2))
		x1, y1 := min(w-1, int(b.cx+b.rmax()+2)), min(h-1, int(b.cy+b.rmax()+2))
		for y := y0; y <= y1; y++ {
			for x := x0; x <= x1; x++ {
				ghosts[y*w+x] += lvl * coverage(b.margin(float64(x)+0.5, float64(y)+0.5))
			}
		}
	}
	ghosts = blur(ghosts, w, h, uniform(rng, 7, 12))
	for i := range haze {
		haze[i] = max(0, haze[i]+0.12*o.Glow*mottle[i]+ghosts[i])
	}

	type nucleus struct {
		g      group
		bright float64
	}
	var placed []nucleus
	pl := newPlacer(w, h, 8)
	const tries = 300
	for range count {
		for range tries {
			cx, cy := uniform(rng, 0, fw), uniform(rng, 0, fh)
			g := group{members: []blob{newBlob(rng, cx, cy, uniform(rng, o.RadiusMin, o.RadiusMax), 0.7)}}
			k := uniform(rng, 4, 12)
			if rng.Float64() < o.FaintFraction {
				k = uniform(rng, 2, 4)
			}
			if !pl.place(&g, 1) {
				continue
			}
			p := min(h-1, int(cy))*w + min(w-1, int(cx))
			placed = append(placed, nucleus{g, contrastFor(k, o.Photons, illum[p], haze[p], o.ReadNoise)})
			break
		}
	}

	texture := smoothNoise(rng, w, h, 1.5)
	signal := make([]float64, w*h)
	for _, n := range placed {
		n.g.paint(w, h, func(q hit) {
			v := n.bright * (0.85 + 0.15*math.Tanh(max(q.m, 0)/3)) * (1 + 0.1*texture[q.p])
			signal[q.p] += q.cover * max(v, 0)
		})
	}
	signal = blur(signal, w, h, 1.3)
	electrons := make([]float64, w*h)
	for i := range electrons {
		electrons[i] = o.Photons * illum[i] * (signal[i] + haze[i])
	}
	// The haze peaks near 1.6·Glow; keep it and the brightest nuclei in range.
	pixels := expose(rng, electrons, o.BitDepth, 0.3, o.Photons*max(1, o.Glow), o.ReadNoise)
	return &Scene{Name: fmt.Sprintf("haze-%d", o.Seed), Width: w, Height: h, BitDepth: o.BitDepth,
		Pixels: pixels, Truth: pl.truth, Objects: int(pl.next - 1)}
}
