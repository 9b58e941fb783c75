package imageio

import (
	"bytes"
	"fmt"
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"slices"
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
// out-of-range display values, sizes that split into several bands),
// with and without the AVX2 kernels, and checks every pixel, decoded by the standard library's image/png,
// against overlayPicture.
func TestOverlayRowsMatchPicture(t *testing.T) {
	rng := rand.New(rand.NewPCG(77, 5))
	avx2 := useFilterAVX2 // the AVX2 kernels where the machine has them, and the Go loops
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
			for _, kernels := range []bool{avx2, false} {
				name := fmt.Sprintf("%dx%d tint %v colour %v kernels %v", w, h, opt.Tint, opt.Colour != nil, kernels)
				useFilterAVX2 = kernels
				var buf bytes.Buffer
				err := EncodeOverlay(&buf, display, m, opt)
				useFilterAVX2 = avx2
				if err != nil {
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
}

// placeNumbersOld is PlaceNumbers as it was before its sums were taken
// run by run (as on main at 608075e), kept verbatim for
// TestPlaceNumbersMatchesFormer.
func placeNumbersOld(m labelmap.Map) []NumberPlace {
	labels, width, height := m.Pix, m.Width, m.Height
	type acc struct {
		n      int
		sx, sy float64
	}
	sums := map[int32]*acc{}
	for i, l := range labels {
		if l <= 0 {
			continue
		}
		a := sums[l]
		if a == nil {
			a = &acc{}
			sums[l] = a
		}
		a.n++
		a.sx += float64(i % width)
		a.sy += float64(i / width)
	}
	ids := make([]int32, 0, len(sums))
	for l := range sums {
		ids = append(ids, l)
	}
	slices.Sort(ids)
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
		a := sums[l]
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

// TestPlaceNumbersMatchesFormer checks PlaceNumbers against
// placeNumbersOld on random discs: small and large labels (the table and
// the map), negative labels, numbers at scales 1 and 2.
func TestPlaceNumbersMatchesFormer(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 60))
	for trial := range 9 {
		w, h := 100+rng.IntN(1300), 100+rng.IntN(700)
		labels := make([]int32, w*h)
		for k := range 60 {
			cx, cy, r := rng.IntN(w), rng.IntN(h), 2+rng.IntN(40)
			l := int32(k + 1)
			if trial%3 == 1 && k%5 == 0 {
				l = -l
			}
			if trial%3 == 2 {
				l = int32(2_000_000_000 - k*7)
			}
			for y := max(cy-r, 0); y < min(cy+r+1, h); y++ {
				for x := max(cx-r, 0); x < min(cx+r+1, w); x++ {
					if (x-cx)*(x-cx)+(y-cy)*(y-cy) <= r*r {
						labels[y*w+x] = l
					}
				}
			}
		}
		m := labelmap.Map{Pix: labels, Width: w, Height: h}
		got, want := PlaceNumbers(m), placeNumbersOld(m)
		if len(want) == 0 || !slices.Equal(got, want) {
			t.Fatalf("trial %d (%dx%d): places\n%v\nformerly\n%v", trial, w, h, got, want)
		}
	}
}

// TestPreviewRunsMatchPalette checks every pixel of the preview, decoded
// by the standard library's image/png, against the colour of its label
// (render.ColourLabels; black for 0 and negative labels) on random discs
// large enough for several bands of rows.
func TestPreviewRunsMatchPalette(t *testing.T) {
	rng := rand.New(rand.NewPCG(50, 2))
	w, h := 900, 700
	labels := make([]int32, w*h)
	for k := range 80 {
		cx, cy, r := rng.IntN(w), rng.IntN(h), 2+rng.IntN(60)
		l := int32(k + 1)
		if k%9 == 0 {
			l = -l
		}
		for y := max(cy-r, 0); y < min(cy+r+1, h); y++ {
			for x := max(cx-r, 0); x < min(cx+r+1, w); x++ {
				if (x-cx)*(x-cx)+(y-cy)*(y-cy) <= r*r {
					labels[y*w+x] = l
				}
			}
		}
	}
	m := labelmap.Map{Pix: labels, Width: w, Height: h}
	palette := render.ColourLabels(m)
	var buf bytes.Buffer
	if err := EncodePreview(&buf, m, palette, 0); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(&buf)
	if err != nil {
		t.Fatal(err)
	}
	for y := range h {
		for x := range w {
			l := labels[y*w+x]
			var want [3]uint8
			if l > 0 {
				want = palette.Of(l)
			}
			r, g, b, _ := img.At(x, y).RGBA()
			if got := [3]uint8{uint8(r >> 8), uint8(g >> 8), uint8(b >> 8)}; got != want {
				t.Fatalf("pixel (%d, %d), label %d: %v, want %v", x, y, l, got, want)
			}
		}
	}
}
