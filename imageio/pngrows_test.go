package imageio

import (
	"bytes"
	"compress/zlib"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"hash/adler32"
	"image"
	"image/png"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// pngCases are the images the PNG tests encode: opaque RGBA and Gray16
// images over sizes that cross the bands (pngBandBytes) and the 32 KiB
// dictionary, smooth and noisy content (so every filter type is chosen
// somewhere) and sub-images.
func pngCases() map[string]image.Image {
	rng := rand.New(rand.NewPCG(11400, 2))
	fill := func(pix []byte, w, h, stride, bpp int, kind int) {
		for y := 0; y < h; y++ {
			for x := 0; x < w*bpp; x++ {
				var v byte
				switch kind {
				case 0: // noise
					v = byte(rng.IntN(256))
				case 1: // smooth ramps
					v = byte(x/bpp + 2*y)
				default: // blocks with a little noise
					v = byte((x/bpp/7+y/5)*37) + byte(rng.IntN(3))
				}
				pix[y*stride+x] = v
			}
		}
	}
	cases := map[string]image.Image{}
	sizes := [][2]int{{1, 1}, {1, 40}, {40, 1}, {3, 17}, {17, 3}, {97, 33}, {257, 129}, {600, 450}, {1000, 700}}
	for _, sz := range sizes {
		for kind := 0; kind < 3; kind++ {
			w, h := sz[0], sz[1]
			rgba := image.NewRGBA(image.Rect(0, 0, w, h))
			fill(rgba.Pix, w, h, rgba.Stride, 4, kind)
			for i := 3; i < len(rgba.Pix); i += 4 {
				rgba.Pix[i] = 255
			}
			g16 := image.NewGray16(image.Rect(0, 0, w, h))
			fill(g16.Pix, w, h, g16.Stride, 2, kind)
			name := fmt.Sprintf("%dx%d-kind%d", w, h, kind)
			cases[name+"-rgb"], cases[name+"-gray16"] = rgba, g16
			if w > 2 && h > 3 {
				cases[name+"-rgb-sub"] = rgba.SubImage(image.Rect(1, 1, w-1, h))
				cases[name+"-gray16-sub"] = g16.SubImage(image.Rect(1, 2, w, h-1))
			}
		}
	}
	return cases
}

// samePixels reports the first pixel where a and b differ in RGBA64.
func samePixels(a, b image.Image) error {
	if a.Bounds().Size() != b.Bounds().Size() {
		return fmt.Errorf("size %v, want %v", b.Bounds().Size(), a.Bounds().Size())
	}
	ao, bo := a.Bounds().Min, b.Bounds().Min
	for y := 0; y < a.Bounds().Dy(); y++ {
		for x := 0; x < a.Bounds().Dx(); x++ {
			ar, ag, ab, aa := a.At(ao.X+x, ao.Y+y).RGBA()
			br, bg, bb, ba := b.At(bo.X+x, bo.Y+y).RGBA()
			if ar != br || ag != bg || ab != bb || aa != ba {
				return fmt.Errorf("pixel (%d, %d): %v, want %v", x, y, b.At(bo.X+x, bo.Y+y), a.At(ao.X+x, ao.Y+y))
			}
		}
	}
	return nil
}

// encodeTestPNG writes an opaque *image.RGBA (as 8-bit RGB) or an
// *image.Gray16 through encodePNGRows.
func encodeTestPNG(t *testing.T, w io.Writer, m image.Image, workers int, flat bool) {
	t.Helper()
	b := m.Bounds()
	width, height := b.Dx(), b.Dy()
	p := pngRows{width: width, height: height, flat: flat}
	switch img := m.(type) {
	case *image.RGBA:
		p.bpp, p.depth, p.ctype = 3, 8, 2
		p.rows = func(y0, y1 int, dst []byte) {
			for y := y0; y < y1; y++ {
				j := img.PixOffset(b.Min.X, b.Min.Y+y)
				rgbaToRGB(dst[(y-y0)*3*width:(y-y0+1)*3*width], img.Pix[j:j+4*width])
			}
		}
	case *image.Gray16:
		p.bpp, p.depth, p.ctype = 2, 16, 0
		p.rows = func(y0, y1 int, dst []byte) {
			for y := y0; y < y1; y++ {
				j := img.PixOffset(b.Min.X, b.Min.Y+y)
				copy(dst[(y-y0)*2*width:], img.Pix[j:j+2*width])
			}
		}
	default:
		t.Fatalf("%T", m)
	}
	if err := encodePNGRows(w, p, workers); err != nil {
		t.Fatal(err)
	}
}

// inflatedIDAT is the zlib stream of a PNG's IDAT chunks, inflated: the
// filtered rows, each led by its filter type.
func inflatedIDAT(t *testing.T, file []byte) []byte {
	t.Helper()
	var z []byte
	for p := 8; p+12 <= len(file); {
		n := int(binary.BigEndian.Uint32(file[p:]))
		if string(file[p+4:p+8]) == "IDAT" {
			z = append(z, file[p+8:p+8+n]...)
		}
		p += 12 + n
	}
	r, err := zlib.NewReader(bytes.NewReader(z))
	if err != nil {
		t.Fatal(err)
	}
	out, err := io.ReadAll(r)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// TestEncodePNGRows: every file encodePNGRows writes, with either
// compressor, decodes with Go's image/png (the reference reader) to the
// image's very samples, in the colour model the library gives its own
// files of that type (RGB for an opaque RGBA, 16-bit gray); its zlib
// stream inflates (compress/zlib checks the Adler-32) to the very filtered
// rows of png.Encoder's file at BestSpeed, so the filter choices are the
// library's; and the bytes do not depend on the number of workers. With
// the standard library's compressor (flat) the file is at most 5 % larger
// than png.Encoder's (its bands start without history).
func TestEncodePNGRows(t *testing.T) {
	for name, m := range pngCases() {
		t.Run(name, func(t *testing.T) {
			var lib bytes.Buffer
			if err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&lib, m); err != nil {
				t.Fatal(err)
			}
			want, err := png.Decode(bytes.NewReader(lib.Bytes()))
			if err != nil {
				t.Fatal(err)
			}
			filtered := inflatedIDAT(t, lib.Bytes())
			for _, flat := range []bool{false, true} {
				var first []byte
				for _, workers := range []int{1, 2, 3} {
					var got bytes.Buffer
					encodeTestPNG(t, &got, m, workers, flat)
					if first == nil {
						first = got.Bytes()
					} else if !bytes.Equal(got.Bytes(), first) {
						t.Fatalf("flat %v, workers %d: the file differs from workers 1's", flat, workers)
					}
				}
				dec, err := png.Decode(bytes.NewReader(first))
				if err != nil {
					t.Fatalf("flat %v: %v", flat, err)
				}
				if fmt.Sprintf("%T", dec) != fmt.Sprintf("%T", want) {
					t.Fatalf("flat %v: decodes as %T, the library's file as %T", flat, dec, want)
				}
				if err := samePixels(m, dec); err != nil {
					t.Fatalf("flat %v: %v", flat, err)
				}
				if !bytes.Equal(inflatedIDAT(t, first), filtered) {
					t.Fatalf("flat %v: the filtered rows differ from png.Encoder's", flat)
				}
				if flat && len(first) > lib.Len()*105/100+64 {
					t.Errorf("flat: %d bytes against the library's %d", len(first), lib.Len())
				}
			}
		})
	}
}

// TestEncodePNGFastPython: Debian's python3-pil (libpng's reading rules
// as Pillow applies them: chunk CRCs, the zlib stream's Adler-32) reads
// the files encodePNGRows writes (the standard library's compressor
// for the gray images, Klaus Post's for the colour ones) to the samples they were made from; the
// SHA-256 of each image's raw samples in PNG order (RGB bytes, or 16-bit
// big-endian gray) is compared. Skipped loudly without python3-pil.
func TestEncodePNGRowsPython(t *testing.T) {
	const script = `
import hashlib, sys
from PIL import Image
import numpy as np
for p in sys.argv[1:]:
    im = Image.open(p)
    im.load()
    a = np.asarray(im)
    if a.ndim == 3:
        raw = a.astype('>u1').tobytes()
    else:
        raw = a.astype('>u2').tobytes()
    print(p.rsplit('/', 1)[-1], im.mode, hashlib.sha256(raw).hexdigest())
`
	dir := t.TempDir()
	want := map[string]string{}
	var paths []string
	for name, m := range pngCases() {
		var buf bytes.Buffer
		encodeTestPNG(t, &buf, m, 2, strings.HasSuffix(name, "-gray16"))
		p := filepath.Join(dir, name+".png")
		if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		paths = append(paths, p)
		b := m.Bounds()
		var raw []byte
		switch img := m.(type) {
		case *image.RGBA:
			for y := b.Min.Y; y < b.Max.Y; y++ {
				for x := b.Min.X; x < b.Max.X; x++ {
					j := img.PixOffset(x, y)
					raw = append(raw, img.Pix[j:j+3]...)
				}
			}
		case *image.Gray16:
			for y := b.Min.Y; y < b.Max.Y; y++ {
				j := img.PixOffset(b.Min.X, y)
				raw = append(raw, img.Pix[j:j+2*b.Dx()]...)
			}
		}
		sum := sha256.Sum256(raw)
		want[name+".png"] = hex.EncodeToString(sum[:])
	}
	out := runPython(t, "python3-pil", script, paths...)
	seen := 0
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		f := strings.Fields(line)
		if len(f) != 3 {
			t.Fatalf("unexpected line %q", line)
		}
		if f[2] != want[f[0]] {
			t.Errorf("%s (%s): Pillow reads other samples", f[0], f[1])
		}
		seen++
	}
	if seen != len(paths) {
		t.Fatalf("Pillow read %d of %d files", seen, len(paths))
	}
}

// TestAdler32Combine: the combined checksum equals hash/adler32 over the
// concatenation (the reference), for pieces of many lengths including
// empty ones and ones above the modulus 65521.
func TestAdler32Combine(t *testing.T) {
	rng := rand.New(rand.NewPCG(11401, 3))
	for _, lens := range [][]int{{0}, {1}, {0, 5}, {5, 0}, {65521, 1}, {65520, 65522, 3}, {200000, 70000, 1}, {1, 2, 3, 4, 5}} {
		var all []byte
		sum := adler32.Checksum(nil)
		for _, n := range lens {
			b := make([]byte, n)
			for i := range b {
				b[i] = byte(rng.IntN(256))
			}
			all = append(all, b...)
			sum = adler32Combine(sum, adler32.Checksum(b), n)
		}
		if want := adler32.Checksum(all); sum != want {
			t.Errorf("pieces %v: %08x, want %08x", lens, sum, want)
		}
	}
}

// TestSWARBytes: swarSub, swarAvg and swarAbsSum against their byte-wise
// definitions on every pair of byte values, in every lane.
func TestSWARBytes(t *testing.T) {
	for x := 0; x < 256; x++ {
		for y := 0; y < 256; y++ {
			for k := 0; k < 8; k++ {
				// Lane k holds (x, y); the others hold values of their own
				// so that carries into or out of lane k would show.
				var X, Y uint64
				for j := 0; j < 8; j++ {
					xv, yv := uint64((x+37*j)&255), uint64((y+91*j)&255)
					if j == k {
						xv, yv = uint64(x), uint64(y)
					}
					X |= xv << (8 * j)
					Y |= yv << (8 * j)
				}
				sub, avg := swarSub(X, Y), swarAvg(X, Y)
				want := 0
				for j := 0; j < 8; j++ {
					xv, yv := uint8(X>>(8*j)), uint8(Y>>(8*j))
					if uint8(sub>>(8*j)) != xv-yv {
						t.Fatalf("swarSub lane %d: %d - %d gave %d", j, xv, yv, uint8(sub>>(8*j)))
					}
					if uint8(avg>>(8*j)) != uint8((int(xv)+int(yv))/2) {
						t.Fatalf("swarAvg lane %d: (%d + %d)/2 gave %d", j, xv, yv, uint8(avg>>(8*j)))
					}
					d := int(int8(xv))
					if d < 0 {
						d = -d
					}
					want += d
				}
				if got := swarAbsSum(X); got != want {
					t.Fatalf("swarAbsSum(%016x) = %d, want %d", X, got, want)
				}
			}
		}
	}
}
