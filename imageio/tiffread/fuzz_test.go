package tiffread

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"testing"
)

// FuzzRead feeds arbitrary bytes to Open and ReadSample (seeded with the
// variants of testdata/tiff): every page up to 4, every sample up to 4,
// as float32 and as int32, must give values or an error, never a panic
// or an allocation beyond what the page's size allows.
// Run with: go test -fuzz=FuzzRead ./imageio/tiffread
func FuzzRead(f *testing.F) {
	paths, err := filepath.Glob(filepath.Join(testdata, "*.tif"))
	if err != nil || len(paths) == 0 {
		f.Fatalf("no seeds in %s: %v", testdata, err)
	}
	for _, p := range paths {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		tf, err := Open(bytes.NewReader(data), int64(len(data)))
		if err != nil {
			return
		}
		for i, p := range tf.Pages {
			if i == 4 {
				break
			}
			if int64(p.Width)*int64(p.Height) > 1<<18 {
				continue // the caller's megapixel limit
			}
			_ = p.ReadDescription()
			for s := 0; s < min(p.SamplesPerPixel, 4); s++ {
				_ = ReadSample(context.Background(), p, s, make([]float32, p.Width*p.Height))
				_ = ReadSample(context.Background(), p, s, make([]int32, p.Width*p.Height))
			}
		}
	})
}
