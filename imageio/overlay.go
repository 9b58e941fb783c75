package imageio

import (
	"fmt"
	"image"
	"io"
	"math"
	"slices"

	"github.com/cleave-seg/cleave/imageio/render"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Overlay colours. The boundary colour is a saturated amber, far from any
// gray in hue and saturation; numbers are white on a near-black halo.
var (
	boundaryRGB   = [3]uint8{255, 170, 0}
	numberInk     = [3]uint8{255, 255, 255}
	numberOutline = [3]uint8{20, 20, 20}
)

// tintAlpha is the weight of an object's colour in a tinted pixel.
const tintAlpha = 0.3

// OverlayOptions says what EncodeOverlay draws.
type OverlayOptions struct {
	// Colour, when it holds three planes (R, G, B in the image's own
	// units), is the picture under the boundaries, each channel mapped
	// linearly by the same window Lo..Hi to 0..255 (ColourWindow), which
	// keeps the image's hues; NaN samples show black. Without it the
	// display plane is drawn in gray.
	Colour [][]float32
	Lo, Hi float64
	// Tint blends every object (label > 0) with its colour of
	// render.ColourLabels (weight 0.3), the colour the preview gives it.
	Tint bool
	// Palette is the labels' colouring when the caller has it already
	// (render.ColourLabels of the same labels); nil: computed here.
	Palette *render.LabelColours
	// Numbers draws each object's label at its centroid (the mean of its
	// pixel coordinates, the region table's centroid_x and centroid_y) in
	// render's digit font, white on a dark halo, where the number's box
	// with its halo lies inside the object; see NumberScale.
	Numbers bool
	// Workers is the number of goroutines that draw and filter the
	// picture (bands of rows, each pixel drawn alone, so the file does
	// not depend on it); below 1: GOMAXPROCS.
	Workers int
}

// ColourWindow is the display window of a colour image: the smallest 0.1
// percentile and the largest 99.9 percentile of its channels (Hyndman and
// Fan's definition 7, as the gray display plane), widened to min..max
// when they meet. One window for all channels keeps the ratios between
// them, so hues are kept. NaN and infinite samples are left out.
func ColourWindow(planes [][]float32, workers int) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, p := range planes {
		q := p
		for _, v := range p {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				q = finiteOnly(p)
				break
			}
		}
		if len(q) == 0 {
			continue
		}
		a, b := percentileRange(q, workers)
		lo, hi = math.Min(lo, a), math.Max(hi, b)
	}
	if math.IsInf(lo, 1) {
		return 0, 1
	}
	return lo, hi
}

func finiteOnly(p []float32) []float32 {
	var q []float32
	for _, v := range p {
		if !math.IsNaN(float64(v)) && !math.IsInf(float64(v), 0) {
			q = append(q, v)
		}
	}
	return q
}

// NumberScale is the size of a font pixel of the overlay's numbers for a
// width x height image: one image pixel up to 600 pixels on the short
// side, one more for each further 600, so numbers stay readable when a
// large image is shown scaled down to a screen.
func NumberScale(width, height int) int {
	return 1 + min(width, height)/600
}

// NumberPlace is where EncodeOverlay draws the number of one object.
type NumberPlace struct {
	Label  int32
	X, Y   int // top-left corner of the digits (without halo)
	Scale  int
	CX, CY float64 // the centroid
}

// PlaceNumbers finds where the overlay's numbers go: for each label > 0,
// its centroid (cx, cy) = (mean x, mean y) of its pixels; the number's
// box (render.NumberSize at NumberScale, or at scale 1 when that does not
// fit) centred on the pixel nearest the centroid, kept only when the box
// and a one-pixel margin around it (the halo) lie wholly inside the
// object. Labels are in increasing order.
func PlaceNumbers(m labelmap.Map) []NumberPlace {
	labels, width, height := m.Pix, m.Width, m.Height
	type acc struct {
		n      int
		sx, sy float64
	}
	// The sums are of integers below 2^53, exact in float64 in any order,
	// so they are added a run of one label along a row at a time. Labels
	// up to the pixel count are looked up in a table, larger ones in a
	// map.
	maxLabel := int32(0)
	for _, l := range labels {
		maxLabel = max(maxLabel, l)
	}
	var dense []*acc
	if int64(maxLabel) <= int64(len(labels)) {
		dense = make([]*acc, int(maxLabel)+1)
	}
	sums := map[int32]*acc{}
	var ids []int32
	for y := range height {
		row := labels[y*width : (y+1)*width]
		for x := 0; x < width; {
			l, e := row[x], x+1
			for e < width && row[e] == l {
				e++
			}
			if l > 0 {
				var a *acc
				if dense != nil {
					a = dense[l]
				} else {
					a = sums[l]
				}
				if a == nil {
					a = &acc{}
					if dense != nil {
						dense[l] = a
					} else {
						sums[l] = a
					}
					ids = append(ids, l)
				}
				n := e - x
				a.n += n
				a.sx += float64((x + e - 1) * n / 2) // x + (x+1) + ... + (e-1)
				a.sy += float64(y * n)
			}
			x = e
		}
	}
	slices.Sort(ids)
	of := func(l int32) *acc {
		if dense != nil {
			return dense[l]
		}
		return sums[l]
	}
	inside := func(l int32, x0, y0, w, h int) bool {
		if x0 < 0 || y0 < 0 || x0+w > width || y0+h > height {
			return false
		}
		for y := y0; y < y0+h; y++ {
			for _, v := range labels[y*width+x0 : y*width+x0+w] {
				if v != l {
					return false
				}
			}
		}
		return true
	}
	var out []NumberPlace
	for _, l := range ids {
		a := of(l)
		cx, cy := a.sx/float64(a.n), a.sy/float64(a.n)
		for _, s := range []int{NumberScale(width, height), 1} {
			w, h := render.NumberSize(int(l), s)
			x0 := int(math.Round(cx)) - w/2
			y0 := int(math.Round(cy)) - h/2
			if inside(l, x0-1, y0-1, w+2, h+2) {
				out = append(out, NumberPlace{Label: l, X: x0, Y: y0, Scale: s, CX: cx, CY: cy})
				break
			}
			if s == 1 {
				break
			}
		}
	}
	return out
}

// EncodeOverlay writes an RGB PNG: the image (display values in [0, 1]
// as gray, or the colour planes of opt), the boundaries between regions
// of labels one pixel wide in amber, and what opt adds (tints, numbers).
func EncodeOverlay(w io.Writer, display []float32, m labelmap.Map, opt OverlayOptions) error {
	labels, width, height := m.Pix, m.Width, m.Height
	if width <= 0 || height <= 0 || len(display) != width*height || len(labels) != width*height {
		return fmt.Errorf("overlay: %d display values and %d labels for a %dx%d image", len(display), len(labels), width, height)
	}
	colour := len(opt.Colour) == 3
	if colour {
		for _, p := range opt.Colour {
			if len(p) != width*height {
				return fmt.Errorf("overlay: a colour plane of %d values for a %dx%d image", len(p), width, height)
			}
		}
	}
	var palette *render.LabelColours
	if opt.Tint {
		palette = opt.Palette
		if palette == nil {
			palette = render.ColourLabels(m)
		}
	}
	scale := 0.0
	if opt.Hi > opt.Lo {
		scale = 1 / (opt.Hi - opt.Lo)
	}
	// Rows are drawn band by band as the encoder asks for them
	// (encodePNGRows), straight into its RGB rows; no image-sized picture
	// is held. The numbers crossing a band are drawn on a small RGBA copy
	// of their box, copied back.
	var places []NumberPlace
	if opt.Numbers {
		places = PlaceNumbers(m)
	}
	rows := func(y0, y1 int, dst []byte) {
		var levels []byte
		if !colour {
			levels = make([]byte, width)
		}
		for y := y0; y < y1; y++ {
			row := labels[y*width : (y+1)*width]
			var below []int32 // the next row's labels; nil on the last row
			if y+1 < height {
				below = labels[(y+1)*width : (y+2)*width]
			}
			out := dst[3*(y-y0)*width : 3*(y-y0+1)*width]
			if colour {
				colourRow(out, row, below, opt, y*width, scale, palette)
			} else {
				grayRow(out, row, below, display[y*width:(y+1)*width], palette, levels)
			}
		}
		// A number's box with its halo lies inside its own object, so
		// boxes never overlap and the order of drawing does not matter;
		// DrawNumber clips to the box, which is clipped to the band.
		for _, n := range places {
			w, h := render.NumberSize(int(n.Label), n.Scale)
			box := image.Rect(n.X-1, n.Y-1, n.X+w+1, n.Y+h+1).Intersect(image.Rect(0, y0, width, y1))
			if box.Empty() {
				continue
			}
			img := image.NewRGBA(box)
			for y := box.Min.Y; y < box.Max.Y; y++ {
				src := dst[3*((y-y0)*width+box.Min.X) : 3*((y-y0)*width+box.Max.X)]
				pix := img.Pix[img.PixOffset(box.Min.X, y):]
				for x := range box.Dx() {
					pix[4*x], pix[4*x+1], pix[4*x+2], pix[4*x+3] = src[3*x], src[3*x+1], src[3*x+2], 255
				}
			}
			render.DrawNumber(img, int(n.Label), n.X, n.Y, n.Scale, numberInk, numberOutline)
			for y := box.Min.Y; y < box.Max.Y; y++ {
				rgbaToRGB(dst[3*((y-y0)*width+box.Min.X):3*((y-y0)*width+box.Max.X)], img.Pix[img.PixOffset(box.Min.X, y):img.PixOffset(box.Max.X, y)])
			}
		}
	}
	return encodePNGRows(w, pngRows{width: width, height: height, bpp: 3, depth: 8, ctype: 2, rows: rows}, opt.Workers)
}

// unit clamps v to [0, 1]; NaN gives 0. (Past the first test v is not
// NaN, and a comparison with 1 does what min(v, 1) does.)
func unit(v float64) float64 {
	if !(v >= 0) { // also NaN
		return 0
	}
	if v > 1 {
		return 1
	}
	return v
}

// isBoundary reports whether pixel x of row (label l) differs in label
// from its right or lower neighbour (below: the next row, nil on the
// last): marking one side only draws boundaries one pixel wide.
func isBoundary(row, below []int32, x int, l int32) bool {
	return (x+1 < len(row) && row[x+1] != l) || (below != nil && below[x] != l)
}

// grayRow draws one overlay row of a gray display plane into out (RGB):
// boundary pixels amber, others the display value as gray, blended with
// the label's colour (weight tintAlpha) for labels > 0 when palette is
// set.
//
// With useFilterAVX2 the untinted grays of the row come from
// grayBytesAVX2 into levels (len(row) bytes), the same bytes.
func grayRow(out []byte, row, below []int32, gray []float32, palette *render.LabelColours, levels []byte) {
	out = out[:3*len(row)]
	gray = gray[:len(row)]
	m := 0
	if useFilterAVX2 {
		levels = levels[:len(row)]
		if m = len(row) &^ 7; m > 0 {
			grayBytesAVX2(&gray[0], &levels[0], m)
		}
	}
	for x, l := range row {
		p := out[3*x : 3*x+3 : 3*x+3]
		if isBoundary(row, below, x, l) {
			p[0], p[1], p[2] = boundaryRGB[0], boundaryRGB[1], boundaryRGB[2]
			continue
		}
		if palette == nil || l <= 0 {
			var v uint8
			if x < m {
				v = levels[x]
			} else {
				v = round8(255 * unit(float64(gray[x])))
			}
			p[0], p[1], p[2] = v, v, v
			continue
		}
		g := 255 * unit(float64(gray[x]))
		c := palette.Of(l)
		for k := range 3 {
			p[k] = round8((1-tintAlpha)*g + tintAlpha*float64(c[k]))
		}
	}
}

// colourRow is grayRow for a colour picture: each channel of pixel i0 +
// x mapped by the window opt.Lo..opt.Hi (scale = 1 / (Hi - Lo), 0 for an
// empty window) to 0..255.
func colourRow(out []byte, row, below []int32, opt OverlayOptions, i0 int, scale float64, palette *render.LabelColours) {
	out = out[:3*len(row)]
	for x, l := range row {
		p := out[3*x : 3*x+3 : 3*x+3]
		if isBoundary(row, below, x, l) {
			p[0], p[1], p[2] = boundaryRGB[0], boundaryRGB[1], boundaryRGB[2]
			continue
		}
		var base [3]float64
		for k := range 3 {
			base[k] = 255 * unit((float64(opt.Colour[k][i0+x])-opt.Lo)*scale)
		}
		if palette != nil && l > 0 {
			c := palette.Of(l)
			for k := range 3 {
				base[k] = (1-tintAlpha)*base[k] + tintAlpha*float64(c[k])
			}
		}
		for k := range 3 {
			p[k] = round8(base[k])
		}
	}
}

// round8 is uint8(math.Round(v)) for 0 <= v < 255.5 (half away from
// zero): int(v) truncates, and v - trunc(v) is exact for such v, so
// comparing it with 0.5 rounds as math.Round does, without its call.
func round8(v float64) uint8 {
	t := uint8(v)
	if v-float64(t) >= 0.5 {
		t++
	}
	return t
}

// EncodePreview writes an RGB PNG that shows a label map in colour:
// label 0 black, every other label its colour of render.ColourLabels, so
// labels that touch differ in colour. palette is that colouring when the
// caller has it already (nil: computed here). workers goroutines filter
// the rows (0: GOMAXPROCS); the bytes do not depend on their number.
func EncodePreview(w io.Writer, m labelmap.Map, palette *render.LabelColours, workers int) error {
	labels, width, height := m.Pix, m.Width, m.Height
	if width <= 0 || height <= 0 || len(labels) != width*height {
		return fmt.Errorf("preview: %d labels for a %dx%d image", len(labels), width, height)
	}
	if palette == nil {
		palette = render.ColourLabels(m)
	}
	return encodePNGRows(w, pngRows{width: width, height: height, bpp: 3, depth: 8, ctype: 2, flat: true, rows: func(y0, y1 int, dst []byte) {
		// A run of one label has one colour, looked up once.
		src := labels[y0*width : y1*width]
		for i := 0; i < len(src); {
			l, e := src[i], i+1
			for e < len(src) && src[e] == l {
				e++
			}
			var c [3]uint8
			if l > 0 {
				c = palette.Of(l)
			}
			for j := i; j < e; j++ {
				dst[3*j], dst[3*j+1], dst[3*j+2] = c[0], c[1], c[2]
			}
			i = e
		}
	}}, workers)
}
