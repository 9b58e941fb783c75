package imageio

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"image"
	"image/color"
	"io"
	"io/fs"
	"os"
	"syscall"
)

// headerPrefix is the part of a file read first: the format is detected
// from it, and the few header fields Decode needs besides the decoder's
// own (the PNG colour type and interlace method, a JPEG's EXIF
// orientation and its frame type) are taken from it. An EXIF segment is
// at most 64 KiB (Exif 2.32, 4.5.4), so twice that holds it after any
// JFIF segment.
const headerPrefix = 128 << 10

// headerBudget bounds the bytes a format's header parser may read: a
// header that does not end within it is refused, so that a file of
// padding or of endless metadata cannot make the header check read (or
// hold) the whole file. Real headers take a few kilobytes; TIFF
// directories of a few thousand strips some tens of kilobytes.
const headerBudget = 16 << 20

// ErrNotRegular is returned (wrapped, with the file and its kind) for a
// path that is a folder, a named pipe, a device or a socket: reading
// such a file can block for ever (a pipe with no writer) or never end
// (/dev/zero).
var ErrNotRegular = errors.New("not a regular file")

// errHeaderBudget is returned by the bounded header reader once a parser
// has read headerBudget bytes.
var errHeaderBudget = errors.New("header too long")

// Header is what an image file's header says, read before any pixel data.
type Header struct {
	Format        string // png, tiff, jpeg, bmp, gif or webp
	Width, Height int
	// Channels is the number of planes Decode returns: 1 for gray
	// sources (see Decode), else 3.
	Channels int
	// DecodeBytes estimates the peak memory of Decode in bytes: the
	// decoder's pixel buffer for the header's size and colour model, its
	// working buffers (a progressive JPEG's coefficients, a TIFF strip, an
	// interlaced PNG's passes, a lossless WebP's ARGB array), and the
	// float32 planes of the result. Decoders allocate by the header, so a
	// small file that decompresses to a large image (a decompression
	// bomb) is measured here, before it is decoded.
	DecodeBytes int64
}

// Source is an image file opened for decoding: its header has been read
// from a bounded prefix and its size checked against the megapixel limit,
// and no pixel data has been read yet.
type Source struct {
	path   string // for messages; "" for in-memory data
	file   *os.File
	r      io.ReaderAt
	size   int64
	f      imageFormat
	prefix []byte
	cfg    image.Config
	header Header
	tiff   *tiffSource // TIFF read by package tiffread; nil for the other formats
	// channel is the channel Choose selected for the other formats (-1:
	// all); Decode then returns it alone.
	channel int
}

// Open opens the image file at path and reads its header. It refuses,
// before opening, a path that is not a regular file (ErrNotRegular), and
// refuses an empty file, an unknown format, a header that is corrupt or
// does not end within the first 16 MiB, and an image above
// opt.MaxMegapixels (ErrTooLarge). Only a bounded prefix of the file is
// read. Every error names the file. The caller closes the Source.
func Open(path string, opt LoadOptions) (*Source, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err // *fs.PathError names the file
	}
	if err := regular(path, fi); err != nil {
		return nil, err
	}
	// O_NONBLOCK: should the path have become a pipe since the check,
	// opening it must not wait for a writer; the check below refuses it.
	f, err := os.OpenFile(path, os.O_RDONLY|syscall.O_NONBLOCK, 0)
	if err != nil {
		return nil, err
	}
	fi2, err := f.Stat()
	if err == nil {
		err = regular(path, fi2)
	}
	if err == nil && !os.SameFile(fi, fi2) {
		err = fmt.Errorf("%s: the file changed while it was opened", path)
	}
	if err != nil {
		f.Close()
		return nil, err
	}
	src, err := newSource(f, fi2.Size(), opt)
	if err != nil {
		f.Close()
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	src.path, src.file = path, f
	return src, nil
}

// regular refuses anything but a regular file, saying what it is.
func regular(path string, fi fs.FileInfo) error {
	m := fi.Mode()
	if m.IsRegular() {
		return nil
	}
	kind := "a special file"
	switch {
	case m.IsDir():
		kind = "a folder"
	case m&fs.ModeNamedPipe != 0:
		kind = "a named pipe (FIFO)"
	case m&fs.ModeSocket != 0:
		kind = "a socket"
	case m&fs.ModeCharDevice != 0:
		kind = "a character device"
	case m&fs.ModeDevice != 0:
		kind = "a block device"
	}
	return fmt.Errorf("%s: %w: it is %s; images are read from regular files only", path, ErrNotRegular, kind)
}

// newSource reads the header of the size bytes in r.
func newSource(r io.ReaderAt, size int64, opt LoadOptions) (*Source, error) {
	limit, err := megapixelLimit(opt)
	if err != nil {
		return nil, err
	}
	if size <= 0 {
		return nil, errors.New("empty file")
	}
	prefix := make([]byte, min(size, headerPrefix))
	if n, err := r.ReadAt(prefix, 0); n < len(prefix) {
		if err == nil || err == io.EOF {
			err = io.ErrUnexpectedEOF
		}
		return nil, fmt.Errorf("reading the header: %w", err)
	}
	f, ok := sniff(prefix)
	if !ok {
		return nil, ErrUnknownFormat
	}
	s := &Source{r: r, size: size, f: f, prefix: prefix, channel: -1}
	hr := &boundedReaderAt{r: r, size: size, budget: headerBudget}
	if f.id == "tiff" {
		// TIFF and BigTIFF are read by package tiffread, the directories
		// through the bounded reader; a page only
		// golang.org/x/image/tiff reads (palettes, bilevel) goes on below.
		t, err := openTIFF(hr, size)
		if err != nil {
			if errors.Is(err, errHeaderBudget) || hr.budget < 0 {
				return nil, fmt.Errorf("corrupt TIFF file: its directories do not end within the first %d MiB", headerBudget>>20)
			}
			return nil, err
		}
		if t != nil {
			p := t.page
			if err := checkSize(p.Width, p.Height, limit); err != nil {
				return nil, err
			}
			s.tiff = t
			if err := t.choose(Selection{}); err != nil {
				return nil, err
			}
			ch := 1
			if t.rgb {
				ch = 3
			}
			s.cfg = image.Config{Width: p.Width, Height: p.Height}
			s.header = Header{Format: f.id, Width: p.Width, Height: p.Height, Channels: ch}
			s.header.DecodeBytes = t.decodeBytes(ch)
			return s, nil
		}
	}
	var in io.Reader = bufio.NewReader(hr)
	if f.id == "tiff" {
		in = hr // the TIFF parser seeks to its directories by offset
	}
	cfg, err := guarded(func() (image.Config, error) { return f.config(in) })
	if err != nil {
		if errors.Is(err, errHeaderBudget) || hr.budget < 0 {
			return nil, fmt.Errorf("corrupt %s file: its header does not end within the first %d MiB", f.name, headerBudget>>20)
		}
		return nil, describe(f, "header", err)
	}
	if err := checkSize(cfg.Width, cfg.Height, limit); err != nil {
		return nil, err
	}
	s.cfg = cfg
	s.header = Header{Format: f.id, Width: cfg.Width, Height: cfg.Height, Channels: s.channels()}
	s.header.DecodeBytes = s.decodeBytes()
	return s, nil
}

// Stack describes the channels, planes and time points of the file and
// the pixel size it states (one of each, and no size, for the formats
// other than TIFF).
func (s *Source) Stack() Stack {
	if s.tiff != nil {
		return s.tiff.stack
	}
	return Stack{Channels: s.header.Channels, Planes: 1, Frames: 1}
}

// Choose selects what Decode reads of a multi-image file (see
// Selection); the default is channel "" (all colours, or channel 0),
// plane 0, frame 0. A selection the file cannot give is an
// *OptionError naming the parameter. Formats other than TIFF hold one
// plane and frame; their channel is chosen after decoding (a colour
// channel by index).
func (s *Source) Choose(sel Selection) error {
	if s.tiff != nil {
		return s.tiff.choose(sel)
	}
	st := s.Stack()
	if err := checkIndex("plane", sel.Plane, 1, "plane(s)"); err != nil {
		return err
	}
	if err := checkIndex("frame", sel.Frame, 1, "time point(s)"); err != nil {
		return err
	}
	s.channel = -1
	if sel.Channel != "" {
		k, err := channelIndex(sel.Channel, st)
		if err != nil {
			return err
		}
		s.channel = k
	}
	return nil
}

// Header returns what the file's header says.
func (s *Source) Header() Header { return s.header }

// Path is the file's path ("" for data in memory).
func (s *Source) Path() string { return s.path }

// Size is the file's size in bytes.
func (s *Source) Size() int64 { return s.size }

// Contents returns a reader of the whole file from its first byte, for a
// checksum; it reads in the caller's steps and holds nothing.
func (s *Source) Contents() io.Reader { return io.NewSectionReader(s.r, 0, s.size) }

// Close closes the file.
func (s *Source) Close() error {
	if s.file == nil {
		return nil
	}
	return s.file.Close()
}

// Decode decodes the image; see the package function Decode for what it
// returns. Errors name the file.
func (s *Source) Decode() (*Image, error) { return s.DecodeContext(context.Background()) }

// DecodeContext is Decode that stops when ctx is done: the decoder's next
// read fails and ctx's error is returned.
func (s *Source) DecodeContext(ctx context.Context) (*Image, error) {
	r := s.r
	if ctx.Done() != nil {
		r = &ctxReaderAt{ctx: ctx, r: r}
	}
	var im *Image
	var err error
	if s.tiff != nil {
		im, err = s.tiff.decode(ctx, r)
	} else {
		im, err = s.decode(r)
	}
	if err != nil {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		if s.path != "" {
			return nil, fmt.Errorf("%s: %w", s.path, err)
		}
		return nil, err
	}
	return im, nil
}

// decode decodes the pixel data, read from r, after the header was
// checked.
func (s *Source) decode(r io.ReaderAt) (*Image, error) {
	f, cfg := s.f, s.cfg
	var in io.Reader
	if f.id == "tiff" {
		in = io.NewSectionReader(r, 0, s.size)
	} else {
		in = bufio.NewReaderSize(io.NewSectionReader(r, 0, s.size), 1<<16)
	}
	img, err := guarded(func() (image.Image, error) { return f.decode(in) })
	if err != nil {
		return nil, describe(f, "pixel data", err)
	}
	b := img.Bounds()
	if b.Dx() > cfg.Width || b.Dy() > cfg.Height {
		return nil, fmt.Errorf("corrupt %s file: pixel data %dx%d larger than its header %dx%d", f.name, b.Dx(), b.Dy(), cfg.Width, cfg.Height)
	}
	if b.Dx() <= 0 || b.Dy() <= 0 {
		return nil, fmt.Errorf("image has zero size (%dx%d)", b.Dx(), b.Dy())
	}
	im := fromImage(img, s.pngGray())
	im.Format, im.Pages = f.id, 1
	if f.id == "tiff" {
		im.Pages = tiffPagesAt(r, s.size)
	}
	if f.id == "jpeg" {
		im = orient(im, jpegOrientation(s.prefix))
	}
	if s.channel > 0 || s.channel == 0 && im.Channels > 1 {
		if s.channel >= im.Channels {
			return nil, &OptionError{"channel", fmt.Sprintf("%d is out of range: the image has %d channel(s) (0..%d)", s.channel, im.Channels, im.Channels-1)}
		}
		im.Planes, im.Channels = [][]float32{im.Planes[s.channel]}, 1
	}
	if s.channel >= 0 {
		im.Used = &Used{Channel: s.channel, Stack: Stack{Channels: s.header.Channels, Planes: 1, Frames: 1}}
	}
	return im, nil
}

// pngGray reports a PNG whose IHDR colour type (PNG specification,
// 11.2.2) is 0 (gray) or 4 (gray with alpha).
func (s *Source) pngGray() bool {
	return s.f.id == "png" && len(s.prefix) > 25 && (s.prefix[25] == 0 || s.prefix[25] == 4)
}

// channels is the number of planes Decode will return, from the header.
func (s *Source) channels() int {
	switch m := s.cfg.ColorModel.(type) {
	case color.Palette:
		for _, c := range m {
			n := color.NRGBAModel.Convert(c).(color.NRGBA)
			if n.R != n.G || n.G != n.B {
				return channelsFor(s.pngGray())
			}
		}
		return 1
	}
	switch s.cfg.ColorModel {
	case color.GrayModel, color.Gray16Model:
		return 1
	}
	return channelsFor(s.pngGray())
}

// decodeBytes estimates Decode's peak memory (see Header.DecodeBytes).
func (s *Source) decodeBytes() int64 {
	px := int64(s.cfg.Width) * int64(s.cfg.Height)
	var per int64 // decoder image bytes per pixel, by colour model
	switch s.cfg.ColorModel {
	case color.GrayModel:
		per = 1
	case color.Gray16Model:
		per = 2
	case color.RGBAModel, color.NRGBAModel, color.CMYKModel, color.NYCbCrAModel:
		per = 4
	case color.YCbCrModel:
		per = 3 // 4:4:4; subsampled chroma takes less
	default:
		per = 8 // 16-bit colour, or read through the generic interface
		if _, ok := s.cfg.ColorModel.(color.Palette); ok {
			per = 1
		}
	}
	extra := int64(0) // working buffers per pixel
	switch s.f.id {
	case "png":
		if len(s.prefix) > 28 && s.prefix[28] == 1 {
			extra = per // Adam7: each pass is decoded into an image of its own
		}
	case "tiff":
		extra = per // one strip or tile, decompressed; a strip may be the whole image
	case "jpeg":
		comps := int64(3)
		switch s.cfg.ColorModel {
		case color.GrayModel:
			comps = 1
		case color.CMYKModel:
			comps = 4
		}
		if jpegProgressive(s.prefix) {
			extra = 4 * comps // 64 int32 coefficients per 8x8 block per component
		}
		if jpegOrientation(s.prefix) != 1 {
			extra += 4 * int64(s.channels()) // orient copies the planes
		}
	case "webp":
		if len(s.prefix) >= 16 && string(s.prefix[12:16]) == "VP8L" {
			extra = 8 // ARGB words and the transforms' copy
		}
	case "gif":
		extra = 1 // the frame before it is composed
	}
	return px * (per + extra + 4*int64(s.channels()))
}

// jpegProgressive reports whether the JPEG's frame header (SOFn, ITU-T
// T.81 table B.1) is progressive (SOF2, SOF6, SOF10, SOF14), walking the
// marker segments in the prefix; a frame header beyond the prefix counts
// as progressive, the costlier case.
func jpegProgressive(b []byte) bool {
	i := 2
	for i+4 <= len(b) {
		if b[i] != 0xff {
			return true
		}
		m := b[i+1]
		if m == 0xff {
			i++
			continue
		}
		switch m {
		case 0xc0, 0xc1, 0xc3, 0xc5, 0xc7, 0xc9, 0xcb, 0xcd, 0xcf:
			return false
		case 0xc2, 0xc6, 0xca, 0xce:
			return true
		case 0xda, 0xd9:
			return true
		}
		n := int(b[i+2])<<8 | int(b[i+3])
		if n < 2 {
			return true
		}
		i += 2 + n
	}
	return true
}

// boundedReaderAt reads the first size bytes of r, at most budget bytes
// in all; past that every read fails with errHeaderBudget. Read reads on
// from the last Read.
type boundedReaderAt struct {
	r      io.ReaderAt
	size   int64
	budget int64
	off    int64
}

func (b *boundedReaderAt) ReadAt(p []byte, off int64) (int, error) {
	if off < 0 {
		return 0, errors.New("negative offset")
	}
	if off >= b.size {
		return 0, io.EOF
	}
	if rest := b.size - off; int64(len(p)) > rest {
		p = p[:rest]
	}
	b.budget -= int64(len(p))
	if b.budget < 0 {
		return 0, errHeaderBudget
	}
	n, err := b.r.ReadAt(p, off)
	if err == nil && off+int64(n) >= b.size {
		err = io.EOF
	}
	return n, err
}

func (b *boundedReaderAt) Read(p []byte) (int, error) {
	n, err := b.ReadAt(p, b.off)
	b.off += int64(n)
	if n > 0 && err == io.EOF {
		err = nil
	}
	return n, err
}

// ctxReaderAt fails every read once ctx is done, which stops a decoder
// at its next read.
type ctxReaderAt struct {
	ctx context.Context
	r   io.ReaderAt
}

func (c *ctxReaderAt) ReadAt(p []byte, off int64) (int, error) {
	if err := c.ctx.Err(); err != nil {
		return 0, err
	}
	return c.r.ReadAt(p, off)
}

// bytesSource is a Source over data held in memory.
func bytesSource(data []byte, opt LoadOptions) (*Source, error) {
	return newSource(bytes.NewReader(data), int64(len(data)), opt)
}
