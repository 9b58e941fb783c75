package segment

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
)

// stencilScene is a w x h plane of uniform noise of amplitude 0.2 with
// the pixels of the given columns raised by 2: at sigma_I = 0.1 the edges
// into those columns are left out (kernel argument above 86), so each
// such column cuts the graph when the radius is 1 (worked out from
// PixelGraph's rule; common practice for testing component labelling).
func stencilScene(seed uint64, w, h int, cuts ...int) [][]float32 {
	rng := rand.New(rand.NewPCG(seed, 7))
	p := make([]float32, w*h)
	for i := range p {
		p[i] = float32(0.2 * rng.Float64())
	}
	for _, x := range cuts {
		for y := 0; y < h; y++ {
			p[y*w+x] += 2
		}
	}
	return [][]float32{p}
}

// TestStencilComponentsMatchesCSR checks the components of the stencil
// form against Components of the compressed rows (the reference), over
// radii and sizes with one and with several components.
func TestStencilComponentsMatchesCSR(t *testing.T) {
	for _, c := range []struct {
		w, h, r int
		cuts    []int
		want    int // components, 0: do not check the count
	}{
		{1, 1, 1, nil, 1},
		{3, 1, 1, []int{1}, 3},
		{8, 5, 1, []int{3}, 0},
		{8, 5, 1, nil, 1},
		{20, 9, 2, []int{5, 6}, 0},
		{30, 20, 5, []int{10}, 2}, // the column itself; r = 5 bridges it
		{17, 23, 3, nil, 1},
	} {
		t.Run(fmt.Sprintf("%dx%d_r%d_%v", c.w, c.h, c.r, c.cuts), func(t *testing.T) {
			f := stencilScene(uint64(c.w+c.h), c.w, c.h, c.cuts...)
			p := affinity.PixelParams{Radius: c.r, SigmaI: 0.1, SigmaX: 4}
			sg, err := affinity.PixelStencilGraph(f, c.w, c.h, p, 1)
			if err != nil {
				t.Fatal(err)
			}
			g, err := affinity.PixelGraph(f, c.w, c.h, p, 1)
			if err != nil {
				t.Fatal(err)
			}
			want, nw := Components(g)
			got, ng := stencilComponents(sg)
			if ng != nw || fmt.Sprint(got) != fmt.Sprint(want) {
				t.Fatalf("%d components %v, want %d %v", ng, got, nw, want)
			}
			if c.want > 0 && nw != c.want {
				t.Fatalf("%d components, want %d", nw, c.want)
			}
		})
	}
}

// TestKwayStencilMatchesCSR checks that the k-way cut of the pixel graph
// in stencil form labels every pixel as the cut of its compressed rows
// does (kwayComponents, the reference), on a connected graph (solved in
// stencil form) and on one with several components (the fallback).
func TestKwayStencilMatchesCSR(t *testing.T) {
	for _, c := range []struct {
		name string
		w, h int
		cuts []int
		k    int
	}{
		{"connected", 48, 40, nil, 4},
		{"tiny", 6, 5, nil, 3},
		{"split", 40, 30, []int{12}, 4},
	} {
		t.Run(c.name, func(t *testing.T) {
			f := blobPlane(uint64(c.w), c.w, c.h)
			if c.cuts != nil {
				f = stencilScene(3, c.w, c.h, c.cuts...)
			}
			pp := affinity.PixelParams{Radius: 3, SigmaI: 0.1, SigmaX: 4}
			if c.cuts != nil {
				pp.Radius = 1
			}
			sg, err := affinity.PixelStencilGraph(f, c.w, c.h, pp, 1)
			if err != nil {
				t.Fatal(err)
			}
			if _, nc := stencilComponents(sg); (nc > 1) != (c.cuts != nil) {
				t.Fatalf("%d components", nc)
			}
			p := DefaultParams()
			p.Method, p.Segments, p.Workers = MethodKway, c.k, 2
			got, err := kwayStencil(context.Background(), sg, p)
			if err != nil {
				t.Fatal(err)
			}
			want, err := kwayComponents(context.Background(), sg.CSR(), nil, p)
			if err != nil {
				t.Fatal(err)
			}
			if got.regions != want.regions || fmt.Sprint(got.region) != fmt.Sprint(want.region) || fmt.Sprint(got.eigenvalues) != fmt.Sprint(want.eigenvalues) {
				t.Fatalf("regions %d eigenvalues %v, want %d and %v", got.regions, got.eigenvalues, want.regions, want.eigenvalues)
			}
			if got.regions < 2 {
				t.Fatalf("%d regions: the test cut nothing", got.regions)
			}
		})
	}
}

// blobPlane is a smooth w x h scene of two bright disks on a dark ramp
// with noise of amplitude 0.05.
func blobPlane(seed uint64, w, h int) [][]float32 {
	rng := rand.New(rand.NewPCG(seed, 8))
	p := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.1 + 0.2*float64(x)/float64(w)
			dx1, dy1 := float64(x)-0.3*float64(w), float64(y)-0.4*float64(h)
			dx2, dy2 := float64(x)-0.7*float64(w), float64(y)-0.6*float64(h)
			r := 0.2 * float64(min(w, h))
			if dx1*dx1+dy1*dy1 < r*r {
				v = 0.8
			} else if dx2*dx2+dy2*dy2 < r*r {
				v = 0.6
			}
			p[y*w+x] = float32(v + 0.05*rng.Float64())
		}
	}
	return [][]float32{p}
}
