package main

import (
	"encoding/json"
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

// --flatten-radii sets each image's shading-correction scale from the
// object radius estimated on it: on a generated haze scene (sparse nuclei
// on glows, seed 14500) the record gives the radius, within a factor 1.5
// of the nuclei's own equivalent radius (√(area/π) of the truth masks,
// median), and a scale of three times it. On pure noise no object scale
// is found: the image is left unflattened and the record says so.
func TestFlattenRadii(t *testing.T) {
	dir := t.TempDir()
	sc, err := scenes.Generate("haze", 384, 384, 14500, 16)
	if err != nil {
		t.Fatal(err)
	}
	haze := filepath.Join(dir, "haze.png")
	if err := scenes.WritePNG(haze, sc.Image()); err != nil {
		t.Fatal(err)
	}
	noise := image.NewGray16(image.Rect(0, 0, 128, 128))
	r := rand.New(rand.NewPCG(4, 4))
	for y := 0; y < 128; y++ {
		for x := 0; x < 128; x++ {
			noise.SetGray16(x, y, color.Gray16{Y: uint16(20000 + 2000*r.NormFloat64())})
		}
	}
	flat := filepath.Join(dir, "noise.png")
	if err := scenes.WritePNG(flat, noise); err != nil {
		t.Fatal(err)
	}
	type record struct {
		Input struct {
			Flatten       float64 `json:"flatten"`
			FlattenRadius float64 `json:"flatten_radius"`
		} `json:"input"`
		Warnings []struct{ Code string } `json:"warnings"`
	}
	read := func(stem string) record {
		t.Helper()
		var rec record
		data, err := os.ReadFile(filepath.Join(dir, "out", stem+".json"))
		if err == nil {
			err = json.Unmarshal(data, &rec)
		}
		if err != nil {
			t.Fatal(err)
		}
		return rec
	}
	for _, in := range []string{haze, flat} {
		if code, _, stderr := runCleave("segment", "--classes", "2", "--background", "dark", "--flatten-radii", "3", "--flatten-mode", "subtract", "--out", filepath.Join(dir, "out"), in); code != exitOK {
			t.Fatalf("%s: exit %d: %s", in, code, stderr)
		}
	}
	area := map[int32]int{}
	for _, l := range sc.Truth {
		if l > 0 {
			area[l]++
		}
	}
	var radii []float64
	for _, a := range area {
		radii = append(radii, math.Sqrt(float64(a)/math.Pi))
	}
	slices.Sort(radii)
	want := radii[len(radii)/2]
	rec := read("haze")
	if got := rec.Input.FlattenRadius; got < want/1.5 || got > want*1.5 {
		t.Errorf("haze: object radius %.2f px, want within a factor 1.5 of the nuclei's median %.2f", got, want)
	}
	if got := rec.Input.Flatten; math.Abs(got-3*rec.Input.FlattenRadius) > 1e-9 {
		t.Errorf("haze: flatten scale %g, want 3 x %g", got, rec.Input.FlattenRadius)
	}
	rec = read("noise")
	warned := false
	for _, w := range rec.Warnings {
		warned = warned || w.Code == "not-flattened"
	}
	if rec.Input.Flatten != 0 || !warned {
		t.Errorf("noise: flatten %g, warnings %v; want 0 and a not-flattened warning", rec.Input.Flatten, rec.Warnings)
	}
}
