package scenes

import (
	"image"
	"image/png"
	"os"
	"path/filepath"
	"testing"
)

// TestCommittedExamples checks that the example sets committed under
// examples/nuclei and examples/plates are exactly what the generator
// produces for the commands in their README files, so that a change of the
// scene model cannot leave stale examples behind.
func TestCommittedExamples(t *testing.T) {
	cases := []struct {
		dir   string
		scene *Scene
	}{
		{"../../examples/nuclei", Nuclei(NucleiOptions{Width: 512, Height: 512, Seed: 1})},
		{"../../examples/nuclei", Nuclei(NucleiOptions{Width: 512, Height: 512, Seed: 2})},
		{"../../examples/nuclei", Nuclei(NucleiOptions{Width: 512, Height: 512, Seed: 3})},
		{"../../examples/plates", Plate(PlateOptions{Width: 512, Height: 512, Seed: 1})},
		{"../../examples/plates", Plate(PlateOptions{Width: 512, Height: 512, Seed: 2})},
	}
	for _, c := range cases {
		s := c.scene
		for _, f := range []struct {
			name string
			want func(i int) uint16
		}{
			{s.Name + ".png", func(i int) uint16 { return s.Pixels[i] }},
			{s.Name + ".truth.png", func(i int) uint16 { return uint16(s.Truth[i]) }},
		} {
			path := filepath.Join(c.dir, f.name)
			fh, err := os.Open(path)
			if err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(fh)
			fh.Close()
			if err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			g, ok := img.(*image.Gray16)
			if !ok || g.Rect.Dx() != s.Width || g.Rect.Dy() != s.Height {
				t.Fatalf("%s: %T of %v, want 16-bit gray %dx%d", path, img, img.Bounds(), s.Width, s.Height)
			}
			for i := 0; i < s.Width*s.Height; i++ {
				if got := g.Gray16At(i%s.Width, i/s.Width).Y; got != f.want(i) {
					t.Fatalf("%s: pixel %d is %d, generator gives %d; regenerate with the README command", path, i, got, f.want(i))
				}
			}
		}
	}
}
