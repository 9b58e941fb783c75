package affinity

import (
	"errors"
	"fmt"
	"math"
)

// ParamError reports a parameter outside its domain by its name, as the
// params files spell it, in the way of segment.ParamError and
// imageio.OptionError (the command words the name as its flag). The
// message reads as it stands: "sigma-i must be a positive number, got
// NaN".
type ParamError struct {
	Name    string // e.g. "sigma-i", "radius"
	Problem string // e.g. "must be a positive number, got NaN"
}

func (e *ParamError) Error() string { return e.Name + " " + e.Problem }

// positive checks that v is finite and > 0.
func positive(name string, v float64) error {
	if !(v > 0) || math.IsInf(v, 0) {
		return &ParamError{name, fmt.Sprintf("must be a positive number, got %v", v)}
	}
	return nil
}

// PixelParams are the parameters of the pixel graph of Shi and Malik (2000).
type PixelParams struct {
	Radius int     // r: pixels i, j are joined when 0 < |X_i - X_j| <= r (pixels)
	SigmaI float64 // sigma_I: feature scale, in normalized feature units
	SigmaX float64 // sigma_X: spatial scale, in pixels
}

// Validate reports the first parameter outside its domain: Radius >= 1,
// SigmaI and SigmaX finite and > 0.
func (p PixelParams) Validate() error {
	if p.Radius < 1 {
		return &ParamError{"radius", fmt.Sprintf("must be at least 1 pixel, got %d", p.Radius)}
	}
	if err := positive("sigma-i", p.SigmaI); err != nil {
		return err
	}
	return positive("sigma-x", p.SigmaX)
}

// SLICParams are the parameters of SLIC superpixels (Achanta et al. 2012).
type SLICParams struct {
	// Count is the wanted number of superpixels K. The result has about
	// that many; more than the number of pixels means one per pixel.
	Count int
	// Compactness is the paper's m on its own scale (CIE Lab, L in 0..100;
	// the paper suggests 1..40, commonly 10). Our features are normalized
	// to about 0..1, so m/100 is used in feature units: compactness 10
	// means 0.1.
	Compactness float64
	// Iterations of assignment and update; 0 means 10, which the paper
	// reports to be enough for most images.
	Iterations int
	// AfterIterations, when not nil, is called on SLIC's goroutine as the
	// iterations end, before the connectivity pass, which runs on one
	// core: a caller may start work there (on goroutines of its own, not
	// waiting for it) that then runs beside that pass. It does not change
	// the superpixels.
	AfterIterations func()
}

// Validate reports the first parameter outside its domain: Count >= 1,
// Compactness finite and > 0, 0 <= Iterations <= 1000.
func (p SLICParams) Validate() error {
	if p.Count < 1 {
		return &ParamError{"superpixels", fmt.Sprintf("must be at least 1, got %d", p.Count)}
	}
	if err := positive("compactness", p.Compactness); err != nil {
		return err
	}
	if p.Iterations < 0 || p.Iterations > 1000 {
		return &ParamError{"slic-iterations", fmt.Sprintf("must be between 0 (default 10) and 1000, got %d", p.Iterations)}
	}
	return nil
}

// RegionParams are the kernel widths of the superpixel (region) graph.
type RegionParams struct {
	SigmaI float64 // sigma_I on mean features, normalized feature units
	SigmaX float64 // sigma_X on centroid distance, pixels
	// Contour, when set, is the edge energy (EdgeEnergy) of the w x h
	// image, and SigmaC (> 0) the width of the intervening-contour
	// factor exp(-IC²/SigmaC²) of each weight (see RegionGraph).
	Contour []float32
	SigmaC  float64
	// ContourIC, when it has one value per entry of the adjacency
	// graph, is InterveningContour of Contour over it, computed once by
	// a caller that also took SigmaC from it (SigmaContourOf); otherwise
	// RegionGraph computes it.
	ContourIC []float32
}

// Validate reports the first parameter outside its domain: both sigmas
// finite and > 0.
func (p RegionParams) Validate() error {
	if err := positive("sigma-i", p.SigmaI); err != nil {
		return err
	}
	if p.Contour != nil {
		if err := positive("sigma-c", p.SigmaC); err != nil {
			return err
		}
	}
	return positive("sigma-x", p.SigmaX)
}

// checkPlanes verifies the feature planes: at least one, each w*h long,
// all values finite. Graph sizes are bounded by int32 node indices.
func checkPlanes(f [][]float32, w, h int) error {
	if w < 1 || h < 1 {
		return fmt.Errorf("affinity: image size %dx%d is empty", w, h)
	}
	if int64(w)*int64(h) > math.MaxInt32 {
		return fmt.Errorf("affinity: image %dx%d has more than 2^31-1 pixels", w, h)
	}
	if len(f) == 0 {
		return errors.New("affinity: no feature planes")
	}
	for c, pl := range f {
		if len(pl) != w*h {
			return fmt.Errorf("affinity: feature plane %d has %d values, want %dx%d = %d", c, len(pl), w, h, w*h)
		}
	}
	for c, pl := range f {
		// v - v is 0 for every finite v and NaN for NaN and ±Inf (IEEE
		// 754): one subtraction and compare per value instead of two
		// tests.
		for i, v := range pl {
			if v-v != 0 {
				return fmt.Errorf("affinity: feature plane %d has a non-finite value %v at pixel (%d,%d)", c, v, i%w, i/w)
			}
		}
	}
	return nil
}
