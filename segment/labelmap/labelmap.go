// Package labelmap holds the label map every part of cleave passes
// around: the segmentation's regions and objects, the classes, SLIC's
// superpixels, the truth read for scoring, the maps the encoders write
// and the measurements read. It imports nothing of the project, so
// imageio, affinity, segment and their sub-packages all use it.
package labelmap

import "fmt"

// Map is a label map of Width x Height pixels in raster order:
// Pix[y*Width+x] is the label of pixel (x, y). What a label means is the
// producer's to say (regions or objects 1..N on background 0,
// superpixels 0..N-1, classes 0..C-1); Map keeps the pixels with their
// size, so that functions take one value instead of (labels, w, h). Loops
// over the pixels read Pix directly.
type Map struct {
	Pix           []int32
	Width, Height int
}

// New is a map of width x height pixels, all labelled 0.
func New(width, height int) Map {
	return Map{Pix: make([]int32, width*height), Width: width, Height: height}
}

// At is the label of pixel (x, y), which must lie inside the map.
func (m Map) At(x, y int) int32 { return m.Pix[y*m.Width+x] }

// Max is the largest label (0 for an empty map or one without positive
// labels).
func (m Map) Max() int32 {
	var top int32
	for _, l := range m.Pix {
		top = max(top, l)
	}
	return top
}

// Check returns an error when the map is empty or its pixels do not fill
// Width x Height: "label map: N labels for a WxH image".
func (m Map) Check() error {
	if m.Width <= 0 || m.Height <= 0 || len(m.Pix) != m.Width*m.Height {
		return fmt.Errorf("label map: %d labels for a %dx%d image", len(m.Pix), m.Width, m.Height)
	}
	return nil
}

// SameSize reports whether m and o have the same width and height.
func (m Map) SameSize(o Map) bool { return m.Width == o.Width && m.Height == o.Height }
