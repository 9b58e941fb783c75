package main

import (
	"bytes"
	"image"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

func TestGenerate(t *testing.T) {
	dir := t.TempDir()
	var out, errb bytes.Buffer
	code := run([]string{"-out", dir, "-kind", "nuclei", "-n", "2", "-seed", "5", "-size", "128"}, &out, &errb)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	for _, seed := range []uint64{5, 6} {
		want := scenes.Nuclei(scenes.NucleiOptions{Width: 128, Height: 128, Seed: seed})
		img := decodePNG(t, filepath.Join(dir, want.Name+".truth.png"))
		g, ok := img.(*image.Gray16)
		if !ok {
			t.Fatalf("truth decoded as %T, want *image.Gray16", img)
		}
		for i, l := range want.Truth {
			if int32(g.Gray16At(i%128, i/128).Y) != l {
				t.Fatalf("seed %d: truth pixel %d differs from the generator", seed, i)
			}
		}
		if _, err := os.Stat(filepath.Join(dir, want.Name+".png")); err != nil {
			t.Error(err)
		}
	}
	code = run([]string{"-out", dir, "-kind", "plates", "-n", "1", "-seed", "1", "-size", "128", "-tiff"}, &out, &errb)
	if code != 0 {
		t.Fatalf("plates exit %d: %s", code, errb.String())
	}
	if _, err := os.Stat(filepath.Join(dir, "plate-1.tif")); err != nil {
		t.Error(err)
	}
}

// decodePNG decodes the PNG file at path, failing the test when it cannot
// be opened or decoded.
func decodePNG(t *testing.T, path string) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	return img
}

// TestGenerateKinds: every kind named in scenes.Kinds() is accepted and
// written with its truth, identical to the generator's own scene.
func TestGenerateKinds(t *testing.T) {
	dir := t.TempDir()
	for _, kind := range scenes.Kinds() {
		var out, errb bytes.Buffer
		if code := run([]string{"-out", dir, "-kind", kind, "-n", "1", "-seed", "3", "-size", "128", "-depth", "8"}, &out, &errb); code != 0 {
			t.Fatalf("%s: exit %d: %s", kind, code, errb.String())
		}
		want, err := scenes.Generate(kind, 128, 128, 3, 8)
		if err != nil {
			t.Fatal(err)
		}
		img := decodePNG(t, filepath.Join(dir, want.Name+".png"))
		g, ok := img.(*image.Gray)
		if !ok {
			t.Fatalf("%s: image decoded as %T, want *image.Gray", kind, img)
		}
		for i, v := range want.Pixels {
			if uint16(g.Pix[i]) != v {
				t.Fatalf("%s: pixel %d is %d, generator says %d", kind, i, g.Pix[i], v)
			}
		}
	}
}

func TestUsageErrors(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"-kind", "nuclei"}, "-out"},
		{[]string{"-out", dir, "-kind", "stars"}, "-kind"},
		{[]string{"-out", dir, "-n", "0"}, "-n"},
		{[]string{"-out", dir, "-size", "8"}, "Width"},
		{[]string{"-out", dir, "-depth", "12"}, "BitDepth"},
		{[]string{"-out", dir, "-bogus"}, "bogus"},
		{[]string{"-out", dir, "extra"}, "extra"},
	}
	for _, c := range cases {
		var out, errb bytes.Buffer
		if code := run(c.args, &out, &errb); code != 2 || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v: exit %d, stderr %q; want exit 2 naming %s", c.args, code, errb.String(), c.want)
		}
	}
}
