package imageio

import "math"

// Image is a decoded raster in the image's own units: Planes[c][y*Width+x]
// holds channel c of pixel (x, y) as the sample value (0..255 for 8-bit
// data, 0..65535 for 16-bit; signed and floating-point samples of TIFF
// files as stored), as float32, which represents every 16-bit value and
// every 32-bit float exactly (32- and 64-bit integers above 2^24 and
// 64-bit floats are rounded to float32). Floating-point planes may hold
// NaN and infinities. Channels is 1 (gray) or 3 (RGB, in the
// source's own encoding, normally sRGB). An alpha channel is dropped without
// compositing: colour samples are the un-premultiplied ones (the semantics
// of image/color.NRGBA). HasAlpha is true when the source carried alpha
// and at least one pixel is not fully opaque (some decoders, such as TIFF's
// for associated alpha, cannot tell an all-opaque alpha channel from none).
type Image struct {
	Width, Height int
	Channels      int
	BitDepth      int // bits per sample of the source: 8 or 16; TIFF also 32 and 64 (16 for half floats)
	// SampleType is "" for unsigned integers, SampleSigned or
	// SampleFloat (TIFF's SampleFormat 2 and 3).
	SampleType string
	Format     string // "png", "tiff", "jpeg", "bmp", "gif", "webp"
	HasAlpha   bool   // the source had alpha below full opacity (dropped)
	// Pages is the number of images in the file (TIFF pages: planes of a
	// stack, channels or time points stored one per page); only the first
	// is read. 1 for the other formats.
	Pages  int
	Planes [][]float32
	// Used says which channel, plane and frame of a TIFF stack were read
	// (nil for files read whole).
	Used *Used
}

// Sample types of Image.SampleType.
const (
	SampleSigned = "int"
	SampleFloat  = "float"
)

// MaxValue is the largest sample value the bit depth allows (2^bits - 1)
// for unsigned samples, 2^(bits-1) - 1 for signed ones; 0 for floats,
// which have no range of their own.
func (im *Image) MaxValue() float64 {
	switch im.SampleType {
	case SampleFloat:
		return 0
	case SampleSigned:
		return math.Exp2(float64(im.BitDepth-1)) - 1
	}
	return math.Exp2(float64(im.BitDepth)) - 1
}
