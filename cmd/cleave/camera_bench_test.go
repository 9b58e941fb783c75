package main

import (
	"fmt"
	"os"
	"path/filepath"
	"runtime/debug"
	"runtime/metrics"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

// BenchmarkSegmentCamera is the whole command on generated camera-sized
// frames, the camera-frame case of the speed issue: a 16-bit TIFF nuclei
// scene (scenes.Generate "nuclei", seed 14500, the frames of the README's table) of 1, 4 and 16 megapixels,
// `segment --classes 2 --background dark` at the default (automatic)
// superpixel count, every output written; cpu-s/op is the process's CPU
// time (user + system) per run, steadier than the wall time on a shared
// machine; peak-MiB is the largest memory the Go runtime held from the
// operating system during the runs (peakMemory), the part of the peak
// RSS that the collector's target decides. Set CLEAVE_BENCH_SEED to run
// another seed.
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
			peak := peakMemory()
			benchRun(b, args)
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
			b.ReportMetric(float64(peak())/(1<<20), "peak-MiB")
		})
	}
}

// peakMemory samples, every 2 ms until the returned function is called,
// the memory the Go runtime holds from the operating system and has not
// returned (runtime/metrics: /memory/classes/total:bytes less
// /memory/classes/heap/released:bytes), after debug.FreeOSMemory has
// returned what earlier work (the scene's generation) left; the function stops the sampling and returns
// the largest sample. A sample can miss a peak shorter than 2 ms.
func peakMemory() (stop func() uint64) {
	debug.FreeOSMemory()
	s := []metrics.Sample{{Name: "/memory/classes/total:bytes"}, {Name: "/memory/classes/heap/released:bytes"}}
	read := func() uint64 {
		metrics.Read(s)
		return s[0].Value.Uint64() - s[1].Value.Uint64()
	}
	done := make(chan struct{})
	result := make(chan uint64)
	go func() {
		peak := read()
		t := time.NewTicker(2 * time.Millisecond)
		defer t.Stop()
		for {
			select {
			case <-done:
				result <- max(peak, read())
				return
			case <-t.C:
				peak = max(peak, read())
			}
		}
	}()
	return func() uint64 {
		close(done)
		return <-result
	}
}
