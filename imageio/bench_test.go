package imageio

import (
	"image"
	"os"
	"path/filepath"
	"testing"

	"golang.org/x/image/tiff"
)

// writeGray16TIFF writes a 1024x1024 16-bit gray TIFF (x/image/tiff
// encoder, uncompressed) with a gradient, discs and noise.
func writeGray16TIFF(b *testing.B) string {
	b.Helper()
	const n = 1024
	img := image.NewGray16(image.Rect(0, 0, n, n))
	seed := uint32(12345)
	for y := 0; y < n; y++ {
		for x := 0; x < n; x++ {
			seed = seed*1664525 + 1013904223 // LCG (Numerical Recipes)
			v := 8000 + 20*x + int(seed>>24)*8
			if dx, dy := x%128-64, y%128-64; dx*dx+dy*dy < 900 {
				v += 20000
			}
			i := img.PixOffset(x, y)
			img.Pix[i], img.Pix[i+1] = uint8(v>>8), uint8(v)
		}
	}
	path := filepath.Join(b.TempDir(), "bench.tif")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	if err := tiff.Encode(f, img, nil); err != nil {
		b.Fatal(err)
	}
	if err := f.Close(); err != nil {
		b.Fatal(err)
	}
	return path
}

func BenchmarkLoad1024Gray16TIFF(b *testing.B) {
	path := writeGray16TIFF(b)
	b.ResetTimer()
	for b.Loop() {
		if _, err := Load(path, LoadOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkMakeFeatures1024(b *testing.B) {
	im, err := Load(writeGray16TIFF(b), LoadOptions{})
	if err != nil {
		b.Fatal(err)
	}
	opt := FeatureOptions{Channel: -1, Flatten: 30}
	b.ResetTimer()
	for b.Loop() {
		if _, err := MakeFeatures(im, opt, 0); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkLoadAndFeatures1024 is the whole input stage for a 1024x1024
// 16-bit TIFF with default features (percentile normalization, no flatten).
func BenchmarkLoadAndFeatures1024(b *testing.B) {
	path := writeGray16TIFF(b)
	b.ResetTimer()
	for b.Loop() {
		im, err := Load(path, LoadOptions{})
		if err != nil {
			b.Fatal(err)
		}
		if _, err := MakeFeatures(im, FeatureOptions{Channel: -1}, 0); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkMakeFeaturesLab1024(b *testing.B) {
	im := randomRGB16(1024, 1024, 1)
	opt := FeatureOptions{Space: SpaceLab, Channel: -1}
	b.ResetTimer()
	for b.Loop() {
		if _, err := MakeFeatures(im, opt, 0); err != nil {
			b.Fatal(err)
		}
	}
}
