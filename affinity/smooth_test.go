package affinity

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// The smoothing's closed forms: a constant plane is left as it is (the
// taps sum to 1), and the response to a single bright pixel in the
// middle of the plane is the kernel itself, whose sum is 1 and whose
// second moment along x is that of the sampled Gaussian truncated at
// ceil(3s), Σ k²·G(k)/Σ G(k) (worked here from the definition, not from
// the code's kernel).
func TestGaussianSmoothClosedForms(t *testing.T) {
	for _, s := range []float64{0.6, 1, 1.7, 3} {
		t.Run(fmt.Sprint(s), func(t *testing.T) {
			const w, h = 41, 37
			flat := make([]float32, w*h)
			for i := range flat {
				flat[i] = 0.375
			}
			for i, v := range GaussianSmooth(flat, w, h, s, 2) {
				if math.Abs(float64(v)-0.375) > 1e-6 {
					t.Fatalf("constant plane: pixel %d is %v, want 0.375", i, v)
				}
			}
			impulse := make([]float32, w*h)
			cx, cy := w/2, h/2
			impulse[cy*w+cx] = 1
			out := GaussianSmooth(impulse, w, h, s, 2)
			var sum, m2 float64
			for y := 0; y < h; y++ {
				for x := 0; x < w; x++ {
					v := float64(out[y*w+x])
					sum += v
					m2 += v * float64((x-cx)*(x-cx))
				}
			}
			r := int(math.Ceil(3 * s))
			var g, gk float64
			for k := -r; k <= r; k++ {
				e := math.Exp(-float64(k*k) / (2 * s * s))
				g += e
				gk += float64(k*k) * e
			}
			if math.Abs(sum-1) > 1e-5 {
				t.Errorf("impulse response sums to %v, want 1", sum)
			}
			if want := gk / g; math.Abs(m2-want) > 1e-4*want {
				t.Errorf("impulse response's second moment %v, want %v", m2, want)
			}
			if impulse[cy*w+cx] != 1 {
				t.Error("the input plane was written")
			}
		})
	}
}

// GaussianSmooth against scipy.ndimage.gaussian_filter (Debian
// python3-scipy; mode "reflect" is the same edge reflection, truncate 3
// the same kernel radius for these sigmas) on a random plane: within
// float32 rounding.
func TestGaussianSmoothScipy(t *testing.T) {
	script, err := filepath.Abs("../testdata/smooth/gaussian_filter.py")
	if err != nil {
		t.Fatal(err)
	}
	const w, h = 67, 45
	rng := rand.New(rand.NewPCG(17, 3))
	img := make([]float32, w*h)
	for i := range img {
		img[i] = float32(rng.Float64())
	}
	dir := t.TempDir()
	in, out := filepath.Join(dir, "in.f32"), filepath.Join(dir, "out.f32")
	var buf bytes.Buffer
	if err := binary.Write(&buf, binary.LittleEndian, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(in, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, s := range []float64{1, 1.5, 2.5} {
		var stderr bytes.Buffer
		cmd := exec.Command("/usr/bin/python3", script, in, fmt.Sprint(w), fmt.Sprint(h), fmt.Sprint(s), out)
		cmd.Stderr = &stderr
		if err := cmd.Run(); err != nil {
			if strings.Contains(stderr.String(), "ModuleNotFoundError") || errors.Is(err, exec.ErrNotFound) || errors.Is(err, os.ErrNotExist) {
				loudskip.Skip(t, "scipy is missing; install Debian's python3-scipy to compare with gaussian_filter (%v: %s)", err, stderr.String())
			}
			t.Fatalf("gaussian_filter.py: %v\n%s", err, stderr.String())
		}
		data, err := os.ReadFile(out)
		if err != nil {
			t.Fatal(err)
		}
		ref := make([]float32, w*h)
		if err := binary.Read(bytes.NewReader(data), binary.LittleEndian, ref); err != nil {
			t.Fatal(err)
		}
		got := GaussianSmooth(img, w, h, s, 2)
		worst := 0.0
		for i := range got {
			worst = math.Max(worst, math.Abs(float64(got[i]-ref[i])))
		}
		t.Logf("sigma %v: largest difference from scipy %.2g", s, worst)
		if worst > 2e-6 {
			t.Errorf("sigma %v: largest difference from scipy's gaussian_filter %v, want at most 2e-6", s, worst)
		}
	}
}
