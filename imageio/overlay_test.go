package imageio

import (
	"bytes"
	"image"
	"image/png"
	"io"
	"math"
	"testing"

	"github.com/cleave-seg/cleave/imageio/render"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

func decodeRGB(t *testing.T, buf *bytes.Buffer) image.Image {
	t.Helper()
	if ct := buf.Bytes()[25]; ct != 2 && ct != 6 {
		t.Fatalf("PNG colour type %d; want 2 (RGB) or 6 (RGBA)", ct)
	}
	img, err := png.Decode(buf)
	if err != nil {
		t.Fatal(err)
	}
	return img
}

func rgbAt(img image.Image, x, y int) [3]uint32 {
	r, g, b, _ := img.At(x, y).RGBA()
	return [3]uint32{r >> 8, g >> 8, b >> 8}
}

// TestEncodeOverlayGray: decoded by the standard library's image/png, the
// overlay shows the display as gray, a one-pixel amber boundary on the
// left side of a vertical region edge, tinted objects and untinted
// background.
func TestEncodeOverlayGray(t *testing.T) {
	const w, h = 4, 2
	display := []float32{0, 0.5, 1, 0.25, 0.2, 0.4, 0.6, 0.8}
	labels := []int32{0, 0, 3, 3, 0, 0, 3, 3}
	for _, tint := range []bool{false, true} {
		var buf bytes.Buffer
		if err := EncodeOverlay(&buf, display, labelmap.Map{Pix: labels, Width: w, Height: h}, OverlayOptions{Tint: tint}); err != nil {
			t.Fatal(err)
		}
		img := decodeRGB(t, &buf)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				c := rgbAt(img, x, y)
				gray := uint32(display[y*w+x]*255 + 0.5)
				switch {
				case x == 1: // label 0 next to label 3 on its right
					if c != [3]uint32{255, 170, 0} {
						t.Errorf("tint %v (%d,%d): %v; want the boundary colour", tint, x, y, c)
					}
				case labels[y*w+x] == 0 || !tint:
					if c != [3]uint32{gray, gray, gray} {
						t.Errorf("tint %v (%d,%d): %v; want gray %d", tint, x, y, c, gray)
					}
				default:
					if c[0] == c[1] && c[1] == c[2] {
						t.Errorf("tint %v (%d,%d): object not tinted", tint, x, y)
					}
				}
			}
		}
	}
	if err := EncodeOverlay(io.Discard, make([]float32, 4), labelmap.Map{Pix: make([]int32, 3), Width: 2, Height: 2}, OverlayOptions{}); err == nil {
		t.Error("mismatched sizes accepted")
	}
	if err := EncodeOverlay(io.Discard, make([]float32, 4), labelmap.Map{Pix: make([]int32, 4), Width: 2, Height: 2}, OverlayOptions{Colour: [][]float32{{1}, {1}, {1}}}); err == nil {
		t.Error("mismatched colour planes accepted")
	}
}

// TestEncodeOverlayKeepsColour: with the colour planes, a pixel away from
// boundaries shows the input's colour through the window (value - lo) /
// (hi - lo) * 255, rounded (worked by hand: window 0..200, sample 100 ->
// 127.5 -> 128); untinted, the colour is exact; tinted, it is blended
// 0.7 : 0.3 with the preview's colour of the label.
func TestEncodeOverlayKeepsColour(t *testing.T) {
	const w, h = 4, 4
	r, g, b := make([]float32, w*h), make([]float32, w*h), make([]float32, w*h)
	for i := range r {
		r[i], g[i] = 200, 100
	}
	labels := make([]int32, w*h)
	for _, i := range []int{5, 6, 9, 10} { // a 2 x 2 object; pixel (1, 1) is off its boundary
		labels[i] = 1
	}
	display := make([]float32, w*h)
	opt := OverlayOptions{Colour: [][]float32{r, g, b}, Lo: 0, Hi: 200}
	var buf bytes.Buffer
	if err := EncodeOverlay(&buf, display, labelmap.Map{Pix: labels, Width: w, Height: h}, opt); err != nil {
		t.Fatal(err)
	}
	img := decodeRGB(t, &buf)
	if c := rgbAt(img, 3, 3); c != [3]uint32{255, 128, 0} {
		t.Errorf("background pixel %v; want the input's colour 255 128 0", c)
	}
	if c := rgbAt(img, 1, 1); c != [3]uint32{255, 128, 0} {
		t.Errorf("object pixel, untinted, %v; want 255 128 0", c)
	}
	opt.Tint = true
	buf.Reset()
	if err := EncodeOverlay(&buf, display, labelmap.Map{Pix: labels, Width: w, Height: h}, opt); err != nil {
		t.Fatal(err)
	}
	img = decodeRGB(t, &buf)
	p := render.ColourLabels(labelmap.Map{Pix: labels, Width: w, Height: h}).Of(1)
	base := [3]float64{255, 127.5, 0}
	var want [3]uint32
	for k := range 3 {
		want[k] = uint32(math.Round(0.7*base[k] + 0.3*float64(p[k])))
	}
	if c := rgbAt(img, 1, 1); c != want {
		t.Errorf("tinted object pixel %v; want %v", c, want)
	}
}

// TestColourWindow: one window over all channels, from the 0.1 and 99.9
// percentiles (numpy.percentile's default definition, worked by hand:
// for 0..999, h = 0.999 and 998.001, so 0.999 and 998.001; for the 999
// finite halves 0, 0.5, 1, 2, ... 499.5, h = 0.998, so 0.499), NaN left
// out.
func TestColourWindow(t *testing.T) {
	a := make([]float32, 1000)
	b := make([]float32, 1000)
	for i := range a {
		a[i] = float32(i)
		b[i] = float32(i) / 2
	}
	b[3] = float32(math.NaN())
	lo, hi := ColourWindow([][]float32{a, b, b}, 1)
	if math.Abs(lo-0.499) > 1e-6 || math.Abs(hi-998.001) > 1e-6 {
		t.Errorf("window %g..%g; want 0.499 (b's low percentile, below a's) ..998.001", lo, hi)
	}
}

// TestOverlayNumbers: each object large enough carries its label at its
// centroid: the ink drawn equals render's glyphs of the label at the
// place PlaceNumbers gives, centred on the centroid (mean pixel
// coordinates, worked out by hand for rectangles); a small object gets
// no number.
func TestOverlayNumbers(t *testing.T) {
	const w, h = 120, 60
	labels := make([]int32, w*h)
	fill := func(l int32, x0, y0, x1, y1 int) {
		for y := y0; y < y1; y++ {
			for x := x0; x < x1; x++ {
				labels[y*w+x] = l
			}
		}
	}
	fill(7, 10, 10, 41, 31)    // centroid (25, 20)
	fill(128, 60, 20, 101, 51) // centroid (80, 35)
	fill(9, 110, 5, 114, 9)    // 4 x 4: too small
	places := PlaceNumbers(labelmap.Map{Pix: labels, Width: w, Height: h})
	if len(places) != 2 || places[0].Label != 7 || places[1].Label != 128 {
		t.Fatalf("places %+v; want labels 7 and 128", places)
	}
	want := map[int32][2]float64{7: {25, 20}, 128: {80, 35}}
	for _, p := range places {
		c := want[p.Label]
		if p.CX != c[0] || p.CY != c[1] {
			t.Errorf("label %d: centroid (%g, %g); want (%g, %g)", p.Label, p.CX, p.CY, c[0], c[1])
		}
		bw, bh := render.NumberSize(int(p.Label), p.Scale)
		mx, my := float64(p.X)+float64(bw-1)/2, float64(p.Y)+float64(bh-1)/2
		if math.Abs(mx-c[0]) > 1 || math.Abs(my-c[1]) > 1 {
			t.Errorf("label %d: number box centred at (%g, %g); want within a pixel of (%g, %g)", p.Label, mx, my, c[0], c[1])
		}
	}
	display := make([]float32, w*h)
	var buf bytes.Buffer
	if err := EncodeOverlay(&buf, display, labelmap.Map{Pix: labels, Width: w, Height: h}, OverlayOptions{Numbers: true}); err != nil {
		t.Fatal(err)
	}
	img := decodeRGB(t, &buf)
	for _, p := range places {
		digits := []int{}
		for n := int(p.Label); ; n /= 10 {
			digits = append([]int{n % 10}, digits...)
			if n < 10 {
				break
			}
		}
		for k, d := range digits {
			for gy := range 7 {
				for gx := range 5 {
					x, y := p.X+(k*6+gx)*p.Scale, p.Y+gy*p.Scale
					white := rgbAt(img, x, y) == [3]uint32{255, 255, 255}
					if white != render.DigitInk(d, gx, gy) {
						t.Errorf("label %d digit %d: pixel (%d, %d) white %v; want ink %v", p.Label, d, x, y, white, !white)
					}
				}
			}
		}
	}
	for y := 0; y < h; y++ {
		for x := 100; x < w; x++ {
			if c := rgbAt(img, x, y); c == [3]uint32{255, 255, 255} {
				t.Fatalf("white ink at (%d, %d) near the small object", x, y)
			}
		}
	}
}

// TestEncodePreview: label 0 is black, every label has a colour of the
// palette, and labels that touch (side or corner) differ.
func TestEncodePreview(t *testing.T) {
	const w, h = 40, 30
	labels := make([]int32, w*h)
	for y := range h {
		for x := range w {
			if x%10 != 0 { // columns of tiles with background lines between
				labels[y*w+x] = int32(1 + x/10 + 4*(y/6))
			}
		}
	}
	var buf bytes.Buffer
	if err := EncodePreview(&buf, labelmap.Map{Pix: labels, Width: w, Height: h}, nil, 0); err != nil {
		t.Fatal(err)
	}
	img := decodeRGB(t, &buf)
	colourOf := map[int32][3]uint32{}
	for y := range h {
		for x := range w {
			l, c := labels[y*w+x], rgbAt(img, x, y)
			if l == 0 {
				if c != [3]uint32{} {
					t.Fatalf("label 0 at (%d, %d) is %v; want black", x, y, c)
				}
				continue
			}
			if c == [3]uint32{} {
				t.Fatalf("label %d at (%d, %d) is black", l, x, y)
			}
			if prev, ok := colourOf[l]; ok && prev != c {
				t.Fatalf("label %d has two colours", l)
			}
			colourOf[l] = c
		}
	}
	for y := range h - 1 {
		for x := range w {
			a, b := labels[y*w+x], labels[(y+1)*w+x]
			if a != 0 && b != 0 && a != b && colourOf[a] == colourOf[b] {
				t.Errorf("touching labels %d and %d share colour %v", a, b, colourOf[a])
			}
		}
	}
	if err := EncodePreview(io.Discard, labelmap.Map{Pix: make([]int32, 3), Width: 2, Height: 2}, nil, 0); err == nil {
		t.Error("mismatched sizes accepted")
	}
}
