package scenes

import (
	"bufio"
	"fmt"
	"image"
	"image/png"
	"io"
	"os"
	"path/filepath"

	"golang.org/x/image/tiff"
)

// WritePNG writes img as a PNG with the best compression, atomically: it
// encodes into a temporary file in the target directory and renames it
// over path, so a reader never sees a half-written file.
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

func writeAtomic(path string, encode func(io.Writer) error) (err error) {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	bw := bufio.NewWriter(f)
	if err = encode(bw); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = f.Chmod(0o644); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}
