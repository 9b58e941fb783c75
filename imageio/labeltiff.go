package imageio

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Label map formats: the names the command's labels-format choice takes.
const (
	LabelsPNG  = "png"
	LabelsTIFF = "tiff"
)

// MaxPNGLabel is the largest label a 16-bit gray PNG sample holds (PNG
// specification, 11.2.2: sample depth 16).
const MaxPNGLabel = 65535

// LabelBits is the sample width, 16 or 32 bits, that a TIFF label map
// needs: 16 when every label fits in 0..65535, else 32 (unsigned).
func LabelBits(m labelmap.Map) int {
	for _, l := range m.Pix {
		if l > MaxPNGLabel {
			return 32
		}
	}
	return 16
}

// TIFF resolution units (TIFF 6.0, tag 296 ResolutionUnit).
const (
	ResolutionNone = 1 // no absolute unit
	ResolutionInch = 2
	ResolutionCM   = 3
)

// Resolution is what the TIFF 6.0 tags XResolution and YResolution (282,
// 283: "the number of pixels per ResolutionUnit", RATIONAL) and
// ResolutionUnit (296) hold for a label map with square pixels. The zero
// value means no resolution tags.
type Resolution struct {
	Num, Den uint32 // pixels per unit = Num / Den
	Unit     int    // ResolutionInch or ResolutionCM
}

// PerUnit is the pixels per unit the rational stands for.
func (r Resolution) PerUnit() float64 { return float64(r.Num) / float64(r.Den) }

// Set reports whether r carries a resolution.
func (r Resolution) Set() bool { return r.Num > 0 && r.Den > 0 && r.Unit != 0 }

// unitsInCM are the length units whose size in centimetres is known,
// under the names a user is likely to type (micrometre with the micro sign
// U+00B5 or the Greek mu U+03BC).
var unitsInCM = map[string]float64{
	"nm": 1e-7, "nanometer": 1e-7, "nanometre": 1e-7, "nanometers": 1e-7, "nanometres": 1e-7,
	"um": 1e-4, "µm": 1e-4, "μm": 1e-4, "micron": 1e-4, "microns": 1e-4, "micrometer": 1e-4, "micrometre": 1e-4, "micrometers": 1e-4, "micrometres": 1e-4,
	"mm": 0.1, "millimeter": 0.1, "millimetre": 0.1, "millimeters": 0.1, "millimetres": 0.1,
	"cm": 1, "centimeter": 1, "centimetre": 1, "centimeters": 1, "centimetres": 1,
	"m": 100, "meter": 100, "metre": 100, "meters": 100, "metres": 100,
}

// ResolutionFor turns a pixel size (the length of one pixel side in unit)
// into TIFF resolution tags. TIFF 6.0 knows two absolute units, the inch
// and the centimetre: a pixel size in inches ("in", "inch", "inches") is
// written per inch, and one in a metric length (nm, µm, mm, cm, m, and
// their spelled-out names) is converted to centimetres and written per
// centimetre, so that every TIFF reader gets the physical size. Any other
// unit (pixels, arbitrary units, a unit cleave does not know) cannot be
// expressed: ResolutionUnit 1 ("no absolute unit") would keep the number
// but lose what it measures, so no resolution is written and the reason
// is returned instead. A pixel size of 0 means unknown (no reason given).
// The rational is the closest fraction with 32-bit numerator and
// denominator (continued-fraction convergents); a pixel size whose pixels
// per unit fall outside what such a fraction holds (about 2.3e-10 to
// 4.3e9) is refused with a reason too.
func ResolutionFor(pixelSize float64, unit string) (Resolution, string) {
	if pixelSize == 0 {
		return Resolution{}, ""
	}
	if !(pixelSize > 0) || math.IsInf(pixelSize, 0) {
		return Resolution{}, fmt.Sprintf("pixel size %v is not a positive number", pixelSize)
	}
	var perUnit float64
	var ru int
	u := strings.TrimSpace(unit)
	lu := strings.ToLower(u)
	cm, metric := unitsInCM[u]
	if !metric && len(lu) > 2 { // spelled-out names in any case; symbols as written
		cm, metric = unitsInCM[lu]
	}
	switch {
	case lu == "in" || lu == "inch" || lu == "inches":
		perUnit, ru = 1/pixelSize, ResolutionInch
	case metric:
		perUnit, ru = 1/(pixelSize*cm), ResolutionCM
	default:
		return Resolution{}, fmt.Sprintf("unit %q is not a length TIFF resolution tags can express (they take inches or centimetres; cleave converts nm, µm, mm, cm and m)", unit)
	}
	num, den, ok := Rational(perUnit)
	if !ok {
		return Resolution{}, fmt.Sprintf("%g pixels per %s does not fit a TIFF rational (32-bit numerator and denominator)", perUnit, map[int]string{ResolutionInch: "inch", ResolutionCM: "centimetre"}[ru])
	}
	return Resolution{Num: num, Den: den, Unit: ru}, ""
}

// Rational returns the fraction num/den closest to x > 0 with both terms
// at most 2^32 - 1: the last convergent of x's continued fraction within
// that bound, or the semiconvergent between it and the next when that is
// closer (every best rational approximation is one of these; Khinchin,
// Continued Fractions, 1964, theorems 15 and 16). ok is false when x is not
// finite and positive or lies outside [1/(2^32-1), 2^32-1] by more than
// half the smallest step.
func Rational(x float64) (num, den uint32, ok bool) {
	const limit = math.MaxUint32
	if !(x > 0) || math.IsInf(x, 0) || x > limit+0.5 || x < 0.5/limit {
		return 0, 0, false
	}
	// Convergents h/k of x = [a0; a1, a2, ...]: h(n) = a(n) h(n-1) + h(n-2).
	h0, h1 := 0.0, 1.0 // h(-2), h(-1)
	k0, k1 := 1.0, 0.0 // k(-2), k(-1)
	bestH, bestK := 0.0, 0.0
	r := x
	for range 64 {
		a := math.Floor(r)
		h2, k2 := a*h1+h0, a*k1+k0
		if h2 > limit || k2 > limit {
			// The largest semiconvergent (t h1 + h0)/(t k1 + k0) within
			// the bound may be closer than the last convergent.
			t := a
			if h1 > 0 {
				t = min(t, math.Floor((limit-h0)/h1))
			}
			if k1 > 0 {
				t = min(t, math.Floor((limit-k0)/k1))
			}
			if t >= 1 {
				sh, sk := t*h1+h0, t*k1+k0
				if bestK == 0 || math.Abs(sh/sk-x) < math.Abs(bestH/bestK-x) {
					bestH, bestK = sh, sk
				}
			}
			break
		}
		h0, h1, k0, k1 = h1, h2, k1, k2
		bestH, bestK = h2, k2
		f := r - a
		if f <= 0 || math.Abs(h2/k2-x) == 0 {
			break
		}
		r = 1 / f
	}
	if bestH < 1 || bestK < 1 {
		if x < 1 {
			return 1, limit, true
		}
		return limit, 1, true
	}
	return uint32(bestH), uint32(bestK), true
}

// TIFF tags written (TIFF 6.0, section 8, baseline; SampleFormat from
// section 19).
const (
	tagImageWidth      = 256
	tagImageLength     = 257
	tagBitsPerSample   = 258
	tagCompression     = 259
	tagPhotometric     = 262
	tagStripOffsets    = 273
	tagSamplesPerPixel = 277
	tagRowsPerStrip    = 278
	tagStripByteCounts = 279
	tagXResolution     = 282
	tagYResolution     = 283
	tagPlanarConfig    = 284
	tagResolutionUnit  = 296
	tagSoftware        = 305
	tagSampleFormat    = 339
)

// TIFF field types (TIFF 6.0, section 2).
const (
	typeASCII    = 2
	typeShort    = 3
	typeLong     = 4
	typeRational = 5
)

// compressionDeflate is the Deflate (zlib) compression of the TIFF
// specification supplement 2 (code 8), which every current TIFF reader
// decodes.
const compressionDeflate = 8

// labelStripBytes is the uncompressed size of one strip, about 256 KiB: a
// strip is the unit a reader decompresses at once.
const labelStripBytes = 256 << 10

// EncodeLabelsTIFF writes a label map as a single-page, little-endian baseline TIFF 6.0 gray image: unsigned
// integer samples (SampleFormat 1) of 16 bits, or 32 bits when a label is
// above 65535 (LabelBits), BlackIsZero, Deflate-compressed strips, and,
// when res is set, XResolution, YResolution and ResolutionUnit. Every
// reader of baseline TIFF with the Deflate supplement gets the labels
// back exactly. A negative label, or a file that would pass 4 GiB (the
// 32-bit offsets of classic TIFF), is an error. It returns the bits per
// sample written.
func EncodeLabelsTIFF(w io.Writer, m labelmap.Map, res Resolution) (int, error) {
	if err := m.Check(); err != nil {
		return 0, err
	}
	labels, width, height := m.Pix, m.Width, m.Height
	if width > math.MaxUint32 || height > math.MaxUint32 {
		return 0, fmt.Errorf("label map: %dx%d is too large for TIFF", width, height)
	}
	for i, l := range labels {
		if l < 0 {
			return 0, fmt.Errorf("label map: label %d at pixel (%d, %d) is negative (TIFF labels are unsigned)", l, i%width, i/width)
		}
	}
	bits := LabelBits(m)
	bps := bits / 8
	rowBytes := width * bps
	rowsPerStrip := max(1, min(height, labelStripBytes/rowBytes))
	strips := (height + rowsPerStrip - 1) / rowsPerStrip

	// The strips are compressed first: their sizes go into the IFD, which
	// precedes them.
	var data bytes.Buffer
	offsets := make([]uint64, strips)
	counts := make([]uint64, strips)
	row := make([]byte, rowBytes)
	zw, _ := zlib.NewWriterLevel(&data, zlib.BestSpeed)
	for s := 0; s < strips; s++ {
		start := data.Len()
		zw.Reset(&data)
		for y := s * rowsPerStrip; y < min(height, (s+1)*rowsPerStrip); y++ {
			line := labels[y*width : (y+1)*width]
			if bits == 16 {
				for x, l := range line {
					binary.LittleEndian.PutUint16(row[2*x:], uint16(l))
				}
			} else {
				for x, l := range line {
					binary.LittleEndian.PutUint32(row[4*x:], uint32(l))
				}
			}
			if _, err := zw.Write(row); err != nil {
				return 0, err
			}
		}
		if err := zw.Close(); err != nil {
			return 0, err
		}
		offsets[s], counts[s] = uint64(start), uint64(data.Len()-start)
	}

	type entry struct {
		tag, typ uint16
		count    uint32
		values   []uint32 // SHORT, LONG; RATIONAL as num, den pairs
		text     string   // ASCII, NUL added
	}
	software := "cleave label map"
	entries := []entry{
		{tag: tagImageWidth, typ: typeLong, count: 1, values: []uint32{uint32(width)}},
		{tag: tagImageLength, typ: typeLong, count: 1, values: []uint32{uint32(height)}},
		{tag: tagBitsPerSample, typ: typeShort, count: 1, values: []uint32{uint32(bits)}},
		{tag: tagCompression, typ: typeShort, count: 1, values: []uint32{compressionDeflate}},
		{tag: tagPhotometric, typ: typeShort, count: 1, values: []uint32{1}}, // BlackIsZero
		{tag: tagStripOffsets, typ: typeLong, count: uint32(strips)},
		{tag: tagSamplesPerPixel, typ: typeShort, count: 1, values: []uint32{1}},
		{tag: tagRowsPerStrip, typ: typeLong, count: 1, values: []uint32{uint32(rowsPerStrip)}},
		{tag: tagStripByteCounts, typ: typeLong, count: uint32(strips)},
	}
	if res.Set() {
		entries = append(entries,
			entry{tag: tagXResolution, typ: typeRational, count: 1, values: []uint32{res.Num, res.Den}},
			entry{tag: tagYResolution, typ: typeRational, count: 1, values: []uint32{res.Num, res.Den}})
	}
	entries = append(entries, entry{tag: tagPlanarConfig, typ: typeShort, count: 1, values: []uint32{1}})
	if res.Set() {
		entries = append(entries, entry{tag: tagResolutionUnit, typ: typeShort, count: 1, values: []uint32{uint32(res.Unit)}})
	}
	entries = append(entries,
		entry{tag: tagSoftware, typ: typeASCII, count: uint32(len(software) + 1), text: software},
		entry{tag: tagSampleFormat, typ: typeShort, count: 1, values: []uint32{1}}) // unsigned integer

	// Layout: header (8 bytes), the IFD (2 + 12 n + 4 bytes), the values
	// too long for an entry (each at an even offset, TIFF 6.0 section 2),
	// then the strips.
	ifdSize := 2 + 12*len(entries) + 4
	extra := 8 + ifdSize
	size := func(e entry) int {
		switch e.typ {
		case typeASCII:
			return int(e.count)
		case typeShort:
			return 2 * int(e.count)
		case typeRational:
			return 8 * int(e.count)
		}
		return 4 * int(e.count)
	}
	extraOff := make([]int, len(entries))
	for k, e := range entries {
		if n := size(e); n > 4 {
			extraOff[k] = extra
			extra += n + n%2
		}
	}
	dataStart := uint64(extra)
	total := dataStart + uint64(data.Len())
	if total > math.MaxUint32 {
		return 0, fmt.Errorf("label map: the TIFF would be %d bytes, above the 4 GiB that classic TIFF addresses", total)
	}
	for k := range entries {
		switch entries[k].tag {
		case tagStripOffsets:
			for _, o := range offsets {
				entries[k].values = append(entries[k].values, uint32(dataStart+o))
			}
		case tagStripByteCounts:
			for _, c := range counts {
				entries[k].values = append(entries[k].values, uint32(c))
			}
		}
	}

	le := binary.LittleEndian
	head := make([]byte, extra)
	copy(head, "II")
	le.PutUint16(head[2:], 42)
	le.PutUint32(head[4:], 8)
	p := 8
	le.PutUint16(head[p:], uint16(len(entries)))
	p += 2
	put := func(b []byte, e entry) {
		switch e.typ {
		case typeASCII:
			copy(b, e.text)
		case typeShort:
			for i, v := range e.values {
				le.PutUint16(b[2*i:], uint16(v))
			}
		default: // LONG, RATIONAL
			for i, v := range e.values {
				le.PutUint32(b[4*i:], v)
			}
		}
	}
	for k, e := range entries {
		le.PutUint16(head[p:], e.tag)
		le.PutUint16(head[p+2:], e.typ)
		le.PutUint32(head[p+4:], e.count)
		if size(e) <= 4 {
			put(head[p+8:p+12], e)
		} else {
			le.PutUint32(head[p+8:], uint32(extraOff[k]))
			put(head[extraOff[k]:], e)
		}
		p += 12
	}
	le.PutUint32(head[p:], 0) // no next IFD
	if _, err := w.Write(head); err != nil {
		return 0, err
	}
	if _, err := data.WriteTo(w); err != nil {
		return 0, err
	}
	return bits, nil
}
