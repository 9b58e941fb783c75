package segment

import (
	"context"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/score"
)

// The modified Shepp-Logan phantom (Shepp and Logan 1974, contrasts of Toft
// 1996), a published standard with exact regions, rendered with Gaussian
// noise: the regions cleave finds must agree with the phantom's regions at
// ARI >= 0.9 (Hubert and Arabie 1985; the threshold is the acceptance
// figure of the engine's issue). The phantom is embedded in a canvas with
// a margin of n/6 on every side: drawn edge to edge on [-1, 1]², the
// background outside the skull is two halves joined by strips a few
// pixels wide, a true bottleneck that any normalized cut rightly takes.
func TestSheppLoganARI(t *testing.T) {
	for _, c := range []struct {
		name        string
		n           int
		superpixels int
	}{
		{"pixel graph 96", 96, 0},
		{"superpixels 240", 240, 2000},
	} {
		t.Run(c.name, func(t *testing.T) {
			vals, inner := scenes.SheppLogan(c.n)
			m := c.n / 6
			size := c.n + 2*m
			rng := rand.New(rand.NewPCG(11, 12))
			f := make([]float32, size*size)
			regions := make([]int32, size*size)
			for y := 0; y < size; y++ {
				for x := 0; x < size; x++ {
					var v float64
					if xi, yi := x-m, y-m; xi >= 0 && yi >= 0 && xi < c.n && yi < c.n {
						v, regions[y*size+x] = vals[yi*c.n+xi], inner[yi*c.n+xi]
					}
					f[y*size+x] = float32(v + 0.02*rng.NormFloat64())
				}
			}
			p := defaultParams()
			p.Superpixels = c.superpixels
			p.Workers = 2
			res, err := Run(context.Background(), Input{Width: size, Height: size, Planes: [][]float32{f}, Luminance: f}, p)
			if err != nil {
				t.Fatal(err)
			}
			ari := score.ARI(res.Regions, regions)
			t.Logf("%d regions, ARI %.4f", res.NumRegions, ari)
			if ari < 0.9 {
				t.Errorf("ARI %.4f against the phantom's regions, want >= 0.9", ari)
			}
		})
	}
}
