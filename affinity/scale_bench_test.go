package affinity

import "testing"

// The benchmarks report cpu-s/op, the process's CPU time (user + system)
// per call, steadier than the wall time on a shared machine.

// BenchmarkObjectScale2048 estimates the object scale of a 2048x2048
// single-plane scene (a few large bright disks on a ramp with noise), the
// frame size for which the automatic superpixel count needs it, on all
// cores.
func BenchmarkObjectScale2048(b *testing.B) {
	benchObjectScale(b, 2048, 0)
}

// BenchmarkObjectScale2048Workers1 is the same on one core.
func BenchmarkObjectScale2048Workers1(b *testing.B) {
	benchObjectScale(b, 2048, 1)
}

// BenchmarkObjectScale4096 is the 4096x4096 frame on all cores.
func BenchmarkObjectScale4096(b *testing.B) {
	benchObjectScale(b, 4096, 0)
}

func benchObjectScale(b *testing.B, n, workers int) {
	f := blobImage(9, n, n, 0.03)[0]
	b.ReportAllocs()
	c0 := cpuSeconds()
	for b.Loop() {
		ObjectScale(f, n, n, workers)
	}
	b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
}
