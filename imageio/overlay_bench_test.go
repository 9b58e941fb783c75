package imageio

import (
	"fmt"
	"io"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// BenchmarkEncodeOverlay draws and encodes the overlay (gray image,
// boundaries, tints, numbers) of a grid of 16 x 16 pixel objects every 24
// pixels on 1, 4 and 16 megapixels, all cores; cpu-s/op is the process's
// CPU time per call.
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
			c0 := cpuSeconds()
			for b.Loop() {
				if err := EncodeOverlay(io.Discard, display, labelmap.Map{Pix: labels, Width: n, Height: n}, OverlayOptions{Tint: true, Numbers: true}); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}

// BenchmarkEncodeLabels encodes the 16-bit label map and the preview of
// the same grid of objects as BenchmarkEncodeOverlay on 1, 4 and 16
// megapixels, all cores.
func BenchmarkEncodeLabels(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		labels := make([]int32, n*n)
		nx := n / 24
		for y := 0; y < n; y++ {
			for x := 0; x < n; x++ {
				if x%24 < 16 && y%24 < 16 && x/24 < nx && y/24 < nx {
					labels[y*n+x] = int32(y/24*nx + x/24 + 1)
				}
			}
		}
		b.Run(fmt.Sprintf("labels/%dx%d", n, n), func(b *testing.B) {
			c0 := cpuSeconds()
			for b.Loop() {
				if err := EncodeLabels(io.Discard, labelmap.Map{Pix: labels, Width: n, Height: n}, 0); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
		b.Run(fmt.Sprintf("preview/%dx%d", n, n), func(b *testing.B) {
			c0 := cpuSeconds()
			for b.Loop() {
				if err := EncodePreview(io.Discard, labelmap.Map{Pix: labels, Width: n, Height: n}, nil, 0); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}
