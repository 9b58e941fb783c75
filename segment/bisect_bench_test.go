package segment

import (
	"context"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/imageio/scenes"
)

// BenchmarkCutsCamera is the top-level recursive bisection (the cuts
// stage) alone on the superpixel graph of a generated nuclei frame of
// 2048 x 2048 pixels (seed 14500, as cmd/cleave's BenchmarkSegmentCamera;
// the graph is the one Run builds with the default parameters and
// classes 2, background dark). The regions count as one node each
// (bisect with no areas, minimum area 1 node), so the splits are close
// to, not the same as, the command's. cpu-s/op is the process's CPU
// time per bisection, on all cores.
func BenchmarkCutsCamera(b *testing.B) {
	sc, err := scenes.Generate("nuclei", 2048, 2048, 14500, 16)
	if err != nil {
		b.Fatal(err)
	}
	p := DefaultParams()
	p.Classes, p.Background = 2, BackgroundDark
	res, err := Run(context.Background(), sceneInput(sc), p)
	if err != nil {
		b.Fatal(err)
	}
	g, ok := res.Graph.(*affinity.Graph)
	if !ok {
		b.Fatalf("graph is %T, want the superpixel graph", res.Graph)
	}
	var regions int
	c0 := cpuSeconds()
	for b.Loop() {
		cut, err := bisect(context.Background(), g, nil, cutParams{maxNcut: p.MaxNcut, minArea: 1, seed: p.Seed}, cutOptions{stability: true})
		if err != nil {
			b.Fatal(err)
		}
		regions = cut.regions
	}
	b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
	b.ReportMetric(float64(g.N), "nodes")
	b.ReportMetric(float64(regions), "regions")
}
