package scenes

import (
	"image"
	"image/png"
	"io"

	"github.com/cleave-seg/cleave/imageio"
	"golang.org/x/image/tiff"
)

// WritePNG writes img as a PNG with the best compression, atomically
// (imageio.WriteAtomic: a temporary file in the target folder renamed
// over path), so a reader never sees a half-written file.
func WritePNG(path string, img image.Image) error {
	enc := png.Encoder{CompressionLevel: png.BestCompression}
	return writeAtomic(path, func(w io.Writer) error { return enc.Encode(w, img) })
}

// WriteTIFF writes img as an uncompressed baseline TIFF
// (golang.org/x/image/tiff), atomically like WritePNG.
func WriteTIFF(path string, img image.Image) error {
	return writeAtomic(path, func(w io.Writer) error {
		return tiff.Encode(w, img, &tiff.Options{Compression: tiff.Uncompressed})
	})
}

// writeAtomic writes path through imageio.WriteAtomic, replacing an
// earlier file.
func writeAtomic(path string, encode func(io.Writer) error) error {
	return imageio.WriteAtomic(path, true, encode)
}
