package imageio

import (
	"bytes"
	"image"
	"image/color"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestLabelsRoundTrip: EncodeLabels then ReadLabels returns the labels,
// and the standard library's image/png decoder reads the file as a 16-bit
// gray image with the same values.
func TestLabelsRoundTrip(t *testing.T) {
	const w, h = 5, 3
	labels := []int32{0, 1, 1, 2, 300, 0, 65535, 4, 4, 4, 256, 255, 0, 7, 1}
	path := filepath.Join(t.TempDir(), "labels.png")
	if err := WriteAtomic(path, false, func(wr io.Writer) error { return EncodeLabels(wr, labelmap.Map{Pix: labels, Width: w, Height: h}, 0) }); err != nil {
		t.Fatal(err)
	}
	lm, err := ReadLabels(path)
	if err != nil {
		t.Fatal(err)
	}
	got, gw, gh := lm.Pix, lm.Width, lm.Height
	if gw != w || gh != h || !slices.Equal(got, labels) {
		t.Fatalf("read %dx%d %v; want %dx%d %v", gw, gh, got, w, h, labels)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(raw))
	if err != nil {
		t.Fatal(err)
	}
	g16, ok := img.(*image.Gray16)
	if !ok {
		t.Fatalf("image/png decoded %T; want *image.Gray16", img)
	}
	for i, l := range labels {
		if v := g16.Gray16At(i%w, i/w).Y; int32(v) != l {
			t.Fatalf("pixel %d: image/png read %d; want %d", i, v, l)
		}
	}
}

// TestEncodeLabelsErrors: a 16-bit PNG sample holds 0..65535 (PNG
// specification, 11.2.2), so labels outside it, and sizes that disagree,
// are errors.
func TestEncodeLabelsErrors(t *testing.T) {
	for _, c := range []struct {
		w, h   int
		labels []int32
		want   string
	}{
		{2, 1, []int32{0, -1}, "outside 0..65535"},
		{2, 1, []int32{65536, 0}, "outside 0..65535"},
		{2, 2, []int32{0, 1, 2}, "3 labels for a 2x2"},
		{0, 0, nil, "0x0"},
	} {
		err := EncodeLabels(io.Discard, labelmap.Map{Pix: c.labels, Width: c.w, Height: c.h}, 0)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%v: got %v; want %q", c.labels, err, c.want)
		}
	}
}

// TestReadLabelsReferenceFiles: label maps written by Pillow and tifffile
// (make.py): 16-bit labels read as is; 0/255 and 0/65535 masks read as
// 0/1; a colour image and a JPEG are refused, naming the file.
func TestReadLabelsReferenceFiles(t *testing.T) {
	ref := expectedImages(t)
	for _, c := range []struct {
		name   string
		binary bool
	}{{"labels16.png", false}, {"mask8.png", true}, {"mask16.tif", true}} {
		lm, err := ReadLabels(filepath.Join(testdata, c.name))
		if err != nil {
			t.Fatal(err)
		}
		got, w, h := lm.Pix, lm.Width, lm.Height
		want := ref[c.name]
		if w != want.Width || h != want.Height {
			t.Fatalf("%s: %dx%d; want %dx%d", c.name, w, h, want.Width, want.Height)
		}
		ones := 0
		for i, v := range want.Planes[0] {
			if c.binary && v != 0 {
				v = 1
			}
			if int64(got[i]) != v {
				t.Fatalf("%s: pixel %d = %d; want %d", c.name, i, got[i], v)
			}
			if got[i] == 1 {
				ones++
			}
		}
		if c.binary && ones == 0 {
			t.Fatalf("%s: mask has no foreground", c.name)
		}
	}
	for _, name := range []string{"rgb8.png", "orient1.jpg", "notanimage.tif"} {
		path := filepath.Join(testdata, name)
		if _, err := ReadLabels(path); err == nil || !strings.Contains(err.Error(), path) {
			t.Errorf("%s: got %v; want an error naming the file", name, err)
		}
	}
}

// TestReadLabelsGrayRGB: an RGB image with R = G = B everywhere is
// accepted as labels (encoded by the standard library's image/png).
func TestReadLabelsGrayRGB(t *testing.T) {
	img := image.NewRGBA(image.Rect(0, 0, 3, 1))
	for x, v := range []uint8{0, 5, 9} {
		img.Set(x, 0, color.RGBA{v, v, v, 255})
	}
	path := filepath.Join(t.TempDir(), "graylabels.png")
	if err := WriteAtomic(path, false, func(w io.Writer) error { return png.Encode(w, img) }); err != nil {
		t.Fatal(err)
	}
	lm, err := ReadLabels(path)
	if err != nil {
		t.Fatal(err)
	}
	got := lm.Pix
	if !slices.Equal(got, []int32{0, 5, 9}) {
		t.Errorf("got %v; want [0 5 9]", got)
	}
}

// TestReadLabelsRefusesStacks: a TIFF holding several images is refused
// as a label map instead of read as its first page. The counts in the
// message are those python3-tifffile reports for the committed files
// (testdata/tiff/manifest.json, written by make.py: pages, OME SizeC and
// SizeZ, the hyperstack description's channels, slices and frames).
func TestReadLabelsRefusesStacks(t *testing.T) {
	for _, c := range []struct{ file, want string }{
		{"stack.tif", "1 channel, 4 planes and 1 time point"},
		{"ome-cz.ome.tif", "2 channels, 3 planes and 1 time point"},
		{"hyperstack.tif", "2 channels, 3 planes and 2 time points"},
		{"two-channel.tif", "2 channels, 1 plane and 1 time point"},
	} {
		path := filepath.Join(tiffdata, c.file)
		_, err := ReadLabels(path)
		if err == nil {
			t.Errorf("%s: read as a label map; want an error", c.file)
			continue
		}
		if msg := err.Error(); !strings.Contains(msg, path) || !strings.Contains(msg, c.want) || !strings.Contains(msg, "one 2-D image") {
			t.Errorf("%s: error %q; want the path, %q and the reason", c.file, msg, c.want)
		}
	}
	// One page of one sample still reads (a 32-bit label TIFF).
	if m, err := ReadLabels(filepath.Join(tiffdata, "labels-uint32.tif")); err != nil || m.Width == 0 || m.Height == 0 {
		t.Errorf("labels-uint32.tif: %dx%d, %v", m.Width, m.Height, err)
	}
}
