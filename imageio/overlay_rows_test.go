package imageio

import (
	"bytes"
	"fmt"
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/imageio/render"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// overlayPicture draws the overlay the way EncodeOverlay drew it before
// its rows were written straight into the encoder's RGB rows: the whole
// picture in an image.RGBA, pixel by pixel, then every number drawn on
// it with render.DrawNumber.
func overlayPicture(display []float32, m labelmap.Map, opt OverlayOptions) *image.RGBA {
	labels, width, height := m.Pix, m.Width, m.Height
	img := image.NewRGBA(image.Rect(0, 0, width, height))
	palette := opt.Palette
	if opt.Tint && palette == nil {
		palette = render.ColourLabels(m)
	}
	if !opt.Tint {
		palette = nil
	}
	scale := 0.0
	if opt.Hi > opt.Lo {
		scale = 1 / (opt.Hi - opt.Lo)
	}
	clamp := func(v float64) float64 {
		if !(v >= 0) {
			return 0
		}
		return math.Min(v, 1)
	}
	for y := range height {
		for x := range width {
			i := y*width + x
			l := labels[i]
			p := img.Pix[img.PixOffset(x, y):]
			p[3] = 255
			if (x+1 < width && labels[i+1] != l) || (y+1 < height && labels[i+width] != l) {
				p[0], p[1], p[2] = 255, 170, 0
				continue
			}
			var base [3]float64
			if len(opt.Colour) == 3 {
				for k := range 3 {
					base[k] = 255 * clamp((float64(opt.Colour[k][i])-opt.Lo)*scale)
				}
			} else {
				g := 255 * clamp(float64(display[i]))
				base = [3]float64{g, g, g}
			}
			if palette != nil && l > 0 {
				c := palette.Of(l)
				for k := range 3 {
					base[k] = 0.7*base[k] + 0.3*float64(c[k])
				}
			}
			for k := range 3 {
				p[k] = uint8(math.Round(base[k]))
			}
		}
	}
	if opt.Numbers {
		for _, n := range PlaceNumbers(m) {
			render.DrawNumber(img, int(n.Label), n.X, n.Y, n.Scale, [3]uint8{255, 255, 255}, [3]uint8{20, 20, 20})
		}
	}
	return img
}

// TestOverlayRowsMatchPicture encodes overlays of random discs (numbers
// at scales 1 and 2, gray and colour, tinted or not, NaN and
// out-of-range display values, sizes that split into several bands)
// and checks every pixel, decoded by the standard library's image/png,
// against overlayPicture.
func TestOverlayRowsMatchPicture(t *testing.T) {
	rng := rand.New(rand.NewPCG(77, 5))
	for _, size := range [][2]int{{97, 61}, {700, 650}, {1300, 420}} {
		w, h := size[0], size[1]
		labels := make([]int32, w*h)
		for k := range 40 {
			cx, cy, r := rng.IntN(w), rng.IntN(h), 3+rng.IntN(min(w, h)/5)
			for y := max(0, cy-r); y < min(h, cy+r+1); y++ {
				for x := max(0, cx-r); x < min(w, cx+r+1); x++ {
					if (x-cx)*(x-cx)+(y-cy)*(y-cy) <= r*r {
						labels[y*w+x] = int32(k + 1)
					}
				}
			}
		}
		display := make([]float32, w*h)
		colour := [][]float32{make([]float32, w*h), make([]float32, w*h), make([]float32, w*h)}
		for i := range display {
			display[i] = float32(rng.Float64()*1.2 - 0.1)
			for k := range colour {
				colour[k][i] = float32(rng.IntN(4096))
			}
		}
		display[3], display[w+5] = float32(math.NaN()), float32(math.Inf(1))
		colour[1][7] = float32(math.NaN())
		m := labelmap.Map{Pix: labels, Width: w, Height: h}
		for _, opt := range []OverlayOptions{
			{Numbers: true},
			{Tint: true, Numbers: true, Workers: 1},
			{Tint: true, Numbers: true, Palette: render.ColourLabels(m)},
			{Colour: colour, Lo: 100, Hi: 3900, Tint: true, Numbers: true},
			{Colour: colour, Lo: 5, Hi: 5},
		} {
			name := fmt.Sprintf("%dx%d tint %v colour %v", w, h, opt.Tint, opt.Colour != nil)
			var buf bytes.Buffer
			if err := EncodeOverlay(&buf, display, m, opt); err != nil {
				t.Fatal(err)
			}
			got, err := png.Decode(&buf)
			if err != nil {
				t.Fatalf("%s: image/png: %v", name, err)
			}
			want := overlayPicture(display, m, opt)
			for y := range h {
				for x := range w {
					r, g, b, _ := got.At(x, y).RGBA()
					p := want.Pix[want.PixOffset(x, y):]
					if uint8(r>>8) != p[0] || uint8(g>>8) != p[1] || uint8(b>>8) != p[2] {
						t.Fatalf("%s: pixel (%d, %d) is (%d, %d, %d), the picture's (%d, %d, %d)", name, x, y, r>>8, g>>8, b>>8, p[0], p[1], p[2])
					}
				}
			}
		}
	}
}
