package imageio

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The hostile corpus in testdata/hostile (made by its make.go): every
// file gets the error expected of it, naming the file, with no panic;
// the bombs inside the size limit are accepted by Open and their decode
// memory is estimated from the header alone.
func TestHostileCorpus(t *testing.T) {
	dir := filepath.Join("..", "testdata", "hostile")
	cases := []struct {
		file string
		is   error  // errors.Is target, or nil
		want string // substring of the message
	}{
		{"huge-png-60000.png", ErrTooLarge, "60000x60000"},
		{"huge-tiff-60000.tif", ErrTooLarge, "60000x60000"},
		{"huge-jpeg-65000.jpg", ErrTooLarge, "65000x65000"},
		{"huge-gif-65535.gif", ErrTooLarge, "65535x65535"},
		{"huge-bmp-30000.bmp", ErrTooLarge, "30000x30000"},
		{"huge-webp-16384.webp", ErrTooLarge, "16384x16384"},
		{"cut-png-signature.png", nil, "truncated PNG file (header)"},
		{"cut-png-ihdr.png", nil, "truncated PNG file (header)"},
		{"cut-png-idat.png", nil, "truncated PNG file (pixel data)"},
		{"cut-tiff-header.tif", nil, "truncated TIFF file (header)"},
		{"cut-tiff-directory.tif", nil, "truncated TIFF file (header)"},
		{"cut-tiff-strip.tif", nil, "truncated TIFF file (pixel data)"},
		{"cut-jpeg-scan.jpg", nil, "JPEG file (pixel data)"},
		{"tiff-ifd-past-end.tif", nil, "truncated TIFF file (header)"},
		{"tiff-tile-bomb.tif", nil, "corrupt TIFF file (header): strip or tile of 65536x65536 pixels"},
		{"tiff-strip-count-bomb.tif", nil, "corrupt TIFF file (pixel data)"},
		{"bigtiff-cut-directory.tif", nil, "truncated TIFF file (header)"},
		{"empty.png", nil, "empty file"},
		{"not-an-image.png", ErrUnknownFormat, "not a PNG"},
	}
	for _, c := range cases {
		path := filepath.Join(dir, c.file)
		im, err := Load(path, LoadOptions{})
		if err == nil {
			t.Errorf("%s: decoded a %dx%d image; want an error", c.file, im.Width, im.Height)
			continue
		}
		if c.is != nil && !errors.Is(err, c.is) {
			t.Errorf("%s: error %q does not wrap %q", c.file, err, c.is)
		}
		if !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), path+": ") {
			t.Errorf("%s: error %q; want it to start with the path and contain %q", c.file, err, c.want)
		}
	}

	// Bombs inside the limit: the header is accepted, and the estimate is
	// the decoder's 8-bit gray buffer (1 byte per pixel) and the float32
	// plane (4) for 9999 x 9999 pixels, counted by hand.
	for _, c := range []struct {
		file string
		side int64
	}{{"bomb-png-9999.png", 9999}, {"bomb-png-3000.png", 3000}} {
		src, err := Open(filepath.Join(dir, c.file), LoadOptions{})
		if err != nil {
			t.Errorf("%s: %v", c.file, err)
			continue
		}
		h := src.Header()
		src.Close()
		if h.Width != int(c.side) || h.Height != int(c.side) || h.Channels != 1 || h.DecodeBytes != c.side*c.side*5 {
			t.Errorf("%s: header %+v; want %dx%d, 1 channel, %d decode bytes", c.file, h, c.side, c.side, c.side*c.side*5)
		}
	}
	// The small bomb decodes to what its header promises: zeros.
	im, err := Load(filepath.Join(dir, "bomb-png-3000.png"), LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range im.Planes[0] {
		if v != 0 {
			t.Fatalf("bomb-png-3000.png: pixel %d is %v; want 0", i, v)
		}
	}
}

// A header that runs on for more than the header budget is refused
// without reading the rest: a JPEG with 17 MiB of application segments
// before its frame header, and the 60000 x 60000 TIFF header padded to
// 64 MiB (refused from its size as before).
func TestHostileLongHeaders(t *testing.T) {
	dir := t.TempDir()
	var b []byte
	b = append(b, 0xff, 0xd8)
	seg := make([]byte, 65533)
	for len(b) < 17<<20 {
		b = append(b, 0xff, 0xe2, 0xff, 0xff)
		b = append(b, seg...)
	}
	long := filepath.Join(dir, "long.jpg")
	if err := os.WriteFile(long, b, 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Open(long, LoadOptions{})
	if err == nil || !strings.Contains(err.Error(), "does not end within the first 16 MiB") {
		t.Errorf("JPEG with a 17 MiB header: %v; want a refusal of the header", err)
	}

	hdr, err := os.ReadFile(filepath.Join("..", "testdata", "hostile", "huge-tiff-60000.tif"))
	if err != nil {
		t.Fatal(err)
	}
	padded := filepath.Join(dir, "padded.tif")
	if err := os.WriteFile(padded, hdr, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Truncate(padded, 64<<20); err != nil {
		t.Fatal(err)
	}
	if _, err := Open(padded, LoadOptions{}); !errors.Is(err, ErrTooLarge) {
		t.Errorf("padded 60000 x 60000 TIFF: %v; want ErrTooLarge", err)
	}
}
