package imageio

import (
	"bytes"
	"io"

	"github.com/cleave-seg/cleave/imageio/tiffread"
)

// tiffPages counts the images of a TIFF or BigTIFF file: the
// full-resolution directories of the chain that starts in the header
// (TIFF 6.0, section 2; package tiffread follows it, at most
// tiffread.MaxPages, stopping at a loop or at a directory that cannot be
// read). It returns at least 1 for data that sniffed as TIFF.
func tiffPages(data []byte) int {
	return tiffPagesAt(bytes.NewReader(data), int64(len(data)))
}

// tiffPagesAt is tiffPages for the size bytes of r, read a directory at
// a time (never the whole file).
func tiffPagesAt(r io.ReaderAt, size int64) int {
	f, err := tiffread.Open(r, size)
	if err != nil {
		return 1
	}
	return max(len(f.Pages), 1)
}
