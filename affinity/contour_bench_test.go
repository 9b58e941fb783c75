package affinity

import (
	"fmt"
	"testing"
)

// BenchmarkEdgeEnergy is the edge energy (Gaussian derivative jet at
// ContourScale, ridge strength) of square single-plane scenes of 1, 4
// and 16 megapixels on all cores: the contour cue of the region graph
// and of the class and object stages. cpu-s/op is the process's CPU
// time per call (user + system), steadier than the wall time on a shared
// machine.
func BenchmarkEdgeEnergy(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			f := blobImage(9, n, n, 0.03)[0]
			b.SetBytes(int64(4 * n * n))
			c0 := cpuSeconds()
			for b.Loop() {
				EdgeEnergy(f, n, n, ContourScale, 0)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}
