package segment

import (
	"encoding/json"
	"math"
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

// TestLogFilter compares logFilter with -σ² times
// scipy.ndimage.gaussian_laplace (zero padding, truncated at 3σ; Debian's
// python3-scipy, testdata/peaks/log_check.py) on a random crop, and its
// noise gain with the standard deviation of the filtered white noise
// measured on a large field.
func TestLogFilter(t *testing.T) {
	const w, h = 23, 17
	rng := rand.New(rand.NewPCG(5, 6))
	f := make([]float32, w*h)
	for i := range f {
		f[i] = float32(rng.Float64())
	}
	for _, sigma := range []float64{0.9, 1.5, 2} {
		got, _ := logFilter(f, w, h, sigma)
		const py = "/usr/bin/python3"
		if err := exec.Command(py, "-c", "import scipy.ndimage").Run(); err != nil {
			loudskip.Skip(t, "Debian python3-scipy not installed (apt-get install -y python3-scipy); logFilter cross-check did not run")
		}
		in, _ := json.Marshal(map[string]any{"w": w, "h": h, "v": f, "sigma": sigma})
		cmd := exec.Command(py, filepath.Join("..", "testdata", "peaks", "log_check.py"))
		cmd.Stdin = strings.NewReader(string(in))
		out, err := cmd.Output()
		if err != nil {
			t.Fatal(err)
		}
		var res struct{ Log []float64 }
		if err := json.Unmarshal(out, &res); err != nil || len(res.Log) != len(got) {
			t.Fatalf("log_check.py output %q: %v", out, err)
		}
		for i, want := range res.Log {
			if math.Abs(float64(got[i])-want) > 1e-5 {
				t.Fatalf("σ %g pixel %d: %g, scipy %g", sigma, i, got[i], want)
			}
		}
	}
	// Noise gain: white noise of standard deviation 1 on a 200 x 200
	// field, inner pixels only (no padding effects).
	const n = 200
	noise := make([]float32, n*n)
	for i := range noise {
		noise[i] = float32(rng.NormFloat64())
	}
	out, gain := logFilter(noise, n, n, 1.5)
	var s2 float64
	var m int
	for y := 10; y < n-10; y++ {
		for x := 10; x < n-10; x++ {
			s2 += float64(out[y*n+x]) * float64(out[y*n+x])
			m++
		}
	}
	if sd := math.Sqrt(s2 / float64(m)); math.Abs(sd-gain) > 0.05*gain {
		t.Errorf("filtered noise sd %.4f, gain %.4f", sd, gain)
	}
}

// TestShoulderBasins runs the Laplacian-of-Gaussian fallback on its own:
// a dim spot (peak 0.45) 5 px beside a bright one (Gaussians of σ = 1.5
// px, the object drawn above 0.3) is parted from it; a dumbbell of two
// equal discs of even contrast, whose filtered outline also has two
// maxima, is not (its sides do not differ in contrast, objectCrop.differ).
// Expected outcomes are the function's definition.
func TestShoulderBasins(t *testing.T) {
	const w, h = 24, 16
	run := func(name string, want int, value func(x, y float64) float64) {
		t.Helper()
		rng := rand.New(rand.NewPCG(8, 13))
		feat := make([]float32, w*h)
		var nodes []int
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				if v := value(float64(x), float64(y)); v > 0.3 {
					feat[y*w+x] = float32(v + 0.01*rng.NormFloat64())
					nodes = append(nodes, y*w+x)
				}
			}
		}
		o := &objectCrop{feat: feat, cw: w, ch: h, nodes: nodes, noise: 0.01}
		inR := make([]int, len(nodes))
		for k := range inR {
			inR[k] = k
		}
		d, b := partDistance(nodes, w)
		mask := make([]bool, b.w*b.h)
		for _, c := range nodes {
			mask[b.at(c, w)] = true
		}
		if _, n := shoulderBasins(o, nodes, inR, mask, d, b, 5); n != want {
			t.Errorf("%s: %d basins, want %d", name, n, want)
		}
	}
	gauss := func(x, y, cx, cy float64) float64 {
		return math.Exp(-((x-cx)*(x-cx) + (y-cy)*(y-cy)) / (2 * 1.5 * 1.5))
	}
	run("dim spot beside a bright one", 2, func(x, y float64) float64 { return gauss(x, y, 9, 8) + 0.45*gauss(x, y, 14, 8) })
	run("one spot", 1, func(x, y float64) float64 { return gauss(x, y, 11, 8) })
	run("even dumbbell", 1, func(x, y float64) float64 {
		if math.Hypot(x-8, y-8) <= 3.2 || math.Hypot(x-15, y-8) <= 3.2 || (x >= 8 && x <= 15 && math.Abs(y-8) <= 1) {
			return 0.8
		}
		return 0
	})
}
