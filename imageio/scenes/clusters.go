package scenes

import (
	"fmt"
	"math"
)

// ClustersOptions configures Clusters. Zero values select the defaults
// given in each field's comment; invalid values are reported by Validate.
type ClustersOptions struct {
	Width, Height int    // image size in pixels; default 512 x 512
	Seed          uint64 // random seed; the scene is a function of the options
	BitDepth      int    // 8 or 16; default 16

	// Count is the number of nuclei to place; default a draw from 30..80
	// per 512² pixels.
	Count int
	// RadiusMin and RadiusMax bound the mean radius of a nucleus in
	// pixels; defaults 5 and 25.
	RadiusMin, RadiusMax float64
	// ClusterFraction is the fraction of nuclei placed in clusters of 2-4
	// touching nuclei; default 0.6, a negative value means none.
	ClusterFraction float64
	// SeamlessFraction is the fraction of clusters drawn without any seam:
	// the members share one brightness and the intensity continues across
	// the contact, so only the neck of the outline separates them;
	// default 0.5, a negative value means none.
	SeamlessFraction float64
	// DimFraction is the fraction of groups (singles or clusters) whose
	// contrast is only 2-3 times the local background noise; default
	// 0.12, a negative value means none.
	DimFraction float64
	// DefocusFraction is the fraction of groups lying out of the focal
	// plane, blurred by a wider PSF; default 0.15, a negative value means
	// none.
	DefocusFraction float64
	// Photons is the expected photoelectron count of a nucleus of
	// brightness 1 on the optical axis; default 500.
	Photons float64
	// ReadNoise is the camera read noise in electrons; default 4, a
	// negative value means none.
	ReadNoise float64
}

func (o ClustersOptions) withDefaults() ClustersOptions {
	defaultFrame(&o.Width, &o.Height, &o.BitDepth)
	defaultRadii(&o.RadiusMin, &o.RadiusMax, 5, 25)
	o.ClusterFraction = defaultFrac(o.ClusterFraction, 0.6)
	o.SeamlessFraction = defaultFrac(o.SeamlessFraction, 0.5)
	o.DimFraction = defaultFrac(o.DimFraction, 0.12)
	o.DefocusFraction = defaultFrac(o.DefocusFraction, 0.15)
	defaultCamera(&o.Photons, &o.ReadNoise, 500, 4)
	return o
}

// Validate reports the first invalid option, naming it.
func (o ClustersOptions) Validate() error {
	o = o.withDefaults()
	const kind = "clusters"
	r := o.RadiusMin
	return firstError(
		checkGeometry(kind, o.Width, o.Height, o.BitDepth),
		checkNuclei(kind, o.Count, o.RadiusMin, o.RadiusMax, 3, o.Width, o.Height),
		checkFraction(kind, "ClusterFraction", o.ClusterFraction),
		checkFraction(kind, "SeamlessFraction", o.SeamlessFraction),
		checkFraction(kind, "DimFraction", o.DimFraction),
		checkFraction(kind, "DefocusFraction", o.DefocusFraction),
		checkCamera(kind, o.Photons, o.ReadNoise),
		invalidIf(float64(o.Count)*2*math.Pi*r*r > 0.5*float64(o.Width*o.Height), kind,
			"Count %d too large for a %dx%d image with RadiusMin %g", o.Count, o.Width, o.Height, o.RadiusMin),
	)
}

// Clusters renders a crowded fluorescence field of nuclei, many of them in
// clusters of 2-4 touching nuclei. The model, in order:
//
//   - Sizes: a typical radius for the field uniform between 20 % and 45 %
//     of the way from RadiusMin to RadiusMax (10-14 px by default); each
//     group gets a log-normal radius around it (σ 0.3), each cluster
//     member varies around its group's radius by a further log-normal σ of
//     0.12, all clamped to [RadiusMin, RadiusMax].
//   - Shapes: irregular star-shaped outlines (radial harmonics k = 2..6,
//     see blob). Cluster members attach to a random earlier member at
//     0.74-0.9 of the summed outline radii, so contacts have a neck; each
//     pixel goes to the member with the largest radial margin, every
//     member must keep at least 55 % of its own area, and groups keep
//     4 px apart and 2 px from the border.
//   - Brightness: uniform in [0.35, 1] per group; seamed cluster members
//     vary by ±15 % around it and a seam dims the contact to a level in
//     [0.4, 0.75] (1 - (1-s)·exp(-δ²/2), δ half the margin difference);
//     seamless clusters share one brightness and have no seam. A dim
//     group (DimFraction) gets the contrast of 2-3 times the local
//     background noise instead.
//   - Profile: b·(0.8 + 0.2·tanh(m/(0.3 r))) with m the margin to the
//     group's outline and r the group radius: a flat top falling towards
//     the edge, lower in a neck; times (1 + 0.15 T), T unit-variance
//     chromatin texture (white noise smoothed by σ = 1.3 px).
//   - Edges anti-aliased with coverage clamp(1/2 + m, 0, 1). In-focus
//     groups are blurred by a Gaussian PSF of σ = 1.1 px, out-of-focus
//     ones (DefocusFraction) by σ drawn in [2.5, 4] per field.
//   - Background: autofluorescence 0.03 plus a glow (see glow) of mean
//     0.06; vignetting reaching a corner level in [0.5, 0.85].
//   - Camera: electrons e = Photons·V·(signal + background), shot noise
//     (Gaussian approximation of Poisson) and ReadNoise; digital number =
//     offset + gain·e, offset 2 % of full scale, brightness 1 on the axis
//     at 60 % of full scale.
//
// Truth labels are 1..Objects in placement order (clusters first, the
// members of a cluster consecutive). A group that cannot be placed after a
// bounded number of tries is left out. Clusters panics if o.Validate()
// fails.
func Clusters(o ClustersOptions) *Scene {
	o = mustValidate(o)
	w, h := o.Width, o.Height
	fw, fh := float64(w), float64(h)
	rng := newRand(o.Seed, 0x636c7573746572) // "cluster"
	area := fw * fh / (512 * 512)

	count := countPerField(rng, o.Count, 30, 80, area)
	rTyp := o.RadiusMin + (o.RadiusMax-o.RadiusMin)*uniform(rng, 0.2, 0.45)
	// Background and illumination come first: dim groups need them.
	corner := uniform(rng, 0.5, 0.85)
	illum := vignette(rng, w, h, corner)
	bg := glow(rng, w, h, 0.06)
	for i := range bg {
		bg[i] += 0.03
	}

	type placed struct {
		g        group
		bright   []float64
		seam     float64 // seam level; 1 means none
		defocus  bool
		radius   float64
		seamless bool
	}
	var groups []placed
	pl := newPlacer(w, h, 4)
	const tries = 300
	for _, size := range clusterSizes(rng, count, o.ClusterFraction) {
		for range tries {
			r := logNormalRadius(rng, rTyp, 0.3, o.RadiusMin, o.RadiusMax)
			cx, cy := uniform(rng, 0, fw), uniform(rng, 0, fh)
			g := group{members: []blob{newBlob(rng, cx, cy, logNormalRadius(rng, r, 0.12, o.RadiusMin, o.RadiusMax), 1)}}
			g.grow(rng, size, r, o.RadiusMin, o.RadiusMax, 1)
			seamless := size > 1 && rng.Float64() < o.SeamlessFraction
			dim := rng.Float64() < o.DimFraction
			defocus := rng.Float64() < o.DefocusFraction
			b := uniform(rng, 0.35, 1)
			if dim {
				p := int(math.Min(fh-1, math.Max(0, cy)))*w + int(math.Min(fw-1, math.Max(0, cx)))
				b = contrastFor(uniform(rng, 2, 3), o.Photons, illum[p], bg[p], o.ReadNoise)
			}
			bright := make([]float64, size)
			seam := 1.0
			for k := range bright {
				bright[k] = b
				if size > 1 && !seamless {
					bright[k] = b * uniform(rng, 0.85, 1.15)
				}
			}
			if size > 1 && !seamless {
				seam = uniform(rng, 0.4, 0.75)
			}
			if !pl.place(&g, 0.55) {
				continue
			}
			groups = append(groups, placed{g, bright, seam, defocus, r, seamless})
			break
		}
	}

	texture := smoothNoise(rng, w, h, 1.3)
	sharp := make([]float64, w*h)
	soft := make([]float64, w*h)
	defocusSigma := uniform(rng, 2.5, 4)
	for _, gp := range groups {
		dst := sharp
		if gp.defocus {
			dst = soft
		}
		gp.g.paint(w, h, func(q hit) {
			v := gp.bright[q.member] * (0.8 + 0.2*math.Tanh(max(q.m, 0)/(0.3*gp.radius)))
			v *= 1 + 0.15*texture[q.p]
			v *= seamFactor(gp.seam, q.m, q.second)
			dst[q.p] += q.cover * max(v, 0)
		})
	}
	sharp = blur(sharp, w, h, 1.1)
	soft = blur(soft, w, h, defocusSigma)

	electrons := make([]float64, w*h)
	for i := range electrons {
		electrons[i] = o.Photons * illum[i] * (sharp[i] + soft[i] + bg[i])
	}
	pixels := expose(rng, electrons, o.BitDepth, 0.6, o.Photons, o.ReadNoise)
	return &Scene{Name: fmt.Sprintf("clusters-%d", o.Seed), Width: w, Height: h, BitDepth: o.BitDepth,
		Pixels: pixels, Truth: pl.truth, Objects: int(pl.next - 1)}
}
