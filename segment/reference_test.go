package segment

import (
	"github.com/cleave-seg/cleave/segment/parallel"
)

// The plane forms of the background field and the contrast map, which
// Run no longer makes (it keeps the field's grid and reads the contrast
// from it, contrastOfGrid): kept for the tests, as the reference the
// grid forms must equal bit for bit, and for the benchmarks of the
// former round.

// smoothField is smoothFieldGrid's field interpolated to every pixel.
func smoothField(v []float32, mask []bool, w, h int, sigma float64, workers int) []float32 {
	return smoothFieldGrid(v, mask, w, h, sigma, workers).plane(nil, workers)
}

// contrastMap returns the contrast of contrastOfGrid (signedContrast)
// per pixel against the field plane B.
func contrastMap(inten, field []float32, background Background, workers int) []float64 {
	return contrastMapInto(nil, inten, field, background, workers)
}

// contrastMapInto is contrastMap written into dst when it has the length
// of inten, else into a new slice; bands of pixels run on workers
// goroutines, each pixel computed alone.
func contrastMapInto(dst []float64, inten, field []float32, background Background, workers int) []float64 {
	con := dst
	if len(con) != len(inten) {
		con = make([]float64, len(inten))
	}
	const band = 1 << 16
	parallel.Blocks(len(con), band, workers, func(_, lo, hi int) {
		for i := lo; i < hi; i++ {
			con[i] = signedContrast(backgroundRatio(float64(inten[i]), float64(field[i])), background)
		}
	})
	return con
}
