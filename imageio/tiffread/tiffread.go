// Package tiffread reads the image file directories and the pixel samples
// of classic TIFF (TIFF 6.0, Adobe 1992) and BigTIFF (the 64-bit variant
// described by Aware Systems, 2006, and implemented by libtiff 4), in both
// byte orders: strips and tiles, contiguous and planar samples, many
// pages, 8-, 16-, 32- and 64-bit unsigned, signed and floating-point
// samples and 16-bit floats, compression none, LZW (TIFF 6.0 section
// 13), deflate (code 8 of the Adobe Photoshop TIFF Technical Notes, a
// zlib stream per RFC 1950 and 1951, and the older code 32946), PackBits
// (section 9), zstd (code 50000 as libtiff registers it, RFC 8878) and
// JPEG (TIFF Technical Note 2; gray or YCbCr), with the horizontal
// predictor (section 14) and the floating-point predictor (Adobe
// Photoshop TIFF Technical Note 3).
//
// It is written in the manner of golang.org/x/image/tiff, which cleave
// keeps for what that package decodes and this one leaves out (bilevel
// and 4-bit samples, palettes): every size is checked against the file
// and the image before anything is allocated, and errors are typed:
// FormatError for data that breaks the specification, UnsupportedError
// naming a feature that is valid TIFF but not read here.
//
// The package reads through an io.ReaderAt and never reads a whole file:
// Open reads the header and the directories, Page.ReadSample one sample
// plane of one page, a strip or tile at a time.
package tiffread

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
)

// FormatError reports data that is not valid TIFF.
type FormatError string

func (e FormatError) Error() string { return "invalid TIFF: " + string(e) }

// UnsupportedError reports a valid TIFF feature this package does not
// read; the text names the feature.
type UnsupportedError string

func (e UnsupportedError) Error() string { return "unsupported TIFF feature: " + string(e) }

// Limits of what Open follows, so that a hostile file costs little.
const (
	// MaxPages bounds the directories followed in the chain.
	MaxPages = 1 << 16
	// maxEntries bounds the entries of one directory (classic TIFF
	// allows 65535; real directories have a few dozen).
	maxEntries = 4096
	// maxArrayBytes bounds one tag's value read into memory (strip
	// offsets of a very large image, a long description).
	maxArrayBytes = 64 << 20
)

// Tags used here (TIFF 6.0 appendix A; SampleFormat section 19;
// Predictor section 14; tiles section 15; JPEGTables TIFF Technical Note
// 2; SubIFDs Adobe PageMaker 6.0 TIFF Technical Notes).
const (
	tNewSubfileType   = 254
	tImageWidth       = 256
	tImageLength      = 257
	tBitsPerSample    = 258
	tCompression      = 259
	tPhotometric      = 262
	tFillOrder        = 266
	tImageDescription = 270
	tStripOffsets     = 273
	tSamplesPerPixel  = 277
	tRowsPerStrip     = 278
	tStripByteCounts  = 279
	tXResolution      = 282
	tYResolution      = 283
	tPlanarConfig     = 284
	tResolutionUnit   = 296
	tPredictor        = 317
	tColorMap         = 320
	tTileWidth        = 322
	tTileLength       = 323
	tTileOffsets      = 324
	tTileByteCounts   = 325
	tExtraSamples     = 338
	tSampleFormat     = 339
	tJPEGTables       = 347
	tYCbCrSubsampling = 530
	tImageDepth       = 32997 // SGI volume tiles: refused
)

// Compression codes (TIFF 6.0 section 3 and later registrations).
const (
	CompressionNone       = 1
	CompressionCCITT      = 2
	CompressionLZW        = 5
	CompressionOldJPEG    = 6
	CompressionJPEG       = 7
	CompressionDeflate    = 8
	CompressionPackBits   = 32773
	CompressionOldDeflate = 32946
	CompressionLERC       = 34887
	CompressionLZMA       = 34925
	CompressionZstd       = 50000
	CompressionWebP       = 50001
	CompressionJPEGXL     = 50002
	CompressionZstdAlt    = 34926 // zstd as first registered by libtiff
	CompressionWebPAlt    = 34927
	CompressionJPEG2000   = 34712
	CompressionPNG        = 34933
	CompressionJPEGXR     = 22610
	CompressionDeflateAlt = 50013 // deflate as some microscope software tags it
	photometricMinIsWhite = 0
	photometricMinIsBlack = 1
	photometricRGB        = 2
	photometricPalette    = 3
	photometricYCbCr      = 6
	sampleFormatUint      = 1
	sampleFormatInt       = 2
	sampleFormatFloat     = 3
	sampleFormatUndefined = 4
	// TIFF technical note 3 (as remembered): complex samples, real and
	// imaginary parts each of half the bits.
	sampleFormatComplexInt   = 5
	sampleFormatComplexFloat = 6
	predictorNone            = 1
	predictorHorizontal      = 2
	predictorFloatingPoint   = 3
)

var compressionNames = map[int]string{
	CompressionCCITT: "CCITT modified Huffman", 3: "CCITT Group 3 fax", 4: "CCITT Group 4 fax",
	CompressionOldJPEG: "old-style JPEG (compression 6)", CompressionLERC: "LERC", CompressionLZMA: "LZMA",
	CompressionWebP: "WebP", CompressionWebPAlt: "WebP", CompressionJPEGXL: "JPEG XL", CompressionJPEG2000: "JPEG 2000",
	33003: "JPEG 2000", 33004: "JPEG 2000", 33005: "JPEG 2000", CompressionPNG: "PNG", CompressionJPEGXR: "JPEG XR",
	32809: "ThunderScan", 32766: "NeXT", 34676: "SGI LogLuv", 34677: "SGI LogL", 34661: "JBIG", 32908: "Pixar",
}

// File is an opened TIFF: its byte order, its kind and its pages, the
// directories of the main chain in file order.
type File struct {
	r     io.ReaderAt
	size  int64
	Order binary.ByteOrder
	Big   bool // BigTIFF
	Pages []*Page
}

// entry is one directory entry, its value not yet read when it does not
// fit in the entry.
type entry struct {
	typ    uint16
	count  uint64
	inline []byte // the value field (4 or 8 bytes)
}

// typeSize is the byte size of one value of a TIFF field type (TIFF 6.0
// section 2; LONG8, SLONG8 and IFD8 from BigTIFF); 0 for unknown types.
func typeSize(t uint16) int {
	switch t {
	case 1, 2, 6, 7:
		return 1
	case 3, 8:
		return 2
	case 4, 9, 11, 13:
		return 4
	case 5, 10, 12, 16, 17, 18:
		return 8
	}
	return 0
}

// Open reads the header of the size bytes of r and the chain of image
// file directories (at most MaxPages). Only directories and the small
// values they point to are read; the strip and tile tables of each page
// are read when the page is decoded. Reduced-resolution images (bit 0 of
// NewSubfileType, the thumbnails some writers put in the main chain) are
// not pages.
func Open(r io.ReaderAt, size int64) (*File, error) {
	var hdr [16]byte
	if size < 8 {
		return nil, FormatError("file shorter than the 8-byte header")
	}
	n := min(size, 16)
	if _, err := r.ReadAt(hdr[:n], 0); err != nil && err != io.EOF {
		return nil, err
	}
	f := &File{r: r, size: size}
	switch string(hdr[:2]) {
	case "II":
		f.Order = binary.LittleEndian
	case "MM":
		f.Order = binary.BigEndian
	default:
		return nil, FormatError("no byte order mark (II or MM)")
	}
	var off uint64
	switch f.Order.Uint16(hdr[2:]) {
	case 42:
		off = uint64(f.Order.Uint32(hdr[4:]))
	case 43:
		if size < 16 {
			return nil, FormatError("BigTIFF file shorter than its 16-byte header")
		}
		if f.Order.Uint16(hdr[4:]) != 8 || f.Order.Uint16(hdr[6:]) != 0 {
			return nil, FormatError("BigTIFF header with an offset size other than 8")
		}
		f.Big = true
		off = f.Order.Uint64(hdr[8:])
	default:
		return nil, FormatError("version is neither 42 (TIFF) nor 43 (BigTIFF)")
	}
	seen := map[uint64]bool{}
	for off != 0 && len(f.Pages) < MaxPages {
		if seen[off] {
			break // a chain that loops ends where it loops
		}
		seen[off] = true
		p, next, err := f.readIFD(off)
		if err != nil {
			if len(f.Pages) == 0 {
				return nil, err
			}
			break // a damaged later directory ends the chain; the pages before it stand
		}
		if p.NewSubfileType&1 == 0 {
			p.Index = len(f.Pages)
			f.Pages = append(f.Pages, p)
		}
		off = next
	}
	if len(f.Pages) == 0 {
		return nil, FormatError("no full-resolution image directory")
	}
	return f, nil
}

// readIFD reads the directory at off and returns its page and the offset
// of the next directory.
func (f *File) readIFD(off uint64) (*Page, uint64, error) {
	cntSize, entSize, nextSize := uint64(2), uint64(12), uint64(4)
	if f.Big {
		cntSize, entSize, nextSize = 8, 20, 8
	}
	if off < 8 || off+cntSize > uint64(f.size) {
		return nil, 0, FormatError(fmt.Sprintf("directory offset %d outside the file", off))
	}
	buf := make([]byte, cntSize)
	if _, err := f.r.ReadAt(buf, int64(off)); err != nil {
		return nil, 0, err
	}
	var n uint64
	if f.Big {
		n = f.Order.Uint64(buf)
	} else {
		n = uint64(f.Order.Uint16(buf))
	}
	if n == 0 || n > maxEntries {
		return nil, 0, FormatError(fmt.Sprintf("directory at %d has %d entries", off, n))
	}
	end := off + cntSize + n*entSize + nextSize
	if end > uint64(f.size) {
		return nil, 0, FormatError(fmt.Sprintf("directory at %d runs past the end of the file", off))
	}
	tab := make([]byte, n*entSize+nextSize)
	if _, err := f.r.ReadAt(tab, int64(off+cntSize)); err != nil && err != io.EOF {
		return nil, 0, err
	}
	entries := make(map[uint16]entry, n)
	for k := uint64(0); k < n; k++ {
		e := tab[k*entSize : (k+1)*entSize]
		tag := f.Order.Uint16(e)
		en := entry{typ: f.Order.Uint16(e[2:])}
		if f.Big {
			en.count = f.Order.Uint64(e[4:])
			en.inline = e[12:20]
		} else {
			en.count = uint64(f.Order.Uint32(e[4:]))
			en.inline = e[8:12]
		}
		entries[tag] = en
	}
	var next uint64
	if f.Big {
		next = f.Order.Uint64(tab[n*entSize:])
	} else {
		next = uint64(f.Order.Uint32(tab[n*entSize:]))
	}
	p, err := f.newPage(entries)
	if err != nil {
		return nil, 0, err
	}
	return p, next, nil
}

// raw returns the bytes of an entry's value, read from the file when they
// do not fit in the entry.
func (f *File) raw(e entry) ([]byte, error) {
	sz := typeSize(e.typ)
	if sz == 0 {
		return nil, FormatError(fmt.Sprintf("field type %d unknown", e.typ))
	}
	if e.count > maxArrayBytes/uint64(sz) {
		return nil, FormatError(fmt.Sprintf("a field of %d values is larger than any image needs", e.count))
	}
	nb := e.count * uint64(sz)
	if nb <= uint64(len(e.inline)) {
		return e.inline[:nb], nil
	}
	var off uint64
	if f.Big {
		off = f.Order.Uint64(e.inline)
	} else {
		off = uint64(f.Order.Uint32(e.inline))
	}
	if off > uint64(f.size) || nb > uint64(f.size)-off {
		return nil, FormatError(fmt.Sprintf("a field value at %d (%d bytes) lies past the end of the file", off, nb))
	}
	b := make([]byte, nb)
	if _, err := f.r.ReadAt(b, int64(off)); err != nil && err != io.EOF {
		return nil, err
	}
	return b, nil
}

// uints reads an entry of an unsigned integer type as uint64 values.
func (f *File) uints(e entry) ([]uint64, error) {
	b, err := f.raw(e)
	if err != nil {
		return nil, err
	}
	return f.decodeUints(e, b)
}

// uintsN reads the first n values of an entry (n at most its count).
func (f *File) uintsN(e entry, n int) ([]uint64, error) {
	e.count = min(e.count, uint64(n))
	return f.uints(e)
}

// SetReader makes the file read through r from now on: Open reads the
// directories through a reader that bounds what a header may cost, and
// the pixel data is read through another (one that stops when a context
// is done).
func (f *File) SetReader(r io.ReaderAt) { f.r = r }

func (f *File) decodeUints(e entry, b []byte) ([]uint64, error) {
	var err error
	if err != nil {
		return nil, err
	}
	v := make([]uint64, e.count)
	for i := range v {
		switch e.typ {
		case 1, 7:
			v[i] = uint64(b[i])
		case 3:
			v[i] = uint64(f.Order.Uint16(b[2*i:]))
		case 4, 13:
			v[i] = uint64(f.Order.Uint32(b[4*i:]))
		case 16, 18:
			v[i] = f.Order.Uint64(b[8*i:])
		default:
			return nil, FormatError(fmt.Sprintf("an integer field has type %d", e.typ))
		}
	}
	return v, nil
}

// rational reads the first value of a RATIONAL (or FLOAT, DOUBLE) entry.
func (f *File) rational(e entry) (float64, error) {
	if e.count < 1 {
		return 0, FormatError("empty rational field")
	}
	b, err := f.raw(entry{typ: e.typ, count: 1, inline: e.inline})
	if err != nil {
		return 0, err
	}
	switch e.typ {
	case 5:
		num, den := f.Order.Uint32(b), f.Order.Uint32(b[4:])
		if den == 0 {
			return 0, nil
		}
		return float64(num) / float64(den), nil
	case 10:
		num, den := int32(f.Order.Uint32(b)), int32(f.Order.Uint32(b[4:]))
		if den == 0 {
			return 0, nil
		}
		return float64(num) / float64(den), nil
	case 11:
		return float64(math.Float32frombits(f.Order.Uint32(b))), nil
	case 12:
		return math.Float64frombits(f.Order.Uint64(b)), nil
	}
	v, err := f.uints(entry{typ: e.typ, count: 1, inline: e.inline})
	if err != nil {
		return 0, err
	}
	return float64(v[0]), nil
}
