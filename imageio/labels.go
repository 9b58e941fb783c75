package imageio

import (
	"context"
	"fmt"
	"io"

	"github.com/cleave-seg/cleave/imageio/tiffread"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// EncodeLabels writes a label map as a 16-bit gray PNG whose sample
// values are the labels. A label outside 0..65535 is an error. workers
// goroutines filter the rows (0: GOMAXPROCS); the bytes do not depend on
// their number.
func EncodeLabels(w io.Writer, m labelmap.Map, workers int) error {
	if err := m.Check(); err != nil {
		return err
	}
	labels, width, height := m.Pix, m.Width, m.Height
	for i, l := range labels {
		if l < 0 || l > 65535 {
			return fmt.Errorf("label map: label %d at pixel (%d, %d) is outside 0..65535 (16-bit PNG)", l, i%width, i/width)
		}
	}
	return encodePNGRows(w, pngRows{width: width, height: height, bpp: 2, depth: 16, ctype: 0, flat: true, rows: func(y0, y1 int, dst []byte) {
		for i, l := range labels[y0*width : y1*width] {
			dst[2*i], dst[2*i+1] = uint8(l>>8), uint8(l)
		}
	}}, workers)
}

// ReadLabels reads a label map: any lossless integer image (8- or 16-bit
// gray PNG, 8-, 16- or 32-bit integer TIFF, read exactly through package
// tiffread, or a colour image whose R, G and B are equal everywhere). A binary mask whose only values are 0 and 255 (8-bit) or 0
// and 65535 (16-bit) reads as 0/1. JPEG is refused as lossy; a colour image
// is an error. Every error names the file.
// A TIFF that holds more than one image (planes, time points, or
// channels that are not the three equal samples of a gray colour image)
// is an error rather than its first page.
// The file is opened as Open does (regular files only, header first,
// the default megapixel limit).
func ReadLabels(path string) (labelmap.Map, error) {
	src, err := Open(path, LoadOptions{})
	if err != nil {
		return labelmap.Map{}, err
	}
	defer src.Close()
	if src.Header().Format == "jpeg" {
		return labelmap.Map{}, fmt.Errorf("%s: a label map cannot be JPEG (lossy compression changes labels)", path)
	}
	if src.tiff != nil {
		if st := src.Stack(); st.Planes*st.Frames > 1 || (st.Channels > 1 && !src.tiff.rgb) {
			// Reading page 0 alone would score one plane in silence.
			return labelmap.Map{}, fmt.Errorf("%s: a label map is one 2-D image, but this TIFF holds %s, %s and %s; save each plane's labels as a file of its own", path, nOf(st.Channels, "channel"), nOf(st.Planes, "plane"), nOf(st.Frames, "time point"))
		}
		m, err := src.tiff.labels()
		if err != nil {
			return labelmap.Map{}, fmt.Errorf("%s: %w", path, err)
		}
		return m, nil
	}
	im, err := src.Decode()
	if err != nil {
		return labelmap.Map{}, err
	}
	m, err := labelsOf(im)
	if err != nil {
		return labelmap.Map{}, fmt.Errorf("%s: %w", path, err)
	}
	return m, nil
}

// labelsOf reads the labels of a decoded label image.
func labelsOf(im *Image) (labelmap.Map, error) {
	if im.Channels == 3 {
		r, g, b := im.Planes[0], im.Planes[1], im.Planes[2]
		for i := range r {
			if r[i] != g[i] || g[i] != b[i] {
				return labelmap.Map{}, fmt.Errorf("a label map must be a gray integer image, but pixel (%d, %d) has colour (%g, %g, %g)",
					i%im.Width, i/im.Width, r[i], g[i], b[i])
			}
		}
	}
	p := im.Planes[0]
	labels := make([]int32, len(p))
	for i, v := range p {
		labels[i] = int32(v)
	}
	binaryMask(labels, int32(im.MaxValue()))
	return labelmap.Map{Pix: labels, Width: im.Width, Height: im.Height}, nil
}

// binaryMask reads a mask whose only values are 0 and top (the largest
// value of its bit depth, above 1) as 0/1.
func binaryMask(labels []int32, top int32) {
	if top <= 1 {
		return
	}
	for _, l := range labels {
		if l != 0 && l != top {
			return
		}
	}
	for i, l := range labels {
		if l != 0 {
			labels[i] = 1
		}
	}
}

// labels reads the first page of a label TIFF as exact integers (its
// first sample; a colour page must have equal samples). Values must be
// integers from 0 to 2^31 - 1.
func (t *tiffSource) labels() (labelmap.Map, error) {
	p := t.page
	n := p.Width * p.Height
	labels := make([]int32, n)
	ctx := context.Background()
	if err := tiffread.ReadSample(ctx, p, 0, labels); err != nil {
		return labelmap.Map{}, fmt.Errorf("label map: %w", tiffError(err, "pixel data"))
	}
	if t.rgb {
		other := make([]int32, n)
		for s := 1; s < 3; s++ {
			if err := tiffread.ReadSample(ctx, p, s, other); err != nil {
				return labelmap.Map{}, fmt.Errorf("label map: %w", tiffError(err, "pixel data"))
			}
			for i := range other {
				if other[i] != labels[i] {
					return labelmap.Map{}, fmt.Errorf("a label map must be a gray integer image, but pixel (%d, %d) has different colour samples", i%p.Width, i/p.Width)
				}
			}
		}
	} else if p.SamplesPerPixel > 1 {
		return labelmap.Map{}, fmt.Errorf("a label map must have one sample per pixel, and this TIFF has %d", p.SamplesPerPixel)
	}
	for i, l := range labels {
		if l < 0 {
			return labelmap.Map{}, fmt.Errorf("label %d at pixel (%d, %d) is negative; labels are 0 (background) and 1, 2, ...", l, i%p.Width, i/p.Width)
		}
	}
	if !p.IsFloat() && !p.IsSigned() && p.BitsPerSample <= 16 {
		binaryMask(labels, int32(1)<<p.BitsPerSample-1)
	}
	return labelmap.Map{Pix: labels, Width: p.Width, Height: p.Height}, nil
}

// nOf is "1 plane" or "3 planes".
func nOf(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
