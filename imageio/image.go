package imageio

// Image is a decoded raster in the image's own units: Planes[c][y*Width+x]
// holds channel c of pixel (x, y) as the integer sample value (0..255 for
// 8-bit data, 0..65535 for 16-bit), stored as float32, which represents
// every 16-bit value exactly. Channels is 1 (gray) or 3 (RGB, in the
// source's own encoding, normally sRGB). An alpha channel is dropped without
// compositing: colour samples are the un-premultiplied ones (the semantics
// of image/color.NRGBA). HasAlpha is true when the source carried alpha
// and at least one pixel is not fully opaque (some decoders, such as TIFF's
// for associated alpha, cannot tell an all-opaque alpha channel from none).
type Image struct {
	Width, Height int
	Channels      int
	BitDepth      int    // 8 or 16: bits per sample of the source
	Format        string // "png", "tiff", "jpeg", "bmp", "gif", "webp"
	HasAlpha      bool   // the source had alpha below full opacity (dropped)
	// Pages is the number of images in the file (TIFF pages: planes of a
	// stack, channels or time points stored one per page); only the first
	// is read. 1 for the other formats.
	Pages  int
	Planes [][]float32
}

// MaxValue is the largest sample value the bit depth allows (2^bits - 1).
func (im *Image) MaxValue() float64 { return float64(int(1)<<im.BitDepth - 1) }
