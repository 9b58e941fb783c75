package imageio

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/gif"
	"image/jpeg"
	"image/png"
	"io"
	"strings"

	"golang.org/x/image/bmp"
	"golang.org/x/image/tiff"
	"golang.org/x/image/webp"
)

// DefaultMaxMegapixels is the size limit used when LoadOptions.MaxMegapixels
// is zero.
const DefaultMaxMegapixels = 100

// MinMaxMegapixels and MaxMaxMegapixels bound LoadOptions.MaxMegapixels:
// at least one pixel, and at most 2000 megapixels, below 2^31 pixels, so
// that every pixel index and label of an accepted image fits 32 bits.
const (
	MinMaxMegapixels = 1e-6
	MaxMaxMegapixels = 2000
)

// LoadOptions controls decoding.
type LoadOptions struct {
	// MaxMegapixels refuses images with more than this many million pixels,
	// judged from the header before any pixel memory is allocated.
	// 0 means DefaultMaxMegapixels; a value outside MinMaxMegapixels..
	// MaxMaxMegapixels is an error.
	MaxMegapixels float64
}

// ErrUnknownFormat is returned (wrapped) for data that is none of the
// supported formats.
var ErrUnknownFormat = errors.New("not a PNG, TIFF, JPEG, BMP, GIF or WebP image")

// ErrUnsupported is returned (wrapped, with the feature named) for a
// variant of a known format that cleave does not read: TIFF with a
// compression, sample type or colour model outside those package
// tiffread decodes.
var ErrUnsupported = errors.New("not supported")

// ErrTooLarge is returned (wrapped, with the size) for images above the
// megapixel limit.
var ErrTooLarge = errors.New("image too large")

// Load reads and decodes the image file at path; see Open and Decode.
// Every error names the file.
func Load(path string, opt LoadOptions) (*Image, error) {
	src, err := Open(path, opt)
	if err != nil {
		return nil, err
	}
	defer src.Close()
	return src.Decode()
}

// Decode reads a PNG, TIFF (the first channel, plane and frame; see
// Source.Choose for others), JPEG, BMP, GIF (first frame) or WebP image
// from r. The format is detected from the content, never from a
// name. The header is read first and an image above opt.MaxMegapixels is
// refused before its pixels are allocated.
//
// Samples keep the source's precision: TIFF samples of 8 to 64 bits,
// integer or floating-point, are read by package tiffread; 16-bit PNG
// data (and TIFF that only golang.org/x/image/tiff reads) are read from
// the decoders' 16-bit pixel buffers (image.Gray16, image.RGBA64,
// image.NRGBA64) and never pass through 8 bits. Gray sources (PNG colour
// types 0 and 4, gray TIFF and JPEG, paletted images whose palette is all
// gray) give one channel; the rest give three. A JPEG's EXIF orientation
// (tag 0x0112, values 1..8; CIPA DC-008 Exif 2.32, TIFF 6.0) is applied so
// the result is upright.
func Decode(r io.Reader, opt LoadOptions) (*Image, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, fmt.Errorf("reading image: %w", err)
	}
	return decodeBytes(data, opt)
}

// imageFormat is one supported container with its decoders.
type imageFormat struct {
	name, id string
	config   func(io.Reader) (image.Config, error)
	decode   func(io.Reader) (image.Image, error)
}

var (
	formatPNG  = imageFormat{"PNG", "png", png.DecodeConfig, png.Decode}
	formatTIFF = imageFormat{"TIFF", "tiff", tiff.DecodeConfig, tiff.Decode}
	formatJPEG = imageFormat{"JPEG", "jpeg", jpeg.DecodeConfig, jpeg.Decode}
	formatBMP  = imageFormat{"BMP", "bmp", bmp.DecodeConfig, bmp.Decode}
	formatGIF  = imageFormat{"GIF", "gif", gif.DecodeConfig, gif.Decode}
	formatWebP = imageFormat{"WebP", "webp", webp.DecodeConfig, webp.Decode}
)

// sniff identifies the format from the leading magic bytes (the signatures
// of the PNG, TIFF 6.0, JFIF/JPEG, BMP, GIF87a/89a and RIFF WebP
// specifications).
func sniff(b []byte) (imageFormat, bool) {
	switch {
	case bytes.HasPrefix(b, []byte("\x89PNG\r\n\x1a\n")):
		return formatPNG, true
	case bytes.HasPrefix(b, []byte("II*\x00")), bytes.HasPrefix(b, []byte("MM\x00*")),
		bytes.HasPrefix(b, []byte("II+\x00")), bytes.HasPrefix(b, []byte("MM\x00+")): // TIFF, BigTIFF
		return formatTIFF, true
	case bytes.HasPrefix(b, []byte("\xff\xd8\xff")):
		return formatJPEG, true
	case bytes.HasPrefix(b, []byte("BM")):
		return formatBMP, true
	case bytes.HasPrefix(b, []byte("GIF87a")), bytes.HasPrefix(b, []byte("GIF89a")):
		return formatGIF, true
	case len(b) >= 12 && bytes.HasPrefix(b, []byte("RIFF")) && string(b[8:12]) == "WEBP":
		return formatWebP, true
	}
	return imageFormat{}, false
}

// megapixelLimit resolves the option's default and rejects nonsense.
func megapixelLimit(opt LoadOptions) (float64, error) {
	m := opt.MaxMegapixels
	switch {
	case m == 0:
		return DefaultMaxMegapixels, nil
	case !(m >= MinMaxMegapixels && m <= MaxMaxMegapixels):
		return 0, &OptionError{"max-megapixels", fmt.Sprintf("must be %g (one pixel) to %d megapixels, got %v", MinMaxMegapixels, MaxMaxMegapixels, m)}
	}
	return m, nil
}

// checkSize refuses empty images and images above limit megapixels.
func checkSize(w, h int, limit float64) error {
	if w <= 0 || h <= 0 {
		return fmt.Errorf("image has zero size (%dx%d)", w, h)
	}
	mp := float64(w) * float64(h) / 1e6
	if mp > limit {
		return fmt.Errorf("%w: %dx%d = %.1f megapixels exceeds the limit of %g (max-megapixels)", ErrTooLarge, w, h, mp, limit)
	}
	return nil
}

// describe turns a decoder error into a message that names the format and
// says whether the data ended early.
func describe(f imageFormat, stage string, err error) error {
	msg := err.Error() // some decoders format, rather than wrap, io errors
	if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF) || strings.Contains(msg, "EOF") || strings.Contains(msg, "not enough pixel data") {
		return fmt.Errorf("truncated %s file (%s): %w", f.name, stage, err)
	}
	return fmt.Errorf("corrupt or unsupported %s file (%s): %w", f.name, stage, err)
}

// guarded runs a third-party decoder step, converting a panic into an error
// as a last line of defence against malformed input.
func guarded[T any](fn func() (T, error)) (v T, err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("decoder failed: %v", p)
		}
	}()
	return fn()
}

func decodeBytes(data []byte, opt LoadOptions) (*Image, error) {
	src, err := bytesSource(data, opt)
	if err != nil {
		return nil, err
	}
	if src.tiff != nil {
		return src.tiff.decode(context.Background(), src.r)
	}
	return src.decode(src.r)
}

// fromImage copies img into float32 planes. forceGray says that the source
// is known to be gray (R=G=B), so one channel is kept.
func fromImage(img image.Image, forceGray bool) *Image {
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	n := w * h
	im := &Image{Width: w, Height: h, BitDepth: 8}
	newPlanes := func(c int) {
		im.Channels = c
		im.Planes = make([][]float32, c)
		for i := range im.Planes {
			im.Planes[i] = make([]float32, n)
		}
	}
	// set stores one pixel; a gray image keeps only the first sample.
	set := func(i int, r, g, bl uint32) {
		im.Planes[0][i] = float32(r)
		if im.Channels == 3 {
			im.Planes[1][i] = float32(g)
			im.Planes[2][i] = float32(bl)
		}
	}
	switch m := img.(type) {
	case *image.Gray:
		newPlanes(1)
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+w]
			dst := im.Planes[0][y*w : (y+1)*w]
			for x, v := range row {
				dst[x] = float32(v)
			}
		}
	case *image.Gray16:
		im.BitDepth = 16
		newPlanes(1)
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+2*w]
			dst := im.Planes[0][y*w : (y+1)*w]
			for x := range dst {
				dst[x] = float32(uint32(row[2*x])<<8 | uint32(row[2*x+1]))
			}
		}
	case *image.NRGBA:
		newPlanes(channelsFor(forceGray))
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+4*w]
			for x := 0; x < w; x++ {
				p := row[4*x : 4*x+4]
				if p[3] != 0xff {
					im.HasAlpha = true
				}
				set(y*w+x, uint32(p[0]), uint32(p[1]), uint32(p[2]))
			}
		}
	case *image.NRGBA64:
		im.BitDepth = 16
		newPlanes(channelsFor(forceGray))
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+8*w]
			for x := 0; x < w; x++ {
				p := row[8*x : 8*x+8]
				if p[6] != 0xff || p[7] != 0xff {
					im.HasAlpha = true
				}
				set(y*w+x, be16(p[0:]), be16(p[2:]), be16(p[4:]))
			}
		}
	case *image.RGBA:
		newPlanes(channelsFor(forceGray))
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+4*w]
			for x := 0; x < w; x++ {
				p := row[4*x : 4*x+4]
				if p[3] == 0xff {
					set(y*w+x, uint32(p[0]), uint32(p[1]), uint32(p[2]))
					continue
				}
				im.HasAlpha = true
				c := color.NRGBAModel.Convert(color.RGBA{p[0], p[1], p[2], p[3]}).(color.NRGBA)
				set(y*w+x, uint32(c.R), uint32(c.G), uint32(c.B))
			}
		}
	case *image.RGBA64:
		im.BitDepth = 16
		newPlanes(channelsFor(forceGray))
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+8*w]
			for x := 0; x < w; x++ {
				p := row[8*x : 8*x+8]
				r, g, bl, a := be16(p[0:]), be16(p[2:]), be16(p[4:]), be16(p[6:])
				if a == 0xffff {
					set(y*w+x, r, g, bl)
					continue
				}
				im.HasAlpha = true
				c := color.NRGBA64Model.Convert(color.RGBA64{uint16(r), uint16(g), uint16(bl), uint16(a)}).(color.NRGBA64)
				set(y*w+x, uint32(c.R), uint32(c.G), uint32(c.B))
			}
		}
	case *image.Paletted:
		pal := make([]color.NRGBA, len(m.Palette))
		allGray := true
		for i, c := range m.Palette {
			pal[i] = color.NRGBAModel.Convert(c).(color.NRGBA)
			allGray = allGray && pal[i].R == pal[i].G && pal[i].G == pal[i].B
		}
		newPlanes(channelsFor(forceGray || allGray))
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+w]
			for x, k := range row {
				var c color.NRGBA // an index past the palette reads as transparent black
				if int(k) < len(pal) {
					c = pal[k]
				}
				if c.A != 0xff {
					im.HasAlpha = true
				}
				set(y*w+x, uint32(c.R), uint32(c.G), uint32(c.B))
			}
		}
	case *image.YCbCr:
		newPlanes(3)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				yi, ci := m.YOffset(b.Min.X+x, b.Min.Y+y), m.COffset(b.Min.X+x, b.Min.Y+y)
				r, g, bl := color.YCbCrToRGB(m.Y[yi], m.Cb[ci], m.Cr[ci])
				set(y*w+x, uint32(r), uint32(g), uint32(bl))
			}
		}
	case *image.NYCbCrA:
		newPlanes(3)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				yi, ci := m.YOffset(b.Min.X+x, b.Min.Y+y), m.COffset(b.Min.X+x, b.Min.Y+y)
				if m.A[m.AOffset(b.Min.X+x, b.Min.Y+y)] != 0xff {
					im.HasAlpha = true
				}
				r, g, bl := color.YCbCrToRGB(m.Y[yi], m.Cb[ci], m.Cr[ci])
				set(y*w+x, uint32(r), uint32(g), uint32(bl))
			}
		}
	case *image.CMYK:
		newPlanes(3)
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+4*w]
			for x := 0; x < w; x++ {
				p := row[4*x : 4*x+4]
				r, g, bl := color.CMYKToRGB(p[0], p[1], p[2], p[3])
				set(y*w+x, uint32(r), uint32(g), uint32(bl))
			}
		}
	default:
		// Any other model: read through the generic interface at 16 bits.
		im.BitDepth = 16
		newPlanes(channelsFor(forceGray))
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				c := color.NRGBA64Model.Convert(img.At(b.Min.X+x, b.Min.Y+y)).(color.NRGBA64)
				if c.A != 0xffff {
					im.HasAlpha = true
				}
				set(y*w+x, uint32(c.R), uint32(c.G), uint32(c.B))
			}
		}
	}
	return im
}

func channelsFor(gray bool) int {
	if gray {
		return 1
	}
	return 3
}

func be16(p []byte) uint32 { return uint32(p[0])<<8 | uint32(p[1]) }

// Extensions are the file name extensions of the formats the decoders read
// (lower case; a fresh slice each call).
func Extensions() []string {
	return []string{".png", ".tif", ".tiff", ".jpg", ".jpeg", ".bmp", ".gif", ".webp"}
}
