package affinity

import "github.com/cleave-seg/cleave/imageio/noise"

// PixelNoise estimates the standard deviation of white pixel noise in v
// (w x h, row-major) from the median absolute difference of horizontally
// adjacent pixels: 1.4826·median|Δ|/√2 (the median absolute deviation,
// common practice; a difference of two noisy pixels has variance 2s²),
// over at most about 2^17 pairs on evenly spaced rows. It is the
// estimate ObjectScale reports as Noise before its floor.
func PixelNoise(v []float32, w, h int) float64 { return noise.Pixel(v, w, h) }
