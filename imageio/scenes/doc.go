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
// Seven scene families are provided (short names in Kinds, made by
// Generate): Nuclei (fluorescence-like nuclei, some touching in pairs,
// under vignetting, haze and shot noise), Plate (dark pits and scratches
// on a grainy metal surface under raking light), Clusters (crowded
// irregular nuclei in touching clusters of 2-4, with and without a seam,
// dim and out-of-focus ones), Haze (sparse faint nuclei under bright
// out-of-focus glow), Stained (dark brightfield nuclei on an unevenly lit
// field), Surface (machined metal with directional grain, pits,
// inclusions and a crack) and Grains (a packed tessellation with thin
// dark boundaries).
// The package also holds the modified Shepp–Logan phantom, a published
// test object with exact regions, and Otsu's global threshold with
// connected components as a baseline segmentation.
package scenes
