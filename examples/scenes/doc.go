// Package scenes generates invented synthetic images with exact ground truth
// for tests, benchmarks and demonstrations of the segmenter.
//
// Every scene is drawn from an explicit model whose objects are defined by
// closed-form inside tests (ellipses, star-shaped blobs, thick polylines).
// The same inside test decides both the rendered coverage and the truth
// mask, so the truth is exactly the rendered geometry: a pixel belongs to an
// object when its centre lies inside it. Scenes are deterministic functions
// of their options; randomness comes only from math/rand/v2's PCG generator
// seeded from Options.Seed, and every loop runs in a fixed order.
//
// Two scene families are provided: Nuclei (fluorescence-like nuclei, some
// touching in pairs, under vignetting, haze and shot noise) and Plate
// (dark pits and scratches on a grainy metal surface under raking light).
// The package also holds the modified Shepp–Logan phantom, a published
// test object with exact regions, and Otsu's global threshold with
// connected components as a baseline segmentation.
package scenes
