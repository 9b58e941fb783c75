package affinity

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// TestEstimateGrainGratings checks the structure tensor on images whose
// tensor is known in closed form. A grating constant along t has its
// gradient along n everywhere, so J has rank one: coherence c = 1 and
// the grain's direction is t (Bigün and Granlund 1987). Its lines never
// decorrelate along t, so Length is the upper clamp max(w,h)/8. A
// centred Gaussian blob is symmetric under a quarter turn, so J_xx = J_yy
// and J_xy = 0 (hand-worked symmetry): c = 0.
func TestEstimateGrainGratings(t *testing.T) {
	const n = 121
	for _, deg := range []float64{0, 30, 90, -45, 75} {
		t.Run(fmt.Sprintf("grating %v°", deg), func(t *testing.T) {
			st, ct := math.Sincos(deg * math.Pi / 180)
			p := make([]float32, n*n)
			for y := 0; y < n; y++ {
				for x := 0; x < n; x++ {
					u := -st*float64(x) + ct*float64(y) // across the grain
					p[y*n+x] = float32(0.5 + 0.2*math.Sin(2*math.Pi*u/9))
				}
			}
			g := EstimateGrain(p, n, n, 0)
			diff := math.Mod(g.Angle-deg*math.Pi/180+5*math.Pi/2, math.Pi) - math.Pi/2
			if math.Abs(diff) > 1e-3 || g.Share < 0.99 || g.Length != float64(n)/grainMaxLagDivisor {
				t.Errorf("got %+v (angle %.4f°), want angle %v°, share 1, length %v", g, g.Angle*180/math.Pi, deg, float64(n)/grainMaxLagDivisor)
			}
		})
	}
	t.Run("isotropic blob", func(t *testing.T) {
		p := make([]float32, n*n)
		for y := 0; y < n; y++ {
			for x := 0; x < n; x++ {
				dx, dy := float64(x-n/2), float64(y-n/2)
				p[y*n+x] = float32(math.Exp(-(dx*dx + dy*dy) / (2 * 15 * 15)))
			}
		}
		if g := EstimateGrain(p, n, n, 0); g.Share > 1e-4 {
			t.Errorf("share %v, want 0 (quarter-turn symmetry)", g.Share)
		}
	})
}

// TestEstimateGrainLength: lines across y whose strength varies along x
// as cos(2πx/L), I = sin(2πy/P)·cos(2πx/L). The across-grain derivative
// is proportional to cos(2πy/P)·cos(2πx/L) (Gaussian derivatives of a
// separable product stay separable), and its autocorrelation along x at
// lag d is cos(2πd/L) averaged over whole periods, 1/2 at d = L/6 (closed
// form). The lags 2^(k/4) around L/6 with linear interpolation put the
// estimate within 1 %; 4 % allows for the partial period at the edges.
func TestEstimateGrainLength(t *testing.T) {
	for _, L := range []float64{48, 60, 90} {
		const w, h = 360, 360
		p := make([]float32, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				p[y*w+x] = float32(0.5 + 0.2*math.Sin(2*math.Pi*float64(y)/7)*math.Cos(2*math.Pi*float64(x)/L))
			}
		}
		g := EstimateGrain(p, w, h, 0)
		if want := L / 6; math.Abs(g.Length-want) > 0.04*want || math.Abs(g.Angle) > 1e-3 {
			t.Errorf("L=%v: got %+v, want length %.2f along x", L, g, want)
		}
	}
}

// TestRemoveGrainScipy compares RemoveGrain along the axes, where the
// bilinear taps fall on pixels, with scipy.ndimage (Debian python3-scipy):
// I - c·(gaussian_filter1d(I, σ, axis) - gaussian_filter(I, σ)), both
// mode "reflect", truncate 3 (σ = 2: radius 6 in both).
func TestRemoveGrainScipy(t *testing.T) {
	const w, h = 37, 29
	img := noiseImage(11, w, h, 1)[0]
	var buf bytes.Buffer
	if err := binary.Write(&buf, binary.LittleEndian, img); err != nil {
		t.Fatal(err)
	}
	script := `
import sys, numpy as np
from scipy import ndimage as ndi
a = np.frombuffer(sys.stdin.buffer.read(), dtype="<f4").astype(np.float64).reshape(29, 37)
iso = ndi.gaussian_filter(a, 2.0, mode="reflect", truncate=3.0)
for axis in (1, 0):
    t = ndi.gaussian_filter1d(a, 2.0, axis=axis, mode="reflect", truncate=3.0)
    sys.stdout.buffer.write((a - 0.7 * (t - iso)).astype("<f8").tobytes())
`
	var stderr bytes.Buffer
	cmd := exec.Command("/usr/bin/python3", "-c", script)
	cmd.Stdin, cmd.Stderr = &buf, &stderr
	out, err := cmd.Output()
	if err != nil {
		if strings.Contains(stderr.String(), "ModuleNotFoundError") || errors.Is(err, exec.ErrNotFound) || errors.Is(err, os.ErrNotExist) {
			loudskip.Skip(t, "scipy is missing; install Debian's python3-scipy to compare RemoveGrain with scipy.ndimage (%v: %s)", err, stderr.String())
		}
		t.Fatalf("scipy: %v\n%s", err, stderr.String())
	}
	ref := make([]float64, 2*w*h)
	if err := binary.Read(bytes.NewReader(out), binary.LittleEndian, ref); err != nil {
		t.Fatal(err)
	}
	for k, angle := range []float64{0, math.Pi / 2} {
		got := RemoveGrain(img, w, h, Grain{Angle: angle, Share: 0.7, Length: 4}, 0)
		var worst float64
		for i, v := range got {
			worst = max(worst, math.Abs(float64(v)-ref[k*w*h+i]))
		}
		if worst > 1e-5 {
			t.Errorf("angle %v: largest difference from scipy %g, want <= 1e-5 (float32 sums)", angle, worst)
		}
	}
}

// TestGrainWorkers: results are identical for any number of workers.
func TestGrainWorkers(t *testing.T) {
	const w, h = 150, 97
	p := noiseImage(5, w, h, 1)[0]
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			p[y*w+x] += float32(0.3 * math.Sin(0.9*float64(x)+0.5*float64(y)))
		}
	}
	g1 := EstimateGrain(p, w, h, 1)
	r1 := RemoveGrain(p, w, h, g1, 1)
	for _, workers := range []int{2, 3, 8} {
		g := EstimateGrain(p, w, h, workers)
		if g != g1 {
			t.Errorf("workers %d: %+v, with 1 worker %+v", workers, g, g1)
		}
		if r := RemoveGrain(p, w, h, g, workers); !slices.Equal(r, r1) {
			t.Errorf("workers %d: RemoveGrain differs from 1 worker", workers)
		}
	}
}

// BenchmarkGrain512 measures EstimateGrain plus RemoveGrain on a 512 x 512
// plane of oblique lines whose strength varies along them.
func BenchmarkGrain512(b *testing.B) {
	const n = 512
	p := noiseImage(3, n, n, 1)[0]
	for y := 0; y < n; y++ {
		for x := 0; x < n; x++ {
			u, v := 0.8*float64(x)-0.6*float64(y), 0.6*float64(x)+0.8*float64(y)
			p[y*n+x] = 0.1*p[y*n+x] + float32(0.5+0.2*math.Sin(u)*math.Cos(v/20))
		}
	}
	b.ResetTimer()
	for range b.N {
		g := EstimateGrain(p, n, n, 0)
		RemoveGrain(p, n, n, g, 0)
	}
}
