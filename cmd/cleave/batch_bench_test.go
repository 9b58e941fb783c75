package main

import (
	"fmt"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/examples/scenes"
)

// BenchmarkBatch200 is issue 4's throughput case: 200 generated 512x512
// 8-bit images (nuclei and plates alternating) through 'cleave batch' with
// the default superpixels and --classes 2, every output written, with
// --jobs 1 and --jobs 2 (the images/s metric is the figure to read), and
// the rerun of the same command when every record is up to date. The
// images are generated once, before the sub-benchmarks.
func BenchmarkBatch200(b *testing.B) {
	in := b.TempDir()
	for k := range 200 {
		var sc *scenes.Scene
		if k%2 == 0 {
			sc = scenes.Nuclei(scenes.NucleiOptions{Width: 512, Height: 512, BitDepth: 8, Seed: uint64(3000 + k)})
		} else {
			sc = scenes.Plate(scenes.PlateOptions{Width: 512, Height: 512, BitDepth: 8, Seed: uint64(3000 + k)})
		}
		if err := scenes.WritePNG(filepath.Join(in, fmt.Sprintf("scene-%03d.png", k)), sc.Image()); err != nil {
			b.Fatal(err)
		}
	}
	batch := func(b *testing.B, out, jobs string) {
		code, _, stderr := runCleave("batch", "-q", "--classes", "2", "--jobs", jobs, "--out", out, in)
		if code != exitOK {
			b.Fatalf("exit %d: %s", code, stderr)
		}
	}
	for _, jobs := range []string{"1", "2"} {
		b.Run("jobs="+jobs, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				batch(b, filepath.Join(b.TempDir(), "out"), jobs)
			}
			b.ReportMetric(float64(200*b.N)/b.Elapsed().Seconds(), "images/s")
		})
	}
	b.Run("rerun", func(b *testing.B) {
		out := filepath.Join(b.TempDir(), "out")
		batch(b, out, "0")
		b.ResetTimer()
		for i := 0; i < b.N; i++ {
			batch(b, out, "0")
		}
	})
}
