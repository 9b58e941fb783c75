package affinity

import (
	"math"
	"testing"
)

// Closed forms of the scale-normalized Gaussian derivatives (Lindeberg
// 1998): smoothing leaves a ramp a·x and a parabola c·x² with slope a and
// curvature 2c (the Gaussian is normalized and symmetric; its second
// moment adds a constant only), so at the centre of an image far from the
// border E = σ·a on the ramp, E = σ²·2c at the parabola's vertex, and the
// ridge strength is σ²·2c there (positive: a dark line's profile curves
// upward).
func TestEdgeEnergyClosedForms(t *testing.T) {
	const w, h, sigma = 61, 61, 1.5
	cx, cy := 30, 30
	ramp := make([]float32, w*h)
	para := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			dx := float64(x - cx)
			ramp[y*w+x] = float32(0.01 * dx)
			para[y*w+x] = float32(0.002 * dx * dx)
		}
	}
	i := cy*w + cx
	neg := make([]float32, w*h)
	for k, v := range para {
		neg[k] = -v
	}
	dark, bright := RidgeStrengths(para, w, h, sigma, 2)
	negDark, negBright := RidgeStrengths(neg, w, h, sigma, 1)
	cases := []struct {
		name string
		got  float32
		want float64
	}{
		{"ramp energy", EdgeEnergy(ramp, w, h, sigma, 2)[i], sigma * 0.01},
		{"parabola energy", EdgeEnergy(para, w, h, sigma, 1)[i], sigma * sigma * 2 * 0.002},
		// A valley I = a x² (a dark line) has Hessian eigenvalues 2a and 0:
		// dark strength σ²·2a, bright strength 0; negated, the reverse.
		{"valley, dark strength", dark[i], sigma * sigma * 2 * 0.002},
		{"ridge, bright strength", negBright[i], sigma * sigma * 2 * 0.002},
	}
	for _, c := range cases {
		if math.Abs(float64(c.got)-c.want) > 5e-3*c.want { // sampled kernels cut at 4σ
			t.Errorf("%s: %v, want %v", c.name, c.got, c.want)
		}
	}
	for name, v := range map[string]float32{"valley, bright strength": bright[i], "ridge, dark strength": negDark[i]} {
		if math.Abs(float64(v)) > 1e-6 {
			t.Errorf("%s: %v, want 0", name, v)
		}
	}
	// Flat image: no energy anywhere (the second-derivative kernel sums
	// to zero, the first is odd).
	flat := make([]float32, w*h)
	for k := range flat {
		flat[k] = 0.5
	}
	for k, v := range EdgeEnergy(flat, w, h, sigma, 2) {
		if math.Abs(float64(v)) > 1e-6 {
			t.Fatalf("flat image: E[%d] = %v, want 0", k, v)
		}
	}
}

// A thin dark line between two alike halves: the intervening-contour
// factor parts the regions on either side and leaves regions on the same
// side joined (Leung and Malik 1998, the cue's defining property).
func TestRegionGraphContourCue(t *testing.T) {
	const w, h = 40, 20
	f := make([]float32, w*h)
	lab := make([]int32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			f[y*w+x] = 0.8
			if x == 19 || x == 20 {
				f[y*w+x] = 0.2
			}
			lab[y*w+x] = int32(x / 10) // four columns of regions
		}
	}
	r := Summarize([][]float32{f}, w, h, lab, 4)
	adj := Adjacency(w, h, lab, 4, 2)
	e := EdgeEnergy(f, w, h, ContourScale, 1)
	plain, err := RegionGraph(r, adj, w, h, RegionParams{SigmaI: 1, SigmaX: 100})
	if err != nil {
		t.Fatal(err)
	}
	sc := AutoSigmaContour(e, w, h, r, adj)
	cued, err := RegionGraph(r, adj, w, h, RegionParams{SigmaI: 1, SigmaX: 100, Contour: e, SigmaC: sc})
	if err != nil {
		t.Fatal(err)
	}
	weight := func(g *Graph, i, j int) float64 {
		for q := g.RowPtr[i]; q < g.RowPtr[i+1]; q++ {
			if int(g.Col[q]) == j {
				return float64(g.Weight[q])
			}
		}
		return 0
	}
	// Regions 1 and 2 hold the line between them; 0-1 and 2-3 do not.
	across := weight(cued, 1, 2) / weight(plain, 1, 2)
	same := weight(cued, 0, 1) / weight(plain, 0, 1)
	if !(across < 0.05*same) {
		t.Errorf("contour factor across the line %v, on one side %v: want the first far below", across, same)
	}
	if _, err := RegionGraph(r, adj, w, h, RegionParams{SigmaI: 1, SigmaX: 1, Contour: e}); err == nil {
		t.Error("contour without sigma-c: no error")
	}
}
