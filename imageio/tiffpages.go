package imageio

import (
	"io"

	"github.com/cleave-seg/cleave/imageio/tiffread"
)

// tiffPagesAt counts the images of the size bytes of a TIFF or BigTIFF
// file r, read a directory at a time (never the whole file): the
// full-resolution directories of the chain that starts in the header
// (TIFF 6.0, section 2; package tiffread follows it, at most
// tiffread.MaxPages, stopping at a loop or at a directory that cannot be
// read). It returns at least 1 for data that sniffed as TIFF.
func tiffPagesAt(r io.ReaderAt, size int64) int {
	f, err := tiffread.Open(r, size)
	if err != nil {
		return 1
	}
	return max(len(f.Pages), 1)
}
