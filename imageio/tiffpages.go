package imageio

import "encoding/binary"

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
	if len(data) < 8 {
		return 1
	}
	var bo binary.ByteOrder = binary.LittleEndian
	if data[0] == 'M' {
		bo = binary.BigEndian
	}
	off := int64(bo.Uint32(data[4:8]))
	seen := map[int64]bool{}
	pages := 0
	for off != 0 && pages < maxCountedPages && !seen[off] {
		seen[off] = true
		if off+2 > int64(len(data)) {
			break
		}
		n := int64(bo.Uint16(data[off : off+2]))
		next := off + 2 + 12*n
		if next+4 > int64(len(data)) {
			break
		}
		pages++
		off = int64(bo.Uint32(data[next : next+4]))
	}
	return max(pages, 1)
}
