package imageio

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/imageio/tiffmeta"
	"github.com/cleave-seg/cleave/imageio/tiffread"
)

// Stack describes the images a file holds: channels, planes (Z) and time
// points, with channel names and the pixel size when the file states
// them. Files other than TIFF hold one of each.
type Stack struct {
	Channels, Planes, Frames int
	ChannelNames             []string `json:",omitempty"`
	// Layout says how the pages were read: "ome-xml", "hyperstack
	// description", "shape description" (the JSON with the array's shape
	// and axes that python's tifffile writes), "pages" (every page a
	// plane) or "" (one image).
	Layout      string
	Calibration Calibration
}

// Calibration is the physical size of a pixel as the file states it.
type Calibration struct {
	PixelSize  float64 // across, in Unit; 0 = not stated
	PixelSizeY float64 // down
	Unit       string
	// Source is "ome-xml", "hyperstack description" or "resolution tags".
	Source string
}

// Selection chooses what of a multi-image file is segmented.
type Selection struct {
	// Channel is "" (a colour image's three colours, else channel 0), a
	// channel index ("2", from 0) or a channel name the file gives.
	Channel string
	// Plane and Frame are the plane (Z) and time point, from 0.
	Plane, Frame int
	// Brightest, when true, keeps each pixel's largest value through all
	// planes of the chosen channel and frame (a maximum-intensity
	// projection) instead of one plane.
	Brightest bool
}

// Used is what Decode read of the file's stack.
type Used struct {
	Channel     int    // -1: the three colours of a colour image
	ChannelName string `json:",omitempty"`
	Plane       int    // -1: the brightest value through all planes
	Frame       int
	Stack       Stack
}

// tiffSource is what Open learned of a TIFF read by package tiffread.
type tiffSource struct {
	file    *tiffread.File
	page    *tiffread.Page // the first page
	layout  *tiffmeta.Layout
	pageC   int  // channels held one per page
	sampleC int  // channels held as samples of a pixel (1 for colour)
	rgb     bool // the first three samples are red, green, blue
	linear  bool // plane k is sample k mod n of page k div n (tiffmeta.Layout.Linear)
	stack   Stack
	// the choice (Choose)
	channel int // -1: colour
	name    string
	plane   int // -1: brightest through the planes
	frame   int
}

// openTIFF reads the directories of a TIFF or BigTIFF through r (the
// bounded header reader) and its metadata. It returns nil, nil for a
// first page that golang.org/x/image/tiff reads and tiffread does not
// (bilevel, 2- and 4-bit samples, palettes, fax compression).
func openTIFF(r io.ReaderAt, size int64) (*tiffSource, error) {
	f, err := tiffread.Open(r, size)
	if err != nil {
		return nil, tiffError(err, "header")
	}
	p := f.Pages[0]
	if err := p.Unsupported(); err != nil {
		if !f.Big && p.Planar == 1 && (p.BitsPerSample < 8 || p.Photometric == 3 ||
			p.Compression >= 2 && p.Compression <= 4) {
			return nil, nil
		}
		return nil, tiffError(err, "header")
	}
	if err := p.ReadDescription(); err != nil {
		p.Description = ""
	}
	t := &tiffSource{file: f, page: p, sampleC: p.SamplesPerPixel, pageC: 1, channel: -1}
	if p.IsRGB() {
		t.rgb, t.sampleC = true, 1
	}
	pages := len(f.Pages)
	layout := &tiffmeta.Layout{SizeC: 1, SizeZ: pages, SizeT: 1, Order: "XYCZT"}
	desc := strings.TrimSpace(p.Description)
	switch {
	case strings.HasPrefix(desc, "<?xml") || strings.HasPrefix(desc, "<OME"):
		if l, err := tiffmeta.ParseOME(desc); err == nil {
			layout = l
		}
	case strings.HasPrefix(desc, "{"):
		if l := tiffmeta.ParseShaped(desc); l != nil {
			layout = l
		}
	default:
		if l := tiffmeta.ParseHyperstack(desc); l != nil {
			layout = l
		}
	}
	if layout.Linear {
		// The array has no sample axis: its planes are the samples of
		// the pages in order (three of them may be tagged RGB).
		if layout.SizeC*layout.SizeZ*layout.SizeT == pages*p.SamplesPerPixel {
			t.linear, t.rgb, t.sampleC = true, false, 1
		} else {
			layout = &tiffmeta.Layout{SizeC: 1, SizeZ: pages, SizeT: 1, Order: "XYCZT"}
		}
	}
	// Channels in pages: OME counts samples in SizeC.
	pc := layout.SizeC
	if layout.Source == "ome-xml" && p.SamplesPerPixel > 1 && pc%p.SamplesPerPixel == 0 {
		pc /= p.SamplesPerPixel
	}
	if layout.Source != "" && !t.linear && pc*layout.SizeZ*layout.SizeT > pages && layout.IFD == nil {
		// The metadata describes more planes than the file has pages
		// (a file of a multi-file set, or a description left from an
		// earlier state): read the pages as planes.
		layout = &tiffmeta.Layout{SizeC: 1, SizeZ: pages, SizeT: 1, Order: "XYCZT"}
		pc = 1
	}
	t.layout, t.pageC = layout, pc
	t.stack = Stack{Channels: pc * t.sampleC, Planes: layout.SizeZ, Frames: layout.SizeT, Layout: layout.Source}
	if t.stack.Layout == "" && pages > 1 {
		t.stack.Layout = "pages"
	}
	if n := layout.ChannelNames; len(n) == t.stack.Channels {
		t.stack.ChannelNames = n
	}
	t.stack.Calibration = calibration(layout, p)
	return t, nil
}

// calibration is the pixel size by precedence: OME-XML, the hyperstack
// description (whose unit applies to the resolution tags, stored
// without a unit of their own), the resolution tags.
func calibration(l *tiffmeta.Layout, p *tiffread.Page) Calibration {
	c := l.Calibration
	if c.Source == "ome-xml" {
		return Calibration{PixelSize: c.X, PixelSizeY: c.Y, Unit: c.Unit, Source: c.Source}
	}
	if l.Source == "hyperstack description" && c.Unit != "" && p.XResolution > 0 && !math.IsInf(p.XResolution, 0) {
		y := p.YResolution
		if !(y > 0) || math.IsInf(y, 0) {
			y = p.XResolution
		}
		return Calibration{PixelSize: 1 / p.XResolution, PixelSizeY: 1 / y, Unit: c.Unit, Source: "hyperstack description"}
	}
	r := tiffmeta.FromResolution(p.XResolution, p.YResolution, p.ResolutionUnit)
	if r.Source == "" {
		return Calibration{}
	}
	return Calibration{PixelSize: r.X, PixelSizeY: r.Y, Unit: r.Unit, Source: r.Source}
}

// tiffError words an error of tiffread, met reading stage ("header" or
// "pixel data"), for the user.
func tiffError(err error, stage string) error {
	var ue tiffread.UnsupportedError
	if errors.As(err, &ue) {
		return fmt.Errorf("TIFF with %s: %w; save it as gray, RGB or one channel per plane, with 8- to 64-bit integer or 16- to 64-bit floating-point samples, uncompressed or with LZW, deflate, PackBits or zstd compression", strings.TrimPrefix(ue.Error(), "unsupported TIFF feature: "), ErrUnsupported)
	}
	var fe tiffread.FormatError
	if errors.As(err, &fe) {
		msg := strings.TrimPrefix(fe.Error(), "invalid TIFF: ")
		if strings.Contains(msg, "past the end") || strings.Contains(msg, "outside the file") || strings.Contains(msg, "shorter than") {
			return fmt.Errorf("truncated TIFF file (%s): %s", stage, msg)
		}
		return fmt.Errorf("corrupt TIFF file (%s): %s", stage, msg)
	}
	if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF) {
		return fmt.Errorf("truncated TIFF file (%s): %w", stage, err)
	}
	if errors.Is(err, errHeaderBudget) || errors.Is(err, context.Canceled) || errors.Is(err, context.DeadlineExceeded) {
		return err
	}
	return fmt.Errorf("corrupt TIFF file (%s): %w", stage, err)
}

// choose resolves a selection against the stack; errors are
// OptionErrors naming the parameter.
func (t *tiffSource) choose(sel Selection) error {
	st := t.stack
	t.channel, t.name = -1, ""
	switch {
	case sel.Channel == "" && t.rgb && t.pageC == 1:
	case sel.Channel == "":
		t.channel = 0
	default:
		k, err := channelIndex(sel.Channel, st)
		if err != nil {
			return err
		}
		t.channel = k
	}
	if t.channel >= 0 && t.channel < len(st.ChannelNames) {
		t.name = st.ChannelNames[t.channel]
	}
	if err := checkIndex("plane", sel.Plane, st.Planes, "plane(s)"); err != nil {
		return err
	}
	if err := checkIndex("frame", sel.Frame, st.Frames, "time point(s)"); err != nil {
		return err
	}
	t.plane, t.frame = sel.Plane, sel.Frame
	if sel.Brightest {
		t.plane = -1
	}
	return nil
}

// channelIndex reads a channel given by index or by name.
func channelIndex(s string, st Stack) (int, error) {
	if k, err := strconv.Atoi(s); err == nil {
		if k < 0 || k >= st.Channels {
			return 0, &OptionError{"channel", fmt.Sprintf("%d is out of range: the image has %d channel(s) (0..%d)", k, st.Channels, st.Channels-1)}
		}
		return k, nil
	}
	for k, n := range st.ChannelNames {
		if n == s {
			return k, nil
		}
	}
	for k, n := range st.ChannelNames {
		if strings.EqualFold(n, s) {
			return k, nil
		}
	}
	if len(st.ChannelNames) == 0 {
		return 0, &OptionError{"channel", fmt.Sprintf("%q: the file names no channels; give an index 0..%d", s, st.Channels-1)}
	}
	return 0, &OptionError{"channel", fmt.Sprintf("%q is not a channel of the file; its channels are %s", s, quotedList(st.ChannelNames))}
}

func quotedList(names []string) string {
	q := make([]string, len(names))
	for i, n := range names {
		q[i] = fmt.Sprintf("%d %q", i, n)
	}
	return strings.Join(q, ", ")
}

func checkIndex(name string, v, n int, what string) error {
	if v < 0 || v >= n {
		return &OptionError{name, fmt.Sprintf("%d is out of range: the file holds %d %s (0..%d)", v, n, what, n-1)}
	}
	return nil
}

// locate returns the page and sample of channel c, plane z, frame t.
func (t *tiffSource) locate(c, z, tt int) (*tiffread.Page, int, error) {
	pc, s := c/t.sampleC, c%t.sampleC
	idx := t.layout.PlaneIndex(pc, z, tt, t.pageC)
	if t.linear {
		idx, s = idx/t.page.SamplesPerPixel, idx%t.page.SamplesPerPixel
	}
	if t.layout.IFD != nil {
		k, ok := t.layout.IFD[idx]
		if !ok {
			return nil, 0, fmt.Errorf("the OME-XML description places channel %d, plane %d, time point %d in no page of this file", c, z, tt)
		}
		idx = k
	}
	if idx >= len(t.file.Pages) {
		return nil, 0, fmt.Errorf("channel %d, plane %d, time point %d would be page %d, but the file has %d pages", c, z, tt, idx, len(t.file.Pages))
	}
	p := t.file.Pages[idx]
	if !t.page.SameLayout(p) {
		return nil, 0, fmt.Errorf("page %d (%dx%d, %d samples of %d bits) differs from page 0 (%dx%d, %d samples of %d bits)",
			idx, p.Width, p.Height, p.SamplesPerPixel, p.BitsPerSample, t.page.Width, t.page.Height, t.page.SamplesPerPixel, t.page.BitsPerSample)
	}
	if err := p.Unsupported(); err != nil {
		return nil, 0, fmt.Errorf("page %d: %w", idx, tiffError(err, "header"))
	}
	return p, s, nil
}

// decode reads the chosen channel(s), plane and frame through r, one
// sample plane at a time (the brightest-value projection holds one more).
func (t *tiffSource) decode(ctx context.Context, r io.ReaderAt) (*Image, error) {
	t.file.SetReader(r)
	p0 := t.page
	w, h := p0.Width, p0.Height
	im := &Image{Width: w, Height: h, BitDepth: p0.BitsPerSample, Format: "tiff", Pages: len(t.file.Pages)}
	switch {
	case p0.IsFloat():
		im.SampleType = SampleFloat
	case p0.IsSigned():
		im.SampleType = SampleSigned
	}
	chans := []int{t.channel}
	if t.channel < 0 {
		chans = []int{0, 1, 2}
	}
	planes := []int{t.plane}
	if t.plane < 0 {
		planes = make([]int, t.stack.Planes)
		for z := range planes {
			planes[z] = z
		}
	}
	var tmp []float32
	for _, c := range chans {
		dst := make([]float32, w*h)
		for k, z := range planes {
			cc := c
			if t.channel < 0 {
				cc = 0 // colour samples are read below, by sample number
			}
			p, s, err := t.locate(cc, z, t.frame)
			if err != nil {
				return nil, err
			}
			if t.channel < 0 {
				s = c
			}
			into := dst
			if k > 0 {
				if tmp == nil {
					tmp = make([]float32, w*h)
				}
				into = tmp
			}
			if err := tiffread.ReadSample(ctx, p, s, into); err != nil {
				if ctx.Err() != nil {
					return nil, ctx.Err()
				}
				return nil, fmt.Errorf("page %d: %w", p.Index, tiffError(err, "pixel data"))
			}
			if k > 0 {
				brightest(dst, tmp)
			}
		}
		im.Planes = append(im.Planes, dst)
	}
	im.Channels = len(im.Planes)
	if t.channel < 0 && t.plane >= 0 {
		if err := t.alpha(ctx, im); err != nil {
			return nil, err
		}
	}
	im.Used = &Used{Channel: t.channel, ChannelName: t.name, Plane: t.plane, Frame: t.frame, Stack: t.stack}
	return im, nil
}

// alpha reads the alpha sample of a colour page (ExtraSamples 1,
// associated, or 2, unassociated; TIFF 6.0 section 18), notes whether
// any pixel is not opaque, and divides associated alpha out of the
// colours, c * max / a in integers as image/color's NRGBA64 conversion
// does (0 where a is 0). Other extra samples are not read.
func (t *tiffSource) alpha(ctx context.Context, im *Image) error {
	p, _, err := t.locate(0, t.plane, t.frame)
	if err != nil {
		return err
	}
	if p.SamplesPerPixel < 4 || len(p.ExtraSamples) == 0 || p.ExtraSamples[0] != 1 && p.ExtraSamples[0] != 2 || p.IsFloat() {
		return nil
	}
	a := make([]float32, im.Width*im.Height)
	if err := tiffread.ReadSample(ctx, p, 3, a); err != nil {
		return fmt.Errorf("page %d: %w", p.Index, tiffError(err, "pixel data"))
	}
	top := float32(im.MaxValue())
	for i, v := range a {
		if v == top {
			continue
		}
		im.HasAlpha = true
		if p.ExtraSamples[0] != 1 {
			continue
		}
		for _, pl := range im.Planes {
			if v == 0 {
				pl[i] = 0
			} else {
				pl[i] = float32(math.Floor(float64(pl[i]) * float64(top) / float64(v)))
			}
		}
	}
	return nil
}

// brightest keeps in dst the larger of dst and v at each pixel; a value
// that is not a number gives way to one that is.
func brightest(dst, v []float32) {
	for i, x := range v {
		if x > dst[i] || dst[i] != dst[i] {
			dst[i] = x
		}
	}
}

// decodeBytes estimates the memory of decode: the output planes, the
// projection's second plane, and for each decoding worker a strip or
// tile decompressed and its compressed bytes (at most twice as many).
func (t *tiffSource) decodeBytes(channels int) int64 {
	n := int64(t.page.Width) * int64(t.page.Height)
	b := 4 * n * int64(channels)
	if t.stack.Planes > 1 {
		b += 4 * n // a projection's second plane
	}
	return b + 3*int64(tiffread.Workers)*t.page.ChunkBytes() + 1<<20
}
