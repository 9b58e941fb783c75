package main

import (
	"fmt"
	"os"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

// BenchmarkSegmentCamera is the whole command on generated camera-sized
// frames, the camera-frame case of the speed issue: a 16-bit TIFF nuclei
// scene (scenes.Generate "nuclei", seed 14500, the frames of the README's table) of 1, 4 and 16 megapixels,
// `segment --classes 2 --background dark` at the default (automatic)
// superpixel count, every output written; cpu-s/op is the process's CPU
// time (user + system) per run, steadier than the wall time on a shared
// machine. Set CLEAVE_BENCH_SEED to run another seed.
func BenchmarkSegmentCamera(b *testing.B) {
	seed := uint64(14500)
	if s := os.Getenv("CLEAVE_BENCH_SEED"); s != "" {
		if _, err := fmt.Sscan(s, &seed); err != nil {
			b.Fatalf("CLEAVE_BENCH_SEED %q: %v", s, err)
		}
	}
	for _, size := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dMP", size*size>>20), func(b *testing.B) {
			dir := b.TempDir()
			sc, err := scenes.Generate("nuclei", size, size, seed, 16)
			if err != nil {
				b.Fatal(err)
			}
			path := filepath.Join(dir, "frame.tif")
			if err := scenes.WriteTIFF(path, sc.Image()); err != nil {
				b.Fatal(err)
			}
			args := []string{"segment", "--force", "--classes", "2", "--background", "dark", "--out", filepath.Join(dir, "out"), path}
			b.ResetTimer()
			c0 := cpuSeconds()
			benchRun(b, args)
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}
