package imageio

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// FuzzDecode feeds arbitrary bytes to Decode (seeded with the committed
// reference files): it must return an image or an error, never panic, and
// a decoded image must be self-consistent with finite features in [0, 1].
// Run with: go test -fuzz=FuzzDecode ./imageio
func FuzzDecode(f *testing.F) {
	entries, err := os.ReadDir(testdata)
	if err != nil {
		f.Fatal(err)
	}
	for _, e := range entries {
		if _, ok := formatOfExt[filepath.Ext(e.Name())]; !ok {
			continue
		}
		b, err := os.ReadFile(filepath.Join(testdata, e.Name()))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	// TIFF variants written by tifffile and libtiff's tiffcp
	// (testdata/tiff/make.py): sample types, BigTIFF, tiles, planar,
	// pages, every compression and predictor.
	tiffs, err := filepath.Glob(filepath.Join(tiffdata, "*.tif"))
	if err != nil || len(tiffs) == 0 {
		f.Fatalf("no TIFF variants in %s: %v", tiffdata, err)
	}
	for _, p := range tiffs {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	// Hand-built: interleaved and planar RGB, and a BigTIFF header.
	f.Add(tiffRGB(1))
	f.Add(tiffRGB(2))
	f.Add([]byte("II+\x00\x08\x00\x00\x00\x10\x00\x00\x00\x00\x00\x00\x00"))
	f.Fuzz(func(t *testing.T, data []byte) {
		im, err := Decode(bytes.NewReader(data), LoadOptions{MaxMegapixels: 0.25})
		if err != nil {
			if im != nil {
				t.Fatal("image and error both returned")
			}
			return
		}
		if err := checkImage(im); err != nil {
			t.Fatal(err)
		}
		if float64(im.Width)*float64(im.Height) > 0.25e6 {
			t.Fatalf("%dx%d decoded above the limit", im.Width, im.Height)
		}
		top := im.MaxValue()
		for _, p := range im.Planes {
			for _, v := range p {
				x := float64(v)
				switch im.SampleType {
				case SampleFloat: // any value, NaN and infinities too
				case SampleSigned:
					if !(x >= -top-1 && x <= top) || x != math.Trunc(x) {
						t.Fatalf("sample %v outside the integers %v..%v", v, -top-1, top)
					}
				default:
					if !(x >= 0 && x <= top) || x != math.Trunc(x) {
						t.Fatalf("sample %v outside the integers 0..%v", v, top)
					}
				}
			}
		}
		// Flatten at 3 pixels, or the diagonal of a smaller image (the
		// largest scale MakeFeatures accepts).
		r := min(3, math.Hypot(float64(im.Width), float64(im.Height)))
		feat, err := MakeFeatures(im, FeatureOptions{Channel: -1, Flatten: r}, 2)
		if err != nil {
			t.Fatal(err)
		}
		checkFinite01(t, feat, FeatureOptions{})
	})
}
