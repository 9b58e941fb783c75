package main

import (
	"fmt"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

// BenchmarkBatch200 is issue 4's throughput case: 200 generated 512x512
// 8-bit images (nuclei and plates alternating) through 'cleave batch' with
// the default superpixels and --classes 2, every output written, with
// --jobs 1 and 2 (the images/s metric is the figure to read, beside
// cpu-s/image, the process's user plus system CPU time an image), and
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
	batch := func(b *testing.B, out string, flags ...string) {
		args := append(append([]string{"batch", "-q", "--classes", "2"}, flags...), "--out", out, in)
		if code, _, stderr := runCleave(args...); code != exitOK {
			b.Fatalf("exit %d: %s", code, stderr)
		}
	}
	// jobs=1 gives its one image both cores (--workers 2); jobs=1,workers=1
	// is one core, the base of the scaling over files.
	for _, c := range []struct{ name, jobs, workers string }{{"jobs=1", "1", "0"}, {"jobs=1,workers=1", "1", "1"}, {"jobs=2", "2", "0"}} {
		b.Run(c.name, func(b *testing.B) {
			c0 := cpuSeconds()
			for i := 0; i < b.N; i++ {
				batch(b, filepath.Join(b.TempDir(), "out"), "--jobs", c.jobs, "--workers", c.workers)
			}
			b.ReportMetric(float64(200*b.N)/b.Elapsed().Seconds(), "images/s")
			b.ReportMetric((cpuSeconds()-c0)/float64(200*b.N), "cpu-s/image")
		})
	}
	b.Run("rerun", func(b *testing.B) {
		out := filepath.Join(b.TempDir(), "out")
		batch(b, out)
		b.ResetTimer()
		for i := 0; i < b.N; i++ {
			batch(b, out)
		}
	})
}
