package imageio

import (
	"bytes"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"golang.org/x/image/tiff"
)

var formatOfExt = map[string]string{".png": "png", ".tif": "tiff", ".jpg": "jpeg", ".bmp": "bmp", ".gif": "gif", ".webp": "webp"}

// TestDecodeReferenceFiles: every pixel of every reference file equals the
// value read back by the reference decoder named in testdata/imageio/make.py
// (Pillow 9.4, tifffile 2023.2.3, ImageMagick 6.9.11), at the source's bit
// depth; alpha is dropped and reported.
func TestDecodeReferenceFiles(t *testing.T) {
	ref := expectedImages(t)
	if len(ref) < 15 {
		t.Fatalf("expected.json lists %d files; want at least 15", len(ref))
	}
	for name, want := range ref {
		t.Run(name, func(t *testing.T) {
			im, err := Load(filepath.Join(testdata, name), LoadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if im.Width != want.Width || im.Height != want.Height || im.Channels != want.Channels {
				t.Fatalf("got %dx%d with %d channels; want %dx%d with %d", im.Width, im.Height, im.Channels, want.Width, want.Height, want.Channels)
			}
			if im.BitDepth != want.Bitdepth {
				t.Errorf("bit depth %d; want %d", im.BitDepth, want.Bitdepth)
			}
			if im.HasAlpha != want.Alpha {
				t.Errorf("HasAlpha %v; want %v", im.HasAlpha, want.Alpha)
			}
			if f := formatOfExt[filepath.Ext(name)]; im.Format != f {
				t.Errorf("format %q; want %q", im.Format, f)
			}
			for c := range want.Planes {
				for i, v := range want.Planes[c] {
					if im.Planes[c][i] != float32(v) {
						t.Fatalf("channel %d pixel (%d, %d) = %v; reference decoder read %d", c, i%im.Width, i/im.Width, im.Planes[c][i], v)
					}
				}
			}
		})
	}
}

// TestDecodeSixteenBitHighByte: the 16-bit gray PNG holds 255, 256, 0xff00
// and 65535 (values set in make.py), which an 8-bit path would merge.
func TestDecodeSixteenBitHighByte(t *testing.T) {
	im, err := Load(filepath.Join(testdata, "gray16.png"), LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	got := []float32{im.Planes[0][0], im.Planes[0][1], im.Planes[0][2], im.Planes[0][3], im.Planes[0][34]}
	want := []float32{0, 255, 256, 0xff00, 65535} // make.py, g16[0,0..3] and g16[4,6]
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("sample %d = %v; want %v", i, got[i], want[i])
		}
	}
	if im.MaxValue() != 65535 {
		t.Errorf("MaxValue %v; want 65535", im.MaxValue())
	}
}

// TestJPEGOrientation: each orientN.jpg stores the upright picture
// transformed by the inverse of EXIF orientation N (CIPA DC-008, Exif 2.32,
// tag 0x0112); decoding must give the upright picture back. Pillow's
// ImageOps.exif_transpose agreed with the same picture to within 6 levels
// in make.py; JPEG coding noise on these flat 8x8 blocks stays below that.
func TestJPEGOrientation(t *testing.T) {
	up, err := Load(filepath.Join(testdata, "upright.png"), LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for o := 1; o <= 8; o++ {
		name := filepath.Join(testdata, "orient"+string(rune('0'+o))+".jpg")
		raw, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		if got := jpegOrientation(raw); got != o {
			t.Errorf("%s: orientation tag %d; want %d", name, got, o)
		}
		im, err := Load(name, LoadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if im.Width != up.Width || im.Height != up.Height || im.Channels != 3 {
			t.Fatalf("%s: %dx%dx%d; want %dx%dx3", name, im.Width, im.Height, im.Channels, up.Width, up.Height)
		}
		worst := 0.0
		for c := 0; c < 3; c++ {
			for i := range up.Planes[c] {
				worst = math.Max(worst, math.Abs(float64(im.Planes[c][i]-up.Planes[c][i])))
			}
		}
		if worst > 6 {
			t.Errorf("%s: largest difference from the upright picture %v levels; want <= 6", name, worst)
		}
	}
}

// pngWithIHDR builds a PNG signature and an IHDR chunk (PNG specification,
// 5.3 and 11.2.2) declaring w x h, 8-bit gray, followed by nothing else.
func pngWithIHDR(w, h uint32) []byte {
	var b bytes.Buffer
	b.WriteString("\x89PNG\r\n\x1a\n")
	data := make([]byte, 13)
	binary.BigEndian.PutUint32(data[0:], w)
	binary.BigEndian.PutUint32(data[4:], h)
	data[8] = 8 // bit depth
	chunk := append([]byte("IHDR"), data...)
	binary.Write(&b, binary.BigEndian, uint32(len(data)))
	b.Write(chunk)
	binary.Write(&b, binary.BigEndian, crc32.ChecksumIEEE(chunk))
	return b.Bytes()
}

// TestHugeHeaderRefusedBeforeAllocation: a PNG whose IHDR declares
// 100000 x 100000 (1e10 pixels) is refused from the header with the size
// in the message, and decoding allocates far less than one row of it.
func TestHugeHeaderRefusedBeforeAllocation(t *testing.T) {
	path := filepath.Join(t.TempDir(), "huge.png")
	if err := os.WriteFile(path, pngWithIHDR(100000, 100000), 0o644); err != nil {
		t.Fatal(err)
	}
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	_, err := Load(path, LoadOptions{})
	runtime.ReadMemStats(&after)
	if !errors.Is(err, ErrTooLarge) {
		t.Fatalf("got %v; want ErrTooLarge", err)
	}
	for _, s := range []string{path, "100000x100000 = 10000.0 megapixels exceeds the limit of 100 (max-megapixels)"} {
		if !strings.Contains(err.Error(), s) {
			t.Errorf("error %q does not contain %q", err, s)
		}
	}
	if d := after.TotalAlloc - before.TotalAlloc; d > 1<<20 {
		t.Errorf("allocated %d bytes before refusing; want < 1 MiB", d)
	}
}

// TestMaxMegapixelsOption: the limit compares width x height / 1e6 with
// the option (arithmetic on the 7x5 reference file); nonsense limits are
// errors.
func TestMaxMegapixelsOption(t *testing.T) {
	name := filepath.Join(testdata, "gray16.png") // 7x5 = 35 pixels = 3.5e-5 MP
	if _, err := Load(name, LoadOptions{MaxMegapixels: 3e-5}); !errors.Is(err, ErrTooLarge) {
		t.Errorf("limit below size: got %v; want ErrTooLarge", err)
	}
	if _, err := Load(name, LoadOptions{MaxMegapixels: 4e-5}); err != nil {
		t.Errorf("limit above size: %v", err)
	}
	for _, bad := range []float64{-1, math.NaN(), math.Inf(1)} {
		if _, err := Load(name, LoadOptions{MaxMegapixels: bad}); err == nil {
			t.Errorf("MaxMegapixels %v accepted", bad)
		}
	}
}

// TestDecodeBadInput: empty, truncated, non-image and zero-size inputs give
// an error naming the file and saying what is wrong, never a panic.
func TestDecodeBadInput(t *testing.T) {
	dir := t.TempDir()
	cut := func(name string, frac float64) []byte {
		b, err := os.ReadFile(filepath.Join(testdata, name))
		if err != nil {
			t.Fatal(err)
		}
		return b[:int(float64(len(b))*frac)]
	}
	text, err := os.ReadFile(filepath.Join(testdata, "notanimage.tif"))
	if err != nil {
		t.Fatal(err)
	}
	// A GIF logical screen descriptor of 0 x 0 (GIF89a specification, section 18).
	zeroGIF := []byte("GIF89a\x00\x00\x00\x00\x00\x00\x00;")
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"empty.png", nil, "empty file"},
		{"text.tif", text, "not a PNG, TIFF, JPEG, BMP, GIF or WebP image"},
		{"half.png", cut("gray16.png", 0.5), "PNG"},
		{"header.png", cut("gray16.png", 0.1), "PNG"},
		{"half.tif", cut("rgb16.tif", 0.5), "TIFF"},
		{"tiny.tif", cut("gray16.tif", 0.02), "TIFF"},
		{"half.jpg", cut("orient6.jpg", 0.5), "JPEG"},
		{"half.webp", cut("rgb8.webp", 0.5), "WebP"},
		{"half.bmp", cut("rgb8.bmp", 0.5), "BMP"},
		{"half.gif", cut("paletted.gif", 0.5), "GIF"},
		{"zero.gif", zeroGIF, "zero size"},
		{"zero.png", pngWithIHDR(0, 5), "PNG"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(dir, c.name)
			if err := os.WriteFile(path, c.data, 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := Load(path, LoadOptions{})
			if err == nil {
				t.Fatal("no error")
			}
			for _, s := range []string{path, c.want} {
				if !strings.Contains(err.Error(), s) {
					t.Errorf("error %q does not contain %q", err, s)
				}
			}
		})
	}
	if _, err := Load(filepath.Join(dir, "missing.png"), LoadOptions{}); err == nil || !strings.Contains(err.Error(), "missing.png") {
		t.Errorf("missing file: %v", err)
	}
	if _, err := Load(filepath.Join(testdata, "notanimage.tif"), LoadOptions{}); !errors.Is(err, ErrUnknownFormat) {
		t.Errorf("text file: got %v; want ErrUnknownFormat", err)
	}
}

// TestDecodeOnePixel: a 1x1 16-bit image (encoded by the standard
// library's image/png) decodes, and its features are finite.
func TestDecodeOnePixel(t *testing.T) {
	src := image.NewGray16(image.Rect(0, 0, 1, 1))
	src.Pix[0], src.Pix[1] = 0x12, 0x34
	var buf bytes.Buffer
	if err := png.Encode(&buf, src); err != nil {
		t.Fatal(err)
	}
	im, err := Decode(&buf, LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if im.Width != 1 || im.Height != 1 || im.Planes[0][0] != 0x1234 || im.BitDepth != 16 {
		t.Fatalf("got %dx%d depth %d value %v; want 1x1 depth 16 value %d", im.Width, im.Height, im.BitDepth, im.Planes[0][0], 0x1234)
	}
	// Flatten scales up to the diagonal (1.41 pixels) are accepted.
	for _, opt := range []FeatureOptions{
		{Channel: -1},
		{Channel: -1, Flatten: 1.4},
		{Channel: -1, Flatten: 1.4, FlattenMode: FlattenSubtract},
		{Channel: -1, Normalize: NormalizeBitDepth},
		{Channel: -1, Space: SpaceLab, Flatten: 1},
	} {
		f, err := MakeFeatures(im, opt, 2)
		if err != nil {
			t.Fatal(err)
		}
		checkFinite01(t, f, opt)
	}
}

// checkFinite01 fails when any feature or display value is NaN, infinite
// or (for gray) outside [0, 1].
func checkFinite01(t *testing.T, f *Features, opt FeatureOptions) {
	t.Helper()
	for c, p := range f.Planes {
		for i, v := range p {
			x := float64(v)
			if math.IsNaN(x) || math.IsInf(x, 0) || (opt.Space != SpaceLab && (x < 0 || x > 1)) {
				t.Fatalf("%+v: plane %d value %d = %v", opt, c, i, v)
			}
		}
	}
	for i, v := range f.Display {
		if !(v >= 0 && v <= 1) {
			t.Fatalf("%+v: display value %d = %v", opt, i, v)
		}
	}
}

// TestDecodePremultipliedAlpha: a TIFF with associated (premultiplied)
// alpha, written by golang.org/x/image/tiff from an image.RGBA64, reads
// back un-premultiplied, c' = c * 65535 / a (image/color's NRGBA64
// conversion), and reports HasAlpha; a fully transparent pixel reads as 0.
func TestDecodePremultipliedAlpha(t *testing.T) {
	src := image.NewRGBA64(image.Rect(0, 0, 3, 1))
	src.SetRGBA64(0, 0, color.RGBA64{R: 10000, G: 20000, B: 30000, A: 40000})
	src.SetRGBA64(1, 0, color.RGBA64{R: 65535, G: 0, B: 300, A: 65535})
	src.SetRGBA64(2, 0, color.RGBA64{})
	var buf bytes.Buffer
	if err := tiff.Encode(&buf, src, nil); err != nil {
		t.Fatal(err)
	}
	im, err := Decode(&buf, LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !im.HasAlpha || im.BitDepth != 16 || im.Channels != 3 {
		t.Fatalf("HasAlpha %v depth %d channels %d; want true, 16, 3", im.HasAlpha, im.BitDepth, im.Channels)
	}
	want := [3][3]float32{
		{10000 * 65535 / 40000, 20000 * 65535 / 40000, 30000 * 65535 / 40000}, // integer constants: integer division, as image/color does
		{65535, 0, 300},
		{0, 0, 0},
	}
	for x := range want {
		for c := 0; c < 3; c++ {
			if got := im.Planes[c][x]; got != want[x][c] {
				t.Errorf("pixel %d channel %d = %v; want %v", x, c, got, want[x][c])
			}
		}
	}
}
