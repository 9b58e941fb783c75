package scenes

import (
	"image"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/image/tiff"
)

func decodeFile(t *testing.T, path string, dec func(f *os.File) (image.Image, error)) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := dec(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return img
}

// grayAt returns the gray value of a decoded image without rescaling.
func grayAt(t *testing.T, img image.Image, x, y int) uint16 {
	switch g := img.(type) {
	case *image.Gray:
		return uint16(g.GrayAt(x, y).Y)
	case *image.Gray16:
		return g.Gray16At(x, y).Y
	}
	t.Fatalf("decoded %T, want *image.Gray or *image.Gray16", img)
	return 0
}

// TestWriteRoundTrip writes scenes with WritePNG and WriteTIFF and decodes
// them with the standard image/png and golang.org/x/image/tiff decoders:
// gray values, bit depth and truth labels come back exactly.
func TestWriteRoundTrip(t *testing.T) {
	dir := t.TempDir()
	dec := map[string]func(f *os.File) (image.Image, error){
		".png": func(f *os.File) (image.Image, error) { return png.Decode(f) },
		".tif": func(f *os.File) (image.Image, error) { return tiff.Decode(f) },
	}
	write := map[string]func(string, image.Image) error{".png": WritePNG, ".tif": WriteTIFF}
	for _, s := range []*Scene{
		Nuclei(NucleiOptions{Width: 128, Height: 96, Count: 3, Seed: 3}),
		Plate(PlateOptions{Width: 128, Height: 100, Seed: 3, BitDepth: 8}),
	} {
		for _, ext := range []string{".png", ".tif"} {
			path := filepath.Join(dir, s.Name+ext)
			if err := write[ext](path, s.Image()); err != nil {
				t.Fatal(err)
			}
			img := decodeFile(t, path, dec[ext])
			if _, is16 := img.(*image.Gray16); is16 != (s.BitDepth == 16) {
				t.Errorf("%s: decoded %T for bit depth %d", path, img, s.BitDepth)
			}
			for i, want := range s.Pixels {
				if got := grayAt(t, img, i%s.Width, i/s.Width); got != want {
					t.Fatalf("%s: pixel %d is %d, want %d", path, i, got, want)
				}
			}
			tpath := filepath.Join(dir, s.Name+".truth"+ext)
			if err := write[ext](tpath, s.TruthImage()); err != nil {
				t.Fatal(err)
			}
			timg := decodeFile(t, tpath, dec[ext])
			for i, want := range s.Truth {
				if got := grayAt(t, timg, i%s.Width, i/s.Width); int32(got) != want {
					t.Fatalf("%s: label %d is %d, want %d", tpath, i, got, want)
				}
			}
		}
	}
	// Atomic writes leave no temporary files behind.
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), ".") {
			t.Errorf("leftover temporary file %s", e.Name())
		}
	}
}

func TestWriteErrors(t *testing.T) {
	dir := t.TempDir()
	img := image.NewGray(image.Rect(0, 0, 2, 2))
	missing := filepath.Join(dir, "no-such-dir", "a.png")
	if err := WritePNG(missing, img); err == nil || !strings.Contains(err.Error(), missing) {
		t.Errorf("WritePNG into a missing directory: %v, want an error naming %s", err, missing)
	}
	// x/image/tiff refuses a zero-size image; the error names the file and
	// no partial file or temporary file remains.
	empty := filepath.Join(dir, "empty.tif")
	if err := WriteTIFF(empty, image.NewGray(image.Rect(0, 0, 0, 0))); err == nil || !strings.Contains(err.Error(), empty) {
		t.Errorf("WriteTIFF of an empty image: %v, want an error naming %s", err, empty)
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		t.Errorf("failed write left %s behind", e.Name())
	}
	// An existing file is replaced only by a complete one.
	path := filepath.Join(dir, "keep.tif")
	if err := WriteTIFF(path, img); err != nil {
		t.Fatal(err)
	}
	before, _ := os.ReadFile(path)
	if err := WriteTIFF(path, image.NewGray(image.Rect(0, 0, 0, 0))); err == nil {
		t.Fatal("WriteTIFF of an empty image succeeded")
	}
	after, _ := os.ReadFile(path)
	if string(before) != string(after) {
		t.Error("failed write changed the existing file")
	}
}
