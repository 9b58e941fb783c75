//go:build ignore

// make.go writes the hostile corpus of this folder: small files whose
// headers promise huge images (inside and outside the default 100
// megapixel limit), files cut short, and a header that never ends. Run
// from the repository root:
//
//	go run testdata/hostile/make.go
//
// The files are built byte by byte from the format specifications (PNG
// 1.2, TIFF 6.0, JFIF/ITU-T T.81, GIF89a, BMP, WebP lossless) so that no
// encoder refuses to write what a decoder must refuse to read.
package main

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"log"
	"os"
	"path/filepath"

	"golang.org/x/image/tiff"
)

const dir = "testdata/hostile"

func main() {
	// A 9999 x 9999 8-bit gray PNG of zeros: 97 KB on disk, 100 MB as
	// pixels, inside the default 100 megapixel limit.
	write("bomb-png-9999.png", pngBomb(9999, 9999))
	// The same kind of bomb, 3000 x 3000: small enough to be processed
	// under the default memory limit.
	write("bomb-png-3000.png", pngBomb(3000, 3000))
	// Headers of images far above the limit, with almost no data.
	write("huge-png-60000.png", pngHeaderOnly(60000, 60000))
	write("huge-tiff-60000.tif", tiffHeader(60000, 60000))
	write("huge-jpeg-65000.jpg", jpegHeader(65000, 65000))
	write("huge-gif-65535.gif", gifHeader(65535, 65535))
	write("huge-bmp-30000.bmp", bmpHeader(30000, 30000))
	write("huge-webp-16384.webp", webpLosslessHeader(16384, 16384))
	// Truncations of valid files.
	p := validPNG()
	write("cut-png-signature.png", p[:8])
	write("cut-png-ihdr.png", p[:20])
	write("cut-png-idat.png", p[:len(p)/2])
	t := validTIFF()
	write("cut-tiff-header.tif", t[:6])
	write("cut-tiff-directory.tif", t[:len(t)-60])
	s := stripFirstTIFF(64, 64)
	write("cut-tiff-strip.tif", s[:len(s)-1000])
	j := validJPEG()
	write("cut-jpeg-scan.jpg", j[:len(j)/2])
	// A TIFF whose first directory lies far past the end of the file.
	write("tiff-ifd-past-end.tif", tiffIFDAt(1<<30))
	// A 64 x 64 TIFF with tiles of 65536 x 65536 pixels (4 GiB each):
	// refused from the directory, before a tile buffer exists.
	write("tiff-tile-bomb.tif", tiffEntries([][4]uint32{
		{256, 4, 1, 64}, {257, 4, 1, 64}, {258, 3, 1, 8}, {259, 3, 1, 1}, {262, 3, 1, 1}, {277, 3, 1, 1},
		{322, 4, 1, 65536}, {323, 4, 1, 65536}, {324, 4, 1, 8}, {325, 4, 1, 64}}))
	// A deflate strip that claims 2^31 bytes for 64 x 64 pixels.
	write("tiff-strip-count-bomb.tif", tiffEntries([][4]uint32{
		{256, 4, 1, 64}, {257, 4, 1, 64}, {258, 3, 1, 8}, {259, 3, 1, 8}, {262, 3, 1, 1}, {273, 4, 1, 8},
		{277, 3, 1, 1}, {278, 4, 1, 64}, {279, 4, 1, 1 << 31}}))
	// A BigTIFF (version 43) cut inside its first directory.
	big := []byte("II+\x00\x08\x00\x00\x00\x10\x00\x00\x00\x00\x00\x00\x00\x09\x00\x00\x00\x00\x00\x00\x00")
	write("bigtiff-cut-directory.tif", append(big, make([]byte, 40)...))
	write("empty.png", nil)
	write("not-an-image.png", []byte("just some text, not an image\n"))
}

func write(name string, data []byte) {
	if err := os.WriteFile(filepath.Join(dir, name), data, 0o644); err != nil {
		log.Fatal(err)
	}
}

// chunk is one PNG chunk: length, type, data, CRC-32 of type and data.
func chunk(typ string, data []byte) []byte {
	var b bytes.Buffer
	binary.Write(&b, binary.BigEndian, uint32(len(data)))
	b.WriteString(typ)
	b.Write(data)
	crc := crc32.NewIEEE()
	crc.Write([]byte(typ))
	crc.Write(data)
	binary.Write(&b, binary.BigEndian, crc.Sum32())
	return b.Bytes()
}

func ihdr(w, h uint32) []byte {
	d := make([]byte, 13)
	binary.BigEndian.PutUint32(d[0:], w)
	binary.BigEndian.PutUint32(d[4:], h)
	d[8], d[9] = 8, 0 // 8-bit gray
	return chunk("IHDR", d)
}

func pngBomb(w, h int) []byte {
	var z bytes.Buffer
	zw, _ := zlib.NewWriterLevel(&z, zlib.BestCompression)
	row := make([]byte, w+1) // filter type 0, then zeros
	for y := 0; y < h; y++ {
		zw.Write(row)
	}
	zw.Close()
	var b bytes.Buffer
	b.WriteString("\x89PNG\r\n\x1a\n")
	b.Write(ihdr(uint32(w), uint32(h)))
	b.Write(chunk("IDAT", z.Bytes()))
	b.Write(chunk("IEND", nil))
	return b.Bytes()
}

func pngHeaderOnly(w, h uint32) []byte {
	var z bytes.Buffer
	zw := zlib.NewWriter(&z)
	zw.Write(make([]byte, 100))
	zw.Close()
	var b bytes.Buffer
	b.WriteString("\x89PNG\r\n\x1a\n")
	b.Write(ihdr(w, h))
	b.Write(chunk("IDAT", z.Bytes()))
	b.Write(chunk("IEND", nil))
	return b.Bytes()
}

// tiffIFD writes a little-endian TIFF whose one directory, at ifdOff,
// describes a w x h 8-bit gray image in one uncompressed strip at
// offset 8.
func tiffIFD(w, h uint32, ifdOff uint32, withDir bool) []byte {
	var b bytes.Buffer
	b.WriteString("II*\x00")
	binary.Write(&b, binary.LittleEndian, ifdOff)
	if !withDir {
		return b.Bytes()
	}
	type entry struct {
		tag, typ uint16
		count    uint32
		value    uint32
	}
	es := []entry{
		{256, 4, 1, w},     // ImageWidth
		{257, 4, 1, h},     // ImageLength
		{258, 3, 1, 8},     // BitsPerSample
		{259, 3, 1, 1},     // Compression: none
		{262, 3, 1, 1},     // Photometric: black is zero
		{273, 4, 1, 8},     // StripOffsets
		{277, 3, 1, 1},     // SamplesPerPixel
		{278, 4, 1, h},     // RowsPerStrip
		{279, 4, 1, w * h}, // StripByteCounts (wraps for huge images; never read)
	}
	for b.Len() < int(ifdOff) && withDir {
		b.WriteByte(0)
	}
	binary.Write(&b, binary.LittleEndian, uint16(len(es)))
	for _, e := range es {
		binary.Write(&b, binary.LittleEndian, e.tag)
		binary.Write(&b, binary.LittleEndian, e.typ)
		binary.Write(&b, binary.LittleEndian, e.count)
		binary.Write(&b, binary.LittleEndian, e.value)
	}
	binary.Write(&b, binary.LittleEndian, uint32(0))
	return b.Bytes()
}

func tiffHeader(w, h uint32) []byte { return tiffIFD(w, h, 16, true) }

// stripFirstTIFF writes a w x h gray TIFF with its directory first and
// its strip after it, so that cutting the end cuts pixel data.
func stripFirstTIFF(w, h uint32) []byte {
	b := tiffIFD(w, h, 8, true)
	// Point StripOffsets (the sixth entry) past the directory.
	off := uint32(len(b))
	binary.LittleEndian.PutUint32(b[8+2+5*12+8:], off)
	img := gradient(int(w), int(h))
	return append(b, img.Pix...)
}

// tiffEntries writes a little-endian TIFF with one directory at offset 8
// holding the entries (tag, type, count, value), then 64 zero bytes.
func tiffEntries(es [][4]uint32) []byte {
	var b bytes.Buffer
	b.WriteString("II*\x00")
	binary.Write(&b, binary.LittleEndian, uint32(8))
	binary.Write(&b, binary.LittleEndian, uint16(len(es)))
	for _, e := range es {
		binary.Write(&b, binary.LittleEndian, uint16(e[0]))
		binary.Write(&b, binary.LittleEndian, uint16(e[1]))
		binary.Write(&b, binary.LittleEndian, e[2])
		binary.Write(&b, binary.LittleEndian, e[3])
	}
	binary.Write(&b, binary.LittleEndian, uint32(0))
	b.Write(make([]byte, 64))
	return b.Bytes()
}

func tiffIFDAt(off uint32) []byte {
	b := tiffIFD(64, 64, off, false)
	return append(b, make([]byte, 64)...)
}

func jpegHeader(w, h uint16) []byte {
	var b bytes.Buffer
	b.Write([]byte{0xff, 0xd8})                                                          // SOI
	b.Write([]byte{0xff, 0xe0, 0, 16, 'J', 'F', 'I', 'F', 0, 1, 1, 0, 0, 1, 0, 1, 0, 0}) // APP0 JFIF
	b.Write([]byte{0xff, 0xc0, 0, 11, 8})                                                // SOF0, length 11, 8-bit
	binary.Write(&b, binary.BigEndian, h)                                                // lines
	binary.Write(&b, binary.BigEndian, w)                                                // samples per line
	b.Write([]byte{1, 1, 0x11, 0})                                                       // one component
	b.Write([]byte{0xff, 0xd9})                                                          // EOI
	return b.Bytes()
}

func gifHeader(w, h uint16) []byte {
	var b bytes.Buffer
	b.WriteString("GIF89a")
	binary.Write(&b, binary.LittleEndian, w)
	binary.Write(&b, binary.LittleEndian, h)
	b.Write([]byte{0x80, 0, 0}) // global colour table of 2 entries
	b.Write([]byte{0, 0, 0, 255, 255, 255})
	b.WriteByte(0x2c) // image descriptor
	binary.Write(&b, binary.LittleEndian, [4]uint16{0, 0, w, h})
	b.Write([]byte{0, 2, 2, 0x4c, 0x01, 0, 0x3b}) // a few LZW bytes, trailer
	return b.Bytes()
}

func bmpHeader(w, h int32) []byte {
	var b bytes.Buffer
	b.WriteString("BM")
	binary.Write(&b, binary.LittleEndian, uint32(54+64))
	binary.Write(&b, binary.LittleEndian, uint32(0))
	binary.Write(&b, binary.LittleEndian, uint32(54))
	binary.Write(&b, binary.LittleEndian, uint32(40)) // BITMAPINFOHEADER
	binary.Write(&b, binary.LittleEndian, w)
	binary.Write(&b, binary.LittleEndian, h)
	binary.Write(&b, binary.LittleEndian, uint16(1))  // planes
	binary.Write(&b, binary.LittleEndian, uint16(24)) // bits per pixel
	binary.Write(&b, binary.LittleEndian, [6]uint32{})
	b.Write(make([]byte, 64))
	return b.Bytes()
}

// webpLosslessHeader writes a RIFF WebP with a VP8L chunk whose header
// (14-bit width-1 and height-1) gives w x h.
func webpLosslessHeader(w, h uint32) []byte {
	var v bytes.Buffer
	v.WriteByte(0x2f)           // VP8L signature
	bits := (w - 1) | (h-1)<<14 // alpha hint 0, version 0
	binary.Write(&v, binary.LittleEndian, bits)
	v.Write(make([]byte, 16))
	var b bytes.Buffer
	b.WriteString("RIFF")
	binary.Write(&b, binary.LittleEndian, uint32(4+8+v.Len()))
	b.WriteString("WEBPVP8L")
	binary.Write(&b, binary.LittleEndian, uint32(v.Len()))
	b.Write(v.Bytes())
	return b.Bytes()
}

func gradient(w, h int) *image.Gray {
	img := image.NewGray(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			img.SetGray(x, y, color.Gray{uint8((x*7 + y*13) % 256)})
		}
	}
	return img
}

func validPNG() []byte {
	var b bytes.Buffer
	png.Encode(&b, gradient(64, 64))
	return b.Bytes()
}

func validTIFF() []byte {
	var b bytes.Buffer
	tiff.Encode(&b, gradient(64, 64), nil)
	return b.Bytes()
}

func validJPEG() []byte {
	var b bytes.Buffer
	jpeg.Encode(&b, gradient(64, 64), &jpeg.Options{Quality: 90})
	return b.Bytes()
}
