package imageio

import (
	"bytes"
	"encoding/binary"
	"errors"
	"strings"
	"testing"
)

// tiffRGB builds a 2 x 1 RGB 8-bit uncompressed little-endian TIFF by the
// TIFF 6.0 specification: the 8-byte header, one image file directory of
// 10 entries in tag order at offset 8, then BitsPerSample (8, 8, 8), the
// strip offsets and byte counts, and the samples of the pixels (10, 20,
// 30) and (40, 50, 60). With planar 1 the samples are interleaved in one
// strip (10 20 30 40 50 60); with planar 2 each channel is a strip of its
// own (10 40, 20 50, 30 60), as section 8 describes.
func tiffRGB(planar uint16) []byte {
	le := binary.LittleEndian
	var b bytes.Buffer
	b.WriteString("II*\x00")
	binary.Write(&b, le, uint32(8))
	const ifdEnd = 8 + 2 + 10*12 + 4
	const bps, offs, counts, data = ifdEnd, ifdEnd + 6, ifdEnd + 18, ifdEnd + 30
	strips := uint32(1)
	if planar == 2 {
		strips = 3
	}
	entry := func(tag, typ uint16, count, value uint32) {
		binary.Write(&b, le, tag)
		binary.Write(&b, le, typ)
		binary.Write(&b, le, count)
		binary.Write(&b, le, value)
	}
	binary.Write(&b, le, uint16(10))
	entry(256, 4, 1, 2)   // ImageWidth
	entry(257, 4, 1, 1)   // ImageLength
	entry(258, 3, 3, bps) // BitsPerSample, at bps
	entry(259, 3, 1, 1)   // Compression: none
	entry(262, 3, 1, 2)   // PhotometricInterpretation: RGB
	if strips == 1 {
		entry(273, 4, 1, data) // StripOffsets
	} else {
		entry(273, 4, 3, offs)
	}
	entry(277, 3, 1, 3) // SamplesPerPixel
	entry(278, 4, 1, 1) // RowsPerStrip
	if strips == 1 {
		entry(279, 4, 1, 6) // StripByteCounts
	} else {
		entry(279, 4, 3, counts)
	}
	entry(284, 3, 1, uint32(planar)) // PlanarConfiguration
	binary.Write(&b, le, uint32(0))  // no next directory
	binary.Write(&b, le, [3]uint16{8, 8, 8})
	binary.Write(&b, le, [3]uint32{data, data + 2, data + 4})
	binary.Write(&b, le, [3]uint32{2, 2, 2})
	if planar == 2 {
		b.Write([]byte{10, 40, 20, 50, 30, 60})
	} else {
		b.Write([]byte{10, 20, 30, 40, 50, 60})
	}
	return b.Bytes()
}

// The interleaved and the planar file read back the same pixels: with
// PlanarConfiguration 2 each channel is a strip of its own (TIFF 6.0
// section 8), and the reader takes each channel from its strip.
func TestPlanarTIFFRead(t *testing.T) {
	for _, planar := range []uint16{1, 2} {
		im, err := Decode(bytes.NewReader(tiffRGB(planar)), LoadOptions{})
		if err != nil {
			t.Fatalf("planar %d: %v", planar, err)
		}
		if im.Channels != 3 || im.Width != 2 || im.Height != 1 {
			t.Fatalf("planar %d: %dx%d with %d channels, want 2x1 with 3", planar, im.Width, im.Height, im.Channels)
		}
		for c, want := range [3][2]float32{{10, 40}, {20, 50}, {30, 60}} {
			if got := im.Planes[c]; got[0] != want[0] || got[1] != want[1] {
				t.Errorf("planar %d channel %d: %v, want %v", planar, c, got, want)
			}
		}
	}
}

// A BigTIFF header (version 43, 8-byte offsets: "II" 0x2B 0x00, offset
// size 8, 0, first directory at 16) is read as TIFF in either byte order:
// with no directory behind it, the error says the TIFF is corrupt, not
// that the format is unknown or unsupported.
func TestBigTIFFHeaderRead(t *testing.T) {
	for _, head := range []string{"II+\x00\x08\x00\x00\x00\x10\x00\x00\x00\x00\x00\x00\x00", "MM\x00+\x00\x08\x00\x00\x00\x00\x00\x00\x00\x00\x00\x10"} {
		_, err := Decode(strings.NewReader(head+strings.Repeat("\x00", 64)), LoadOptions{})
		if err == nil || errors.Is(err, ErrUnsupported) || errors.Is(err, ErrUnknownFormat) || !strings.Contains(err.Error(), "corrupt TIFF") {
			t.Errorf("%q: error %v, want one saying the TIFF is corrupt", head[:4], err)
		}
	}
}

// A colour model cleave does not read is refused by name, whatever the
// bit depth, as an ErrUnsupported (the PhotometricInterpretation values of
// TIFF 6.0 section 8, part 2: 5 separated/CMYK, 8 CIE L*a*b*; as
// remembered). The file is tiffRGB with that one field changed.
func TestTIFFColourModelRefused(t *testing.T) {
	for _, c := range []struct {
		photometric uint16
		want        string
	}{{5, "CMYK"}, {8, "L*a*b*"}, {32844, "LogL"}, {7, "PhotometricInterpretation 7"}} {
		b := tiffRGB(1)
		// Entry 4 (tag 262) of the directory at 8: 8 + 2 + 4*12, value at +8.
		if tag := binary.LittleEndian.Uint16(b[58:]); tag != 262 {
			t.Fatalf("entry at 58 is tag %d, not 262", tag)
		}
		binary.LittleEndian.PutUint16(b[66:], c.photometric)
		_, err := Decode(bytes.NewReader(b), LoadOptions{})
		if err == nil || !errors.Is(err, ErrUnsupported) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("photometric %d: error %v; want ErrUnsupported naming %q", c.photometric, err, c.want)
		}
	}
}
