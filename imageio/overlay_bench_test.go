package imageio

import (
	"fmt"
	"io"
	"testing"
)

// BenchmarkEncodeOverlay draws and encodes the overlay (gray image,
// boundaries, tints, numbers) of a grid of 16 x 16 pixel objects every 24
// pixels on 1, 4 and 16 megapixels, all cores.
func BenchmarkEncodeOverlay(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			display := make([]float32, n*n)
			labels := make([]int32, n*n)
			nx := n / 24
			for y := 0; y < n; y++ {
				for x := 0; x < n; x++ {
					i := y*n + x
					display[i] = float32(x^y) / float32(2*n)
					if x%24 < 16 && y%24 < 16 && x/24 < nx && y/24 < nx {
						labels[i] = int32(y/24*nx + x/24 + 1)
					}
				}
			}
			for b.Loop() {
				if err := EncodeOverlay(io.Discard, n, n, display, labels, OverlayOptions{Tint: true, Numbers: true}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
