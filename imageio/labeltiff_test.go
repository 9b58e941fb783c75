package imageio

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// debianPython is Debian's interpreter: its python3-tifffile is the
// reference reader; other interpreters on the path may lack it.
const debianPython = "/usr/bin/python3"

// runPython runs a Python script with Debian's interpreter and returns its
// stdout; the test is skipped, loudly, when the interpreter or the module
// named by pkg is missing.
func runPython(t *testing.T, pkg, script string, args ...string) []byte {
	t.Helper()
	cmd := exec.Command(debianPython, append([]string{"-c", script}, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		if strings.Contains(stderr.String(), "ModuleNotFoundError") || errors.Is(err, exec.ErrNotFound) || errors.Is(err, os.ErrNotExist) {
			loudskip.Skip(t, "%s is missing; install Debian's %s to run this cross-check (%v: %s)", pkg, pkg, err, stderr.String())
		}
		t.Fatalf("%s: %v\n%s", debianPython, err, stderr.String())
	}
	return out
}

// tifffileScript prints, for each TIFF named on the command line, what
// tifffile (Debian python3-tifffile) reads: the array's dtype, shape and
// values, and the resolution tags as stored.
const tifffileScript = `
import json, sys, tifffile
out = []
for p in sys.argv[1:]:
    with tifffile.TiffFile(p) as tf:
        page = tf.pages[0]
        a = page.asarray()
        tags = page.tags
        def tag(n):
            t = tags.get(n)
            return None if t is None else (list(t.value) if isinstance(t.value, tuple) else int(t.value))
        out.append({"dtype": str(a.dtype), "shape": list(a.shape), "values": [int(v) for v in a.ravel()],
                    "pages": len(tf.pages), "x": tag("XResolution"), "y": tag("YResolution"),
                    "unit": tag("ResolutionUnit")})
json.dump(out, sys.stdout)
`

// TestLabelsTIFFTifffile writes label maps with EncodeLabelsTIFF (through
// WriteAtomic, as the command does) and reads them back with Debian's
// python3-tifffile: every pixel equal, uint16 when the labels fit in 16
// bits and uint32 above, one page, and the resolution tags as written
// (pixels per centimetre = 1e4 / pixel size in µm, per inch = 1 / pixel
// size in inches: the unit conversions of TIFF 6.0's XResolution).
func TestLabelsTIFFTifffile(t *testing.T) {
	dir := t.TempDir()
	type tcase struct {
		name          string
		w, h          int
		labels        []int32
		res           Resolution
		bits          int
		wantPerUnit   float64
		wantUnit      int
		wantNoResTags bool
	}
	small := []int32{0, 1, 1, 2, 300, 0, 65535, 4, 4, 4, 256, 255, 0, 7, 1}
	// 32 bits: labels above 65535 up to the largest int32; several strips
	// (300 x 500 x 4 bytes, strips of 256 KiB).
	w, h := 300, 500
	big := make([]int32, w*h)
	for i := range big {
		big[i] = int32((uint64(i) * 2654435761) % (1 << 31))
	}
	big[0], big[1], big[2] = 0, 65536, math.MaxInt32
	// 16 bits over several strips: 1000 x 300 x 2 bytes.
	wide := make([]int32, 1000*300)
	for i := range wide {
		wide[i] = int32(i % 65536)
	}
	um, why := ResolutionFor(0.65, "µm")
	if why != "" {
		t.Fatal(why)
	}
	inch, why := ResolutionFor(1.0/300, "inch")
	if why != "" {
		t.Fatal(why)
	}
	nm, why := ResolutionFor(50, "nm")
	if why != "" {
		t.Fatal(why)
	}
	cases := []tcase{
		{"small16", 5, 3, small, um, 16, 1e4 / 0.65, ResolutionCM, false},
		{"big32", w, h, big, inch, 32, 300, ResolutionInch, false},
		{"wide16", 1000, 300, wide, nm, 16, 1e7 / 50, ResolutionCM, false},
		{"nores", 5, 3, small, Resolution{}, 16, 0, 0, true},
	}
	var paths []string
	for _, c := range cases {
		p := filepath.Join(dir, c.name+".tif")
		paths = append(paths, p)
		err := WriteAtomic(p, false, func(wr io.Writer) error {
			bits, err := EncodeLabelsTIFF(wr, labelmap.Map{Pix: c.labels, Width: c.w, Height: c.h}, c.res)
			if err == nil && bits != c.bits {
				err = fmt.Errorf("wrote %d bits; want %d", bits, c.bits)
			}
			return err
		})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
	}
	var got []struct {
		Dtype  string   `json:"dtype"`
		Shape  []int    `json:"shape"`
		Values []int64  `json:"values"`
		Pages  int      `json:"pages"`
		XR     []uint32 `json:"x"`
		YR     []uint32 `json:"y"`
		Unit   *int     `json:"unit"`
	}
	if err := json.Unmarshal(runPython(t, "python3-tifffile", tifffileScript, paths...), &got); err != nil {
		t.Fatal(err)
	}
	for k, c := range cases {
		g := got[k]
		wantType := map[int]string{16: "uint16", 32: "uint32"}[c.bits]
		if g.Dtype != wantType || len(g.Shape) != 2 || g.Shape[0] != c.h || g.Shape[1] != c.w || g.Pages != 1 {
			t.Fatalf("%s: tifffile read %s %v, %d pages; want %s [%d %d], 1 page", c.name, g.Dtype, g.Shape, g.Pages, wantType, c.h, c.w)
		}
		for i, l := range c.labels {
			if g.Values[i] != int64(l) {
				t.Fatalf("%s: pixel (%d, %d): tifffile read %d; want %d", c.name, i%c.w, i/c.w, g.Values[i], l)
			}
		}
		if c.wantNoResTags {
			if g.XR != nil || g.YR != nil {
				t.Errorf("%s: resolution tags %v %v written without a resolution", c.name, g.XR, g.YR)
			}
			continue
		}
		if len(g.XR) != 2 || len(g.YR) != 2 || g.Unit == nil {
			t.Fatalf("%s: resolution tags %v %v %v; want both rationals and the unit", c.name, g.XR, g.YR, g.Unit)
		}
		for _, r := range [][]uint32{g.XR, g.YR} {
			if v := float64(r[0]) / float64(r[1]); math.Abs(v-c.wantPerUnit) > 1e-9*c.wantPerUnit {
				t.Errorf("%s: %d/%d = %.12g pixels per unit; want %.12g", c.name, r[0], r[1], v, c.wantPerUnit)
			}
		}
		if *g.Unit != c.wantUnit {
			t.Errorf("%s: ResolutionUnit %d; want %d", c.name, *g.Unit, c.wantUnit)
		}
	}
}

// TestRationalFractions compares Rational with Python's
// fractions.Fraction.limit_denominator (standard library): the closest
// fraction with denominator at most 2^32 - 1; for x > 1 the numerator is
// bounded too, so there the reference is 1 / (1/x).limit_denominator.
func TestRationalFractions(t *testing.T) {
	xs := []float64{1e4 / 0.65, 1e4 / 0.1083, 300, 1.0 / 3, math.Pi, math.E * 1e6, 2.54e-5, 1e-9, 4e9, 1e7 / 50, 0.5}
	var args []string
	for _, x := range xs {
		args = append(args, fmt.Sprintf("%.17g", x))
	}
	script := `
import sys
from fractions import Fraction
L = 2**32 - 1
for a in sys.argv[1:]:
    x = Fraction(float(a))
    f = x.limit_denominator(L) if x <= 1 else 1 / (1 / x).limit_denominator(L)
    print(f.numerator, f.denominator)
`
	out := strings.Fields(string(runPython(t, "python3", script, args...)))
	for k, x := range xs {
		num, den, ok := Rational(x)
		if !ok {
			t.Fatalf("Rational(%g) refused", x)
		}
		want := out[2*k] + "/" + out[2*k+1]
		// Two fractions at the same distance from x may differ; compare
		// the errors then.
		if g := fmt.Sprintf("%d/%d", num, den); g != want {
			var wn, wd float64
			fmt.Sscanf(want, "%g/%g", &wn, &wd)
			if math.Abs(float64(num)/float64(den)-x) > math.Abs(wn/wd-x)*(1+1e-12) {
				t.Errorf("Rational(%.17g) = %s; fractions gives the closer %s", x, g, want)
			}
		}
	}
	for _, x := range []float64{0, -1, math.Inf(1), math.NaN(), 1e10, 1e-10} {
		if _, _, ok := Rational(x); ok {
			t.Errorf("Rational(%g) accepted; TIFF rationals of 32-bit terms cannot hold it", x)
		}
	}
}

// TestResolutionFor: the unit conversions (1 cm = 1e4 µm = 1e7 nm = 10 mm
// = 0.01 m, by the SI prefixes) and the units that get no tags.
func TestResolutionFor(t *testing.T) {
	for _, c := range []struct {
		size    float64
		unit    string
		perUnit float64
		ru      int
	}{
		{0.5, "um", 2e4, ResolutionCM},
		{0.5, "μm", 2e4, ResolutionCM}, // Greek mu
		{0.5, "micron", 2e4, ResolutionCM},
		{0.2, "mm", 50, ResolutionCM},
		{0.25, "cm", 4, ResolutionCM},
		{1e-5, "m", 1000, ResolutionCM},
		{100, "nm", 1e5, ResolutionCM},
		{0.01, "in", 100, ResolutionInch},
		{0.01, "Inch", 100, ResolutionInch},
	} {
		r, why := ResolutionFor(c.size, c.unit)
		if why != "" || r.Unit != c.ru || math.Abs(r.PerUnit()-c.perUnit) > 1e-12*c.perUnit {
			t.Errorf("ResolutionFor(%g, %q) = %+v (%s); want %g per unit %d", c.size, c.unit, r, why, c.perUnit, c.ru)
		}
	}
	for _, c := range []struct {
		size float64
		unit string
		want string
	}{
		{1, "px", "not a length"},
		{1, "au", "not a length"},
		{1, "MM", "not a length"}, // symbols are case-sensitive (Mm is not mm)
		{1e-9, "um", "does not fit"},
	} {
		r, why := ResolutionFor(c.size, c.unit)
		if r.Set() || !strings.Contains(why, c.want) {
			t.Errorf("ResolutionFor(%g, %q) = %+v, %q; want no tags and %q", c.size, c.unit, r, why, c.want)
		}
	}
	if r, why := ResolutionFor(0, "um"); r.Set() || why != "" {
		t.Errorf("no pixel size: %+v %q; want nothing", r, why)
	}
}

// TestEncodeLabelsTIFFErrors: TIFF samples here are unsigned, and sizes
// must agree.
func TestEncodeLabelsTIFFErrors(t *testing.T) {
	for _, c := range []struct {
		w, h   int
		labels []int32
		want   string
	}{
		{2, 1, []int32{0, -1}, "negative"},
		{2, 2, []int32{0, 1, 2}, "3 labels for a 2x2"},
		{0, 0, nil, "0x0"},
	} {
		if _, err := EncodeLabelsTIFF(io.Discard, labelmap.Map{Pix: c.labels, Width: c.w, Height: c.h}, Resolution{}); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%v: got %v; want %q", c.labels, err, c.want)
		}
	}
}
