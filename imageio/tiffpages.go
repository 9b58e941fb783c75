package imageio

import (
	"bytes"
	"encoding/binary"
	"io"
)

// maxCountedPages bounds the pages tiffPages follows, so a file whose IFD
// chain is long or hostile costs little time.
const maxCountedPages = 1 << 16

// tiffPages counts the images (IFDs) of a classic TIFF file by following
// the chain of next-IFD offsets from the header (TIFF 6.0, section 2:
// an IFD is a 2-byte entry count, 12 bytes per entry and the 4-byte
// offset of the next IFD, 0 at the end). Offsets outside the data, a
// chain that loops, or more than maxCountedPages end the count; it
// returns at least 1 for data that sniffed as TIFF.
func tiffPages(data []byte) int {
	return tiffPagesAt(bytes.NewReader(data), int64(len(data)))
}

// tiffPagesAt is tiffPages for the size bytes of r, read a few bytes per
// directory (never the whole file).
func tiffPagesAt(r io.ReaderAt, size int64) int {
	var hdr [8]byte
	if size < 8 {
		return 1
	}
	if _, err := r.ReadAt(hdr[:], 0); err != nil {
		return 1
	}
	var bo binary.ByteOrder = binary.LittleEndian
	if hdr[0] == 'M' {
		bo = binary.BigEndian
	}
	off := int64(bo.Uint32(hdr[4:8]))
	seen := map[int64]bool{}
	pages := 0
	var b [4]byte
	for off != 0 && pages < maxCountedPages && !seen[off] {
		seen[off] = true
		if off+2 > size {
			break
		}
		if _, err := r.ReadAt(b[:2], off); err != nil {
			break
		}
		n := int64(bo.Uint16(b[:2]))
		next := off + 2 + 12*n
		if next+4 > size {
			break
		}
		if _, err := r.ReadAt(b[:4], next); err != nil {
			break
		}
		pages++
		off = int64(bo.Uint32(b[:4]))
	}
	return max(pages, 1)
}
