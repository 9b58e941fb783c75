package segment

import (
	"encoding/json"
	"math/rand/v2"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// TestBasins checks the flooding on profiles whose dynamics are known by
// construction: a row 0.2 1.0 0.5 0.8 0.2 has maxima 1.0 and 0.8 meeting
// at 0.5, so the lower one's dynamic is 0.3 (Grimaud 1992's definition).
func TestBasins(t *testing.T) {
	row := []float32{0.2, 1.0, 0.5, 0.8, 0.2}
	wide := []float32{0.2, 1.0, 1.0, 0.5, 0.8, 0.8, 0.2}
	cases := []struct {
		name    string
		v       []float32
		h, rel  float32
		minSize int
		want    []int32
	}{
		// The saddle pixel 0.5 goes with the higher maximum.
		{"dynamic above h", row, 0.2, 0, 1, []int32{0, 0, 0, 1, 1}},
		{"dynamic below h", row, 0.35, 0, 1, []int32{0, 0, 0, 0, 0}},
		{"dynamic below rel of its peak", row, 0.2, 0.5, 1, []int32{0, 0, 0, 0, 0}}, // 0.5 x 0.8 = 0.4 > 0.3
		{"dynamic above rel of its peak", row, 0.2, 0.3, 1, []int32{0, 0, 0, 1, 1}}, // 0.3 x 0.8 = 0.24 < 0.3
		{"lower maximum too small", row, 0.2, 0, 2, []int32{0, 0, 0, 0, 0}},         // one pixel above 0.5
		{"plateau maxima of two pixels", wide, 0.2, 0, 2, []int32{0, 0, 0, 0, 1, 1, 1}},
		{"flat", []float32{0.5, 0.5, 0.5}, 0, 0, 1, []int32{0, 0, 0}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			mask := make([]bool, len(c.v))
			for i := range mask {
				mask[i] = true
			}
			lab, n := basins(c.v, mask, len(c.v), 1, c.h, c.rel, c.minSize)
			if !slices.Equal(lab, c.want) || n != int(slices.Max(c.want))+1 {
				t.Errorf("labels %v (%d basins), want %v", lab, n, c.want)
			}
		})
	}
	// Pixels outside the mask get -1 and split the row.
	lab, n := basins([]float32{1, 0, 1}, []bool{true, false, true}, 3, 1, 0, 0, 1)
	if n != 2 || lab[1] != -1 {
		t.Errorf("masked middle: %d basins, labels %v; want 2 and -1 in the middle", n, lab)
	}
}

// TestBasinsSkimage counts the basins of random smooth integer images
// (rel 0, basins of one pixel allowed, h a half-integer so no dynamic
// equals it) against the regional maxima of dynamic at least h that
// scikit-image's morphology.h_maxima finds with 4-connectivity (Debian's
// python3-skimage, testdata/peaks/hmaxima_check.py): each significant
// maximum is one basin.
func TestBasinsSkimage(t *testing.T) {
	const py = "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import skimage.morphology").Run(); err != nil {
		loudskip.Skip(t, "Debian python3-skimage not installed (apt-get install -y python3-skimage); basins cross-check did not run")
	}
	script := filepath.Join("..", "testdata", "peaks", "hmaxima_check.py")
	rng := rand.New(rand.NewPCG(7, 11))
	type image struct {
		W   int       `json:"w"`
		H   int       `json:"h"`
		V   []float32 `json:"v"`
		Hgt float32   `json:"hgt"`
	}
	var images []image
	var got []int
	for trial := 0; trial < 8; trial++ {
		w, h := 24+trial*5, 20+trial*3
		raw := make([]float32, w*h)
		for i := range raw {
			raw[i] = float32(rng.IntN(256))
		}
		// Two 3x3 means, rounded: smooth hills with plateaus and ties.
		sm := boxMean3(boxMean3(raw, w, h), w, h)
		v := make([]float32, len(sm))
		for i, s := range sm {
			v[i] = float32(int(s + 0.5))
		}
		hgt := 4.5 + float32(trial)
		mask := make([]bool, len(v))
		for i := range mask {
			mask[i] = true
		}
		_, n := basins(v, mask, w, h, hgt, 0, 1)
		if n < 2 {
			t.Fatalf("trial %d: %d basins; the check needs images with several maxima", trial, n)
		}
		images = append(images, image{w, h, v, hgt})
		got = append(got, n)
	}
	in, err := json.Marshal(images)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(py, script)
	cmd.Stdin = strings.NewReader(string(in))
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("%s: %v", script, err)
	}
	var res struct{ Maxima []int }
	if err := json.Unmarshal(out, &res); err != nil || len(res.Maxima) != len(got) {
		t.Fatalf("%s output %q: %v", script, out, err)
	}
	for k, n := range got {
		if n != res.Maxima[k] {
			t.Errorf("image %d (%dx%d, h %.1f): %d basins, skimage %d h-maxima", k, images[k].W, images[k].H, images[k].Hgt, n, res.Maxima[k])
		}
	}
}
