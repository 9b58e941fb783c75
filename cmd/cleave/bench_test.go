package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
	"golang.org/x/image/tiff"
)

// BenchmarkSegment1024Tiff is the whole command on a 1024x1024 16-bit TIFF
// nuclei scene with --superpixels 3000 --classes 2 --background dark
// (the engine issue's speed case): decode, features, SLIC, graph, cuts,
// classes, objects and every output written.
func BenchmarkSegment1024Tiff(b *testing.B) {
	dir := b.TempDir()
	sc := scenes.Nuclei(scenes.NucleiOptions{Width: 1024, Height: 1024, Seed: 500})
	path := filepath.Join(dir, "nuclei.tif")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	if err := tiff.Encode(f, sc.Image(), nil); err != nil {
		b.Fatal(err)
	}
	f.Close()
	args := []string{"segment", "--force", "--superpixels", "3000", "--classes", "2", "--background", "dark", "--out", filepath.Join(dir, "out"), path}
	benchRun(b, args)
}

// BenchmarkSegmentCoinsPixelKway is the whole command on the 152x192 coins
// photograph with a pixel graph and k-way cuts (the engine issue's second
// speed case; scipy's time on the same graph comes from
// testdata/eigen/scipy_compare.sh).
func BenchmarkSegmentCoinsPixelKway(b *testing.B) {
	img := filepath.Join("..", "..", "testdata", "eigen", "coins152x192.png")
	args := []string{"segment", "--force", "--superpixels", "0", "--radius", "5", "--sigma-i", "0.1", "--sigma-x", "4",
		"--method", "kway", "--segments", "6", "--out", filepath.Join(b.TempDir(), "out"), img}
	benchRun(b, args)
}

func benchRun(b *testing.B, args []string) {
	b.Helper()
	for i := 0; i < b.N; i++ {
		var stdout, stderr bytes.Buffer
		if code := run(context.Background(), args, &stdout, &stderr); code != exitOK {
			b.Fatalf("exit %d: %s", code, stderr.String())
		}
	}
}
