package imageio

import (
	"bytes"
	"fmt"
	"image"
	"image/png"
	"math/rand/v2"
	"testing"
)

// TestEncodePNGFastMatchesLibrary: encodePNGFast writes the very bytes of
// the Go standard library's png.Encoder at BestSpeed (the reference) for
// the image types cleave writes, over sizes that cross the filter bands
// and the compressor's 64 KiB windows, smooth and noisy content (so every
// filter type is chosen somewhere), sub-images, and the fallbacks.
func TestEncodePNGFastMatchesLibrary(t *testing.T) {
	rng := rand.New(rand.NewPCG(11400, 2))
	fill := func(pix []byte, w, h, stride, bpp int, kind int) {
		for y := 0; y < h; y++ {
			for x := 0; x < w*bpp; x++ {
				var v byte
				switch kind {
				case 0: // noise
					v = byte(rng.IntN(256))
				case 1: // smooth ramps
					v = byte(x/bpp + 2*y)
				default: // blocks with a little noise
					v = byte((x/bpp/7+y/5)*37) + byte(rng.IntN(3))
				}
				pix[y*stride+x] = v
			}
		}
	}
	sizes := [][2]int{{1, 1}, {1, 40}, {40, 1}, {3, 17}, {17, 3}, {97, 33}, {257, 129}, {600, 450}}
	for _, sz := range sizes {
		for kind := 0; kind < 3; kind++ {
			w, h := sz[0], sz[1]
			rgba := image.NewRGBA(image.Rect(0, 0, w, h))
			fill(rgba.Pix, w, h, rgba.Stride, 4, kind)
			for i := 3; i < len(rgba.Pix); i += 4 {
				rgba.Pix[i] = 255
			}
			g16 := image.NewGray16(image.Rect(0, 0, w, h))
			fill(g16.Pix, w, h, g16.Stride, 2, kind)
			imgs := []image.Image{rgba, g16}
			if w > 2 && h > 3 {
				imgs = append(imgs, rgba.SubImage(image.Rect(1, 1, w-1, h)), g16.SubImage(image.Rect(1, 2, w, h-1)))
			}
			for k, m := range imgs {
				t.Run(fmt.Sprintf("%dx%d/kind%d/img%d", w, h, kind, k), func(t *testing.T) {
					var want, got bytes.Buffer
					enc := png.Encoder{CompressionLevel: png.BestSpeed}
					if err := enc.Encode(&want, m); err != nil {
						t.Fatal(err)
					}
					for _, workers := range []int{1, 3} {
						got.Reset()
						if err := encodePNGFast(&got, m, workers); err != nil {
							t.Fatal(err)
						}
						if !bytes.Equal(got.Bytes(), want.Bytes()) {
							t.Fatalf("workers %d: %d bytes differ from the library's %d", workers, got.Len(), want.Len())
						}
					}
				})
			}
		}
	}
	// Fallbacks: a translucent RGBA and an 8-bit gray image go to the
	// library itself.
	tr := image.NewRGBA(image.Rect(0, 0, 5, 4))
	tr.Pix[3] = 7
	g8 := image.NewGray(image.Rect(0, 0, 5, 4))
	for _, m := range []image.Image{tr, g8} {
		var want, got bytes.Buffer
		enc := png.Encoder{CompressionLevel: png.BestSpeed}
		if err := enc.Encode(&want, m); err != nil {
			t.Fatal(err)
		}
		if err := encodePNGFast(&got, m, 2); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want.Bytes()) {
			t.Fatalf("%T: fallback differs from the library", m)
		}
	}
}
