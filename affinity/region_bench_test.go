package affinity

import (
	"fmt"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// BenchmarkAdjacency counts the shared boundaries of a labelling into
// squares of 18 x 18 pixels (about the superpixel size of the automatic
// count on generated nuclei) on 1, 4 and 16 megapixels, all cores.
func BenchmarkAdjacency(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			const side = 18
			nx := (n + side - 1) / side
			lab := make([]int32, n*n)
			for y := 0; y < n; y++ {
				for x := 0; x < n; x++ {
					lab[y*n+x] = int32(y/side*nx + x/side)
				}
			}
			for b.Loop() {
				Adjacency(labelmap.Map{Pix: lab, Width: n, Height: n}, nx*nx, 0)
			}
		})
	}
}

// BenchmarkSummarize is the per-superpixel area, centroid and mean of
// one feature plane over a labelling into squares of 18 x 18 pixels on
// 4 and 16 megapixels; cpu-s/op is the process's CPU time per call.
func BenchmarkSummarize(b *testing.B) {
	for _, n := range []int{2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			const side = 18
			nx := (n + side - 1) / side
			lab := make([]int32, n*n)
			for y := 0; y < n; y++ {
				for x := 0; x < n; x++ {
					lab[y*n+x] = int32(y/side*nx + x/side)
				}
			}
			f := blobImage(9, n, n, 0.03)
			c0 := cpuSeconds()
			for b.Loop() {
				Summarize(f, labelmap.Map{Pix: lab, Width: n, Height: n}, nx*nx)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}
