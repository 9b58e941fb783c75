package tiffread

import (
	"fmt"
	"strings"
)

// Page is one full-resolution image of a TIFF file, as its directory
// describes it.
type Page struct {
	f               *File
	entries         map[uint16]entry
	Index           int // position among the file's pages, from 0
	NewSubfileType  uint64
	Width, Height   int
	SamplesPerPixel int
	// BitsPerSample is the size of every sample (all samples of a pixel
	// must have the same size here); SampleFormat is 1 (unsigned), 2
	// (signed) or 3 (IEEE float), TIFF 6.0 section 19.
	BitsPerSample int
	SampleFormat  int
	Compression   int
	Photometric   int
	Planar        int // 1 contiguous (RGBRGB), 2 separate planes (RR GG BB)
	Predictor     int
	ExtraSamples  []uint64
	Tiled         bool
	// ChunkWidth and ChunkHeight are the tile size, or the image width
	// and RowsPerStrip (at most the height) for strips.
	ChunkWidth, ChunkHeight int
	// Description is the ImageDescription (tag 270), without its
	// terminating NUL; read for the first page only.
	Description string
	// XResolution, YResolution are pixels per ResolutionUnit (1 none, 2
	// inch, 3 centimetre; TIFF 6.0 section 8); 0 when absent.
	XResolution, YResolution float64
	ResolutionUnit           int
	// reason, when not empty, says why ReadSample cannot read the page
	// (the feature, for an UnsupportedError).
	reason string
}

// newPage reads the fields of a directory that describe the image and
// checks them. The strip or tile tables stay unread.
func (f *File) newPage(es map[uint16]entry) (*Page, error) {
	p := &Page{f: f, entries: es, SamplesPerPixel: 1, BitsPerSample: 1, SampleFormat: 1, Compression: 1,
		Planar: 1, Predictor: 1, Photometric: -1, ResolutionUnit: 2}
	one := func(tag uint16, dst *int) error {
		e, ok := es[tag]
		if !ok {
			return nil
		}
		v, err := f.uints(e)
		if err != nil {
			return err
		}
		if len(v) == 0 || v[0] > 1<<31 {
			return FormatError(fmt.Sprintf("tag %d has no usable value", tag))
		}
		*dst = int(v[0])
		return nil
	}
	// A field whose values must all be equal (one per sample).
	same := func(tag uint16, dst *int, what string) error {
		e, ok := es[tag]
		if !ok {
			return nil
		}
		v, err := f.uints(e)
		if err != nil {
			return err
		}
		if len(v) == 0 {
			return FormatError(what + " has no value")
		}
		for _, x := range v[1:] {
			if x != v[0] {
				p.reason = fmt.Sprintf("samples of different %s (%v)", what, v)
			}
		}
		if v[0] > 1<<16 {
			return FormatError(fmt.Sprintf("%s %d", what, v[0]))
		}
		*dst = int(v[0])
		return nil
	}
	var sub int
	for _, s := range []struct {
		tag uint16
		dst *int
	}{{tImageWidth, &p.Width}, {tImageLength, &p.Height}, {tSamplesPerPixel, &p.SamplesPerPixel},
		{tCompression, &p.Compression}, {tPhotometric, &p.Photometric}, {tPlanarConfig, &p.Planar},
		{tPredictor, &p.Predictor}, {tResolutionUnit, &p.ResolutionUnit}, {tNewSubfileType, &sub}} {
		if err := one(s.tag, s.dst); err != nil {
			return nil, err
		}
	}
	p.NewSubfileType = uint64(sub)
	if err := same(tBitsPerSample, &p.BitsPerSample, "bits per sample"); err != nil {
		return nil, err
	}
	if err := same(tSampleFormat, &p.SampleFormat, "sample formats"); err != nil {
		return nil, err
	}
	if p.Width <= 0 || p.Height <= 0 {
		return nil, FormatError(fmt.Sprintf("image size %dx%d", p.Width, p.Height))
	}
	if p.SamplesPerPixel < 1 || p.SamplesPerPixel > 1024 {
		return nil, FormatError(fmt.Sprintf("%d samples per pixel", p.SamplesPerPixel))
	}
	if e, ok := es[tExtraSamples]; ok {
		v, err := f.uints(e)
		if err != nil {
			return nil, err
		}
		p.ExtraSamples = v
	}
	if p.Photometric < 0 {
		// Absent: TIFF 6.0 requires it; read as MinIsBlack, as libtiff
		// and tifffile do for gray data.
		p.Photometric = photometricMinIsBlack
		if p.SamplesPerPixel-len(p.ExtraSamples) == 3 {
			p.Photometric = photometricRGB
		}
	}
	for _, t := range []uint16{tXResolution, tYResolution} {
		e, ok := es[t]
		if !ok {
			continue
		}
		v, err := f.rational(e)
		if err != nil {
			return nil, err
		}
		if t == tXResolution {
			p.XResolution = v
		} else {
			p.YResolution = v
		}
	}
	if e, ok := es[tTileWidth]; ok {
		p.Tiled = true
		if err := one(tTileWidth, &p.ChunkWidth); err != nil {
			return nil, err
		}
		if err := one(tTileLength, &p.ChunkHeight); err != nil {
			return nil, err
		}
		_ = e
		if p.ChunkWidth <= 0 || p.ChunkHeight <= 0 || p.ChunkWidth > 1<<16 || p.ChunkHeight > 1<<16 {
			return nil, FormatError(fmt.Sprintf("tile size %dx%d", p.ChunkWidth, p.ChunkHeight))
		}
	} else {
		rps := p.Height
		if e, ok := es[tRowsPerStrip]; ok {
			v, err := f.uints(e)
			if err != nil {
				return nil, err
			}
			if len(v) > 0 && v[0] > 0 && v[0] < uint64(p.Height) {
				rps = int(v[0])
			}
		}
		p.ChunkWidth, p.ChunkHeight = p.Width, rps
	}
	// A strip or tile is decompressed whole: one far larger than the
	// image (a hostile tile size) is refused before its buffer exists.
	// Real tiles on small images (512 x 512 on a thumbnail) stay well
	// below 16 MiB over the image.
	bps := int64(max(p.BitsPerSample, 8) / 8)
	if plane := int64(p.Width) * int64(p.Height) * int64(p.SamplesPerPixel) * bps; p.ChunkBytes() > 2*plane+16<<20 {
		return nil, FormatError(fmt.Sprintf("strip or tile of %dx%d pixels for a %dx%d image", p.ChunkWidth, p.ChunkHeight, p.Width, p.Height))
	}
	p.reason = p.unsupported()
	return p, nil
}

// unsupported names what ReadSample cannot read, or returns "".
func (p *Page) unsupported() string {
	if p.reason != "" {
		return p.reason
	}
	if _, ok := p.entries[tImageDepth]; ok {
		return "volume tiles (ImageDepth)"
	}
	switch p.Compression {
	case CompressionNone, CompressionLZW, CompressionDeflate, CompressionOldDeflate, CompressionDeflateAlt,
		CompressionPackBits, CompressionZstd, CompressionZstdAlt:
	case CompressionJPEG:
		if p.BitsPerSample != 8 || p.SampleFormat != sampleFormatUint {
			return fmt.Sprintf("JPEG compression of %d-bit samples", p.BitsPerSample)
		}
		if !(p.Photometric == photometricMinIsBlack && p.SamplesPerPixel == 1 || p.Photometric == photometricYCbCr && p.SamplesPerPixel == 3) {
			return "JPEG compression other than of gray or YCbCr pixels"
		}
		if p.Planar != 1 {
			return "JPEG compression of separate planes"
		}
	default:
		if name, ok := compressionNames[p.Compression]; ok {
			return name + " compression"
		}
		return fmt.Sprintf("compression %d", p.Compression)
	}
	if p.Photometric == photometricYCbCr && p.Compression != CompressionJPEG {
		return "YCbCr pixels without JPEG compression"
	}
	switch p.Photometric {
	case photometricMinIsWhite, photometricMinIsBlack, photometricRGB, photometricYCbCr:
	case photometricPalette:
		return "palette colour (PhotometricInterpretation 3)"
	default:
		if name, ok := photometricNames[p.Photometric]; ok {
			return fmt.Sprintf("%s pixels (PhotometricInterpretation %d)", name, p.Photometric)
		}
		return fmt.Sprintf("PhotometricInterpretation %d", p.Photometric)
	}
	switch p.SampleFormat {
	case sampleFormatUint, sampleFormatInt, sampleFormatUndefined:
		switch p.BitsPerSample {
		case 8, 16, 32, 64:
		default:
			return fmt.Sprintf("%d-bit integer samples", p.BitsPerSample)
		}
	case sampleFormatFloat:
		switch p.BitsPerSample {
		case 16, 32, 64:
		default:
			return fmt.Sprintf("%d-bit floating-point samples", p.BitsPerSample)
		}
	case sampleFormatComplexInt:
		return fmt.Sprintf("complex integer samples (SampleFormat 5, %d bits)", p.BitsPerSample)
	case sampleFormatComplexFloat:
		return fmt.Sprintf("complex floating-point samples (SampleFormat 6, %d bits)", p.BitsPerSample)
	default:
		return fmt.Sprintf("sample format %d", p.SampleFormat)
	}
	switch p.Predictor {
	case predictorNone:
	case predictorHorizontal:
		if p.SampleFormat == sampleFormatFloat {
			return "the horizontal predictor on floating-point samples"
		}
	case predictorFloatingPoint:
		if p.SampleFormat != sampleFormatFloat {
			return "the floating-point predictor on integer samples"
		}
	default:
		return fmt.Sprintf("predictor %d", p.Predictor)
	}
	if p.Planar != 1 && p.Planar != 2 {
		return fmt.Sprintf("PlanarConfiguration %d", p.Planar)
	}
	if e, ok := p.entries[tFillOrder]; ok {
		if v, err := p.f.uints(e); err == nil && len(v) > 0 && v[0] == 2 {
			return "reversed bit order (FillOrder 2)"
		}
	}
	return ""
}

// Unsupported returns an UnsupportedError naming what ReadSample cannot
// read on this page, or nil.
func (p *Page) Unsupported() error {
	if p.reason == "" {
		return nil
	}
	return UnsupportedError(p.reason)
}

// IsRGB reports colour pixels: PhotometricInterpretation RGB or YCbCr
// with at least three samples (the first three are red, green and blue
// as read; YCbCr is converted by the JPEG decoder).
func (p *Page) IsRGB() bool {
	return (p.Photometric == photometricRGB || p.Photometric == photometricYCbCr) && p.SamplesPerPixel >= 3
}

// IsFloat reports IEEE floating-point samples.
func (p *Page) IsFloat() bool { return p.SampleFormat == sampleFormatFloat }

// IsSigned reports two's complement integer samples.
func (p *Page) IsSigned() bool { return p.SampleFormat == sampleFormatInt }

// ReadDescription reads the page's ImageDescription (tag 270) and sets
// Description; a missing tag leaves it empty.
func (p *Page) ReadDescription() error {
	e, ok := p.entries[tImageDescription]
	if !ok {
		return nil
	}
	if e.typ != 2 && e.typ != 1 && e.typ != 7 {
		return nil
	}
	b, err := p.f.raw(e)
	if err != nil {
		return err
	}
	p.Description = strings.TrimRight(string(b), "\x00")
	return nil
}

// HasTag reports whether the page's directory has the tag.
func (p *Page) HasTag(tag uint16) bool {
	_, ok := p.entries[tag]
	return ok
}

// chunks returns the number of strips or tiles across and down one
// sample plane.
func (p *Page) chunks() (across, down int) {
	across = (p.Width + p.ChunkWidth - 1) / p.ChunkWidth
	down = (p.Height + p.ChunkHeight - 1) / p.ChunkHeight
	return
}

// SameLayout reports whether q has the size and sample type of p, so
// that planes of the two pages can be combined.
func (p *Page) SameLayout(q *Page) bool {
	return p.Width == q.Width && p.Height == q.Height && p.SamplesPerPixel == q.SamplesPerPixel &&
		p.BitsPerSample == q.BitsPerSample && p.SampleFormat == q.SampleFormat && p.Photometric == q.Photometric
}

// photometricNames names the PhotometricInterpretation values that
// ReadSample does not read, for the message that refuses them: TIFF 6.0
// section 8 and part 2 (4 transparency mask, 5 separated, 8 CIE L*a*b*),
// the TIFF technical notes and the DNG specification (9 and 10, the ICC
// and ITU L*a*b* encodings; 32803 colour filter array; 32844 and 32845
// the LogL and LogLuv encodings; 34892 linear raw). The values are from
// those texts as remembered, not checked against a copy here.
var photometricNames = map[int]string{
	4:     "transparency mask",
	5:     "CMYK (separated) colour",
	8:     "CIE L*a*b* colour",
	9:     "ICC L*a*b* colour",
	10:    "ITU L*a*b* colour",
	32803: "raw colour filter array",
	32844: "LogL",
	32845: "LogLuv",
	34892: "linear raw",
}
