package main

import (
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/render"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

func decodePNG(t *testing.T, p string) image.Image {
	t.Helper()
	f, err := os.Open(p)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s: %v", p, err)
	}
	return img
}

// writePNGFile encodes img as a PNG file at p, failing the test on any
// error.
func writePNGFile(t *testing.T, p string, img image.Image) {
	t.Helper()
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	if err := png.Encode(f, img); err != nil {
		f.Close()
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// segmentRGB writes img as dir/rgb.png, segments it with two classes on a
// dark background into dir and returns the label map the run wrote.
func segmentRGB(t *testing.T, dir string, img image.Image) []int32 {
	t.Helper()
	p := filepath.Join(dir, "rgb.png")
	writePNGFile(t, p, img)
	if code, _, stderr := runCleave("segment", "--classes", "2", "--background", "dark", "--out", dir, p); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	lm, err := imageio.ReadLabels(filepath.Join(dir, "rgb.labels.png"))
	if err != nil {
		t.Fatal(err)
	}
	return lm.Pix
}

func rgb8(img image.Image, x, y int) [3]uint8 {
	r, g, b, _ := img.At(x, y).RGBA()
	return [3]uint8{uint8(r >> 8), uint8(g >> 8), uint8(b >> 8)}
}

// readRegionRows reads regions.csv into label -> column -> cell.
func readRegionRows(t *testing.T, p string) map[int32]map[string]string {
	t.Helper()
	recs := readCSV(t, p)
	out := map[int32]map[string]string{}
	for _, row := range recs[1:] {
		m := map[string]string{}
		for k, name := range recs[0] {
			m[name] = row[k]
		}
		l, err := strconv.Atoi(m["label"])
		if err != nil {
			t.Fatalf("label %q: %v", m["label"], err)
		}
		out[int32(l)] = m
	}
	return out
}

// TestSegmentPictures: on the shipped nuclei-1.png, the preview shows
// label 0 black and touching labels in different colours (one colour per
// label); the overlay carries numbers whose ink is the digit font's
// glyphs of the label, placed at the centroid that regions.csv gives for
// that label (to within half a pixel of the box centre); the record lists
// the preview.
func TestSegmentPictures(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	dir := t.TempDir()
	in := filepath.Join("..", "..", "examples", "nuclei", "nuclei-1.png")
	if code, _, stderr := runCleave("segment", "--classes", "2", "--background", "dark", "--out", dir, in); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	lm, err := imageio.ReadLabels(filepath.Join(dir, "nuclei-1.labels.png"))
	if err != nil {
		t.Fatal(err)
	}
	labels, w, h := lm.Pix, lm.Width, lm.Height
	prev := decodePNG(t, filepath.Join(dir, "nuclei-1.preview.png"))
	colourOf := map[int32][3]uint8{}
	for y := range h {
		for x := range w {
			l, c := labels[y*w+x], rgb8(prev, x, y)
			if (l == 0) != (c == [3]uint8{}) {
				t.Fatalf("preview (%d, %d): label %d has colour %v", x, y, l, c)
			}
			if old, ok := colourOf[l]; ok && old != c {
				t.Fatalf("preview: label %d has colours %v and %v", l, old, c)
			}
			colourOf[l] = c
		}
	}
	touching := 0
	for y := range h - 1 {
		for x := range w - 1 {
			a := labels[y*w+x]
			for _, b := range []int32{labels[y*w+x+1], labels[(y+1)*w+x], labels[(y+1)*w+x+1]} {
				if a > 0 && b > 0 && a != b {
					touching++
					if colourOf[a] == colourOf[b] {
						t.Errorf("preview: touching labels %d and %d share colour %v", a, b, colourOf[a])
					}
				}
			}
		}
	}
	if touching == 0 {
		t.Error("no touching objects in the scene: the neighbour check checked nothing")
	}
	rows := readRegionRows(t, filepath.Join(dir, "nuclei-1.regions.csv"))
	over := decodePNG(t, filepath.Join(dir, "nuclei-1.overlay.png"))
	places := imageio.PlaceNumbers(labelmap.Map{Pix: labels, Width: w, Height: h})
	if len(places) < len(rows)/2 {
		t.Errorf("%d of %d objects numbered; want most of them (nuclei of radius 6-12 fit 5 x 7 digits)", len(places), len(rows))
	}
	for _, p := range places {
		row, ok := rows[p.Label]
		if !ok {
			t.Fatalf("number %d on the overlay has no row in regions.csv", p.Label)
		}
		cx, _ := strconv.ParseFloat(row["centroid_x"], 64)
		cy, _ := strconv.ParseFloat(row["centroid_y"], 64)
		bw, bh := render.NumberSize(int(p.Label), p.Scale)
		mx, my := float64(p.X)+float64(bw-1)/2, float64(p.Y)+float64(bh-1)/2
		if math.Abs(mx-cx) > 1 || math.Abs(my-cy) > 1 {
			t.Errorf("label %d: number centred at (%g, %g), regions.csv centroid (%g, %g)", p.Label, mx, my, cx, cy)
		}
		digits := strconv.Itoa(int(p.Label))
		for k, d := range digits {
			for gy := range 7 {
				for gx := range 5 {
					x, y := p.X+(k*6+gx)*p.Scale, p.Y+gy*p.Scale
					white := rgb8(over, x, y) == [3]uint8{255, 255, 255}
					if white != render.DigitInk(int(d-'0'), gx, gy) {
						t.Fatalf("label %d: overlay pixel (%d, %d) white %v, the glyph of %c says %v", p.Label, x, y, white, d, !white)
					}
				}
			}
		}
	}
	rec, err := pipeline.ReadRecord(filepath.Join(dir, "nuclei-1.json"))
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Contains(rec.Outputs, "nuclei-1.preview.png") {
		t.Errorf("record outputs %v lack the preview", rec.Outputs)
	}
}

// TestOverlayKeepsColour: the overlay of a colour PNG shows, away from
// boundaries and outside objects, the input's own colour through one
// window for the three channels (imageio.ColourWindow of the planes as
// image/png decodes them): each channel (v - lo) / (hi - lo) * 255,
// rounded, clipped; so a red background stays red, not gray.
func TestOverlayKeepsColour(t *testing.T) {
	dir := t.TempDir()
	w, h := 64, 48
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	planes := [][]float32{make([]float32, w*h), make([]float32, w*h), make([]float32, w*h)}
	for y := range h {
		for x := range w {
			c := color.NRGBA{uint8(150 + x), uint8(40 + y), 30, 255} // reddish background
			if (x-20)*(x-20)+(y-24)*(y-24) < 81 {
				c = color.NRGBA{40, 200, uint8(220 + y%5), 255}
			}
			img.SetNRGBA(x, y, c)
			planes[0][y*w+x], planes[1][y*w+x], planes[2][y*w+x] = float32(c.R), float32(c.G), float32(c.B)
		}
	}
	labels := segmentRGB(t, dir, img)
	lo, hi := imageio.ColourWindow(planes, 1)
	over := decodePNG(t, filepath.Join(dir, "rgb.overlay.png"))
	checked := 0
	for y := 1; y < h-1; y++ {
		for x := 1; x < w-1; x++ {
			i := y*w + x
			if labels[i] != 0 || labels[i+1] != 0 || labels[i+w] != 0 {
				continue
			}
			var want [3]uint8
			for k := range 3 {
				want[k] = uint8(math.Round(255 * min(max((float64(planes[k][i])-lo)/(hi-lo), 0), 1)))
			}
			if got := rgb8(over, x, y); got != want {
				t.Fatalf("overlay (%d, %d): %v; want the input's colour %v", x, y, got, want)
			}
			checked++
		}
	}
	if checked < w*h/2 {
		t.Fatalf("only %d background pixels checked", checked)
	}
}
