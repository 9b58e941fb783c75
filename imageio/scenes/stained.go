package scenes

import (
	"fmt"
	"math"
)

// StainedOptions configures Stained. Zero values select the defaults given
// in each field's comment; invalid values are reported by Validate.
type StainedOptions struct {
	Width, Height int    // image size in pixels; default 512 x 512
	Seed          uint64 // random seed; the scene is a function of the options
	BitDepth      int    // 8 or 16; default 16

	// Count is the number of nuclei; default a draw from 25..60 per 512²
	// pixels.
	Count int
	// RadiusMin and RadiusMax bound the mean radius of a nucleus in
	// pixels; defaults 6 and 18.
	RadiusMin, RadiusMax float64
	// ClusterFraction is the fraction of nuclei in clusters of 2-4
	// touching nuclei; default 0.5, a negative value means none.
	ClusterFraction float64
	// Unevenness is the ratio of the brightest to the darkest illumination
	// of the field; default 1.7.
	Unevenness float64
	// Photons is the electron count of the unstained field at the
	// brightest illumination; default 6000.
	Photons float64
	// ReadNoise is the camera read noise in electrons; default 6, a
	// negative value means none.
	ReadNoise float64
}

func (o StainedOptions) withDefaults() StainedOptions {
	defaultFrame(&o.Width, &o.Height, &o.BitDepth)
	defaultRadii(&o.RadiusMin, &o.RadiusMax, 6, 18)
	o.ClusterFraction = defaultFrac(o.ClusterFraction, 0.5)
	o.Unevenness = orDefault(o.Unevenness, 1.7)
	defaultCamera(&o.Photons, &o.ReadNoise, 6000, 6)
	return o
}

// Validate reports the first invalid option, naming it.
func (o StainedOptions) Validate() error {
	o = o.withDefaults()
	const kind = "stained"
	return firstError(
		checkGeometry(kind, o.Width, o.Height, o.BitDepth),
		checkNuclei(kind, o.Count, o.RadiusMin, o.RadiusMax, 3, o.Width, o.Height),
		checkFraction(kind, "ClusterFraction", o.ClusterFraction),
		invalidIf(o.Unevenness < 1 || o.Unevenness > 20, kind, "Unevenness %g outside [1, 20]", o.Unevenness),
		checkCamera(kind, o.Photons, o.ReadNoise),
		checkCrowding(kind, o.Count, o.RadiusMin, o.RadiusMax, o.Width, o.Height),
	)
}

// Stained renders a brightfield field of nuclei stained with a blue-black
// nuclear dye: dark nuclei on a bright, unevenly lit background. Light is
// absorbed following the Beer-Lambert law, transmitted = I₀·exp(-OD) with
// OD the optical density. The model:
//
//   - Nuclei: irregular star-shaped outlines (see blob) of log-normal
//     radius (σ 0.25) around a field-typical radius 30-55 % of the way
//     from RadiusMin to RadiusMax; a fraction ClusterFraction in clusters
//     of 2-4 touching nuclei (as in Clusters), 3 px apart otherwise.
//   - Nuclear OD uniform in [0.35, 0.9] per nucleus, one in ten pale
//     (0.12-0.22). Inside: OD·(1 + 0.15·exp(-m²/2)) (the stained nuclear
//     envelope, m the margin) · (1 + a·T) with T chromatin texture
//     (unit-variance white noise smoothed by σ = 1 px) and a drawn in
//     [0.03, 0.25] per nucleus; a third of the nuclei carry a nucleolus, a
//     disc of radius 1.5-2.5 px adding 0.3·OD. Half of the clusters show a
//     lighter contact line (OD times a level in [0.5, 0.8] at the shared
//     boundary), the others none.
//   - Background OD: 0.04·(1 + 0.5 N₆) + 0.02 N₃₀, faint mottling of the
//     counterstain (N_σ white noise smoothed by σ px, unit variance),
//     clipped at 0.
//   - Edges anti-aliased (coverage clamp(1/2 + m, 0, 1)); the transmitted
//     image is blurred by a PSF of σ = 1.2 px.
//   - Illumination I₀ = Unevenness^(-t), t in [0, 1] a mix of a linear
//     ramp in a random direction and a radial falloff from an off-centre
//     point, rescaled to [0, 1].
//   - Camera: electrons e = Photons·I₀·exp(-OD), shot and read noise,
//     digital number = offset + gain·e, offset 2 % of full scale and the
//     brightest unstained field near 85 % of full scale.
//
// Truth labels are 1..Objects in placement order (clusters first).
// Stained panics if o.Validate() fails.
func Stained(o StainedOptions) *Scene {
	o = mustValidate(o)
	w, h := o.Width, o.Height
	fw, fh := float64(w), float64(h)
	rng := newRand(o.Seed, 0x737461696e) // "stain"
	area := fw * fh / (512 * 512)
	count := countPerField(rng, o.Count, 25, 60, area)
	rTyp := o.RadiusMin + (o.RadiusMax-o.RadiusMin)*uniform(rng, 0.3, 0.55)

	type nucleus struct {
		od, tex   float64
		nucleolus blob
		hasNuc    bool
	}
	type placed struct {
		g     group
		nuc   []nucleus
		light float64 // contact line level; 1 means none
	}
	var groups []placed
	pl := newPlacer(w, h, 3)
	const tries = 300
	for _, size := range clusterSizes(rng, count, o.ClusterFraction) {
		for range tries {
			r := logNormalRadius(rng, rTyp, 0.25, o.RadiusMin, o.RadiusMax)
			g := group{members: []blob{newBlob(rng, uniform(rng, 0, fw), uniform(rng, 0, fh), r, 0.8)}}
			g.grow(rng, size, r, o.RadiusMin, o.RadiusMax, 0.8)
			nuc := make([]nucleus, size)
			for k, b := range g.members {
				n := nucleus{od: uniform(rng, 0.35, 0.9), tex: uniform(rng, 0.03, 0.25)}
				if rng.Float64() < 0.1 {
					n.od = uniform(rng, 0.12, 0.22)
				}
				if rng.Float64() < 1.0/3 {
					phi, d := uniform(rng, 0, 2*math.Pi), uniform(rng, 0, 0.4*b.r0)
					n.nucleolus = blob{cx: b.cx + d*math.Cos(phi), cy: b.cy + d*math.Sin(phi), r0: uniform(rng, 1.5, 2.5)}
					n.hasNuc = true
				}
				nuc[k] = n
			}
			light := 1.0
			if size > 1 && rng.Float64() < 0.5 {
				light = uniform(rng, 0.5, 0.8)
			}
			if !pl.place(&g, 0.55) {
				continue
			}
			groups = append(groups, placed{g, nuc, light})
			break
		}
	}

	od := make([]float64, w*h)
	m6, m30 := smoothNoise(rng, w, h, 6), smoothNoise(rng, w, h, 30)
	for i := range od {
		od[i] = max(0, 0.04*(1+0.5*m6[i])+0.02*m30[i])
	}
	texture := smoothNoise(rng, w, h, 1)
	for _, gp := range groups {
		gp.g.paint(w, h, func(q hit) {
			n := gp.nuc[q.member]
			v := n.od * (1 + 0.15*math.Exp(-q.m*q.m/2)) * (1 + n.tex*texture[q.p])
			if n.hasNuc {
				v += 0.3 * n.od * coverage(n.nucleolus.margin(q.x, q.y))
			}
			v *= seamFactor(gp.light, q.m, q.second)
			od[q.p] = (1-q.cover)*od[q.p] + q.cover*max(v, 0)
		})
	}
	trans := make([]float64, w*h)
	for i, d := range od {
		trans[i] = math.Exp(-d)
	}
	trans = blur(trans, w, h, 1.2)

	// Uneven illumination: a ramp mixed with a radial falloff.
	ang := uniform(rng, 0, 2*math.Pi)
	lx, ly := math.Cos(ang), math.Sin(ang)
	qx, qy := uniform(rng, 0.2, 0.8)*fw, uniform(rng, 0.2, 0.8)*fh
	mix := uniform(rng, 0.3, 0.7)
	t := make([]float64, w*h)
	tmin, tmax := math.Inf(1), math.Inf(-1)
	diag := math.Hypot(fw, fh)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			px, py := float64(x)+0.5, float64(y)+0.5
			r := math.Hypot(px-qx, py-qy) / diag
			v := mix*(px*lx+py*ly)/diag + (1-mix)*r*r
			t[y*w+x] = v
			tmin, tmax = min(tmin, v), max(tmax, v)
		}
	}
	electrons := make([]float64, w*h)
	for i := range electrons {
		tt := (t[i] - tmin) / max(tmax-tmin, 1e-12)
		electrons[i] = o.Photons * math.Pow(o.Unevenness, -tt) * trans[i]
	}
	pixels := expose(rng, electrons, o.BitDepth, 0.85, o.Photons, o.ReadNoise)
	return &Scene{Name: fmt.Sprintf("stained-%d", o.Seed), Width: w, Height: h, BitDepth: o.BitDepth,
		Pixels: pixels, Truth: pl.truth, Objects: int(pl.next - 1)}
}
