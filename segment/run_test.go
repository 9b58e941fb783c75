package segment

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

func defaultParams() Params {
	return Params{
		Superpixels: -1, Compactness: 20, Radius: 5, AutoSigmaI: true, AutoSigmaX: true,
		Method: MethodBisect, MaxSegments: 12, MaxNcut: 0.15, MinArea: 20, Workers: 1, Seed: 1,
	}
}

// discs renders bright discs on a dark ramp with Gaussian noise.
func discs(w, h int, seed uint64) Input {
	rng := rand.New(rand.NewPCG(seed, 1))
	f := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.1 + 0.1*float64(x)/float64(w)
			for _, c := range [][3]float64{{0.3, 0.3, 0.12}, {0.7, 0.6, 0.15}, {0.35, 0.75, 0.1}} {
				dx, dy := float64(x)-c[0]*float64(w), float64(y)-c[1]*float64(h)
				if dx*dx+dy*dy < c[2]*c[2]*float64(w*w) {
					v = 0.8
				}
			}
			f[y*w+x] = float32(v + 0.03*rng.NormFloat64())
		}
	}
	return Input{Width: w, Height: h, Planes: [][]float32{f}, Luminance: f}
}

// Same labels for any worker count (DEVELOPERS.md, habits: determinism), on the pixel
// graph and on superpixels, for both methods.
func TestRunWorkersIdentical(t *testing.T) {
	for _, c := range []struct {
		name        string
		w, h        int
		superpixels int
		method      Method
	}{
		{"pixels bisect", 64, 48, 0, MethodBisect},
		{"pixels kway", 64, 48, 0, MethodKway},
		{"superpixels bisect", 200, 160, 400, MethodBisect},
	} {
		t.Run(c.name, func(t *testing.T) {
			in := discs(c.w, c.h, 5)
			p := defaultParams()
			p.Superpixels, p.Method, p.Classes, p.Background = c.superpixels, c.method, 2, "dark"
			if c.method == MethodKway {
				p.Segments = 4
			}
			var first *Result
			for _, workers := range []int{1, 2, 3} {
				p.Workers = workers
				res, err := Run(context.Background(), in, p)
				if err != nil {
					t.Fatal(err)
				}
				if first == nil {
					first = res
					continue
				}
				if !slices.Equal(res.Labels.Pix, first.Labels.Pix) || !slices.Equal(res.Eigenvalues, first.Eigenvalues) {
					t.Fatalf("workers %d changed the result", workers)
				}
			}
			if first.NumObjects != 3 {
				t.Errorf("%d objects, want the 3 discs", first.NumObjects)
			}
		})
	}
}

// Degenerate but valid inputs get a sensible result: one region, no NaN.
func TestRunDegenerate(t *testing.T) {
	for _, c := range []struct {
		name string
		w, h int
		v    float32
	}{{"1x1", 1, 1, 0.5}, {"constant", 40, 30, 0.25}, {"constant zero", 20, 20, 0}, {"1x50", 1, 50, 1}} {
		t.Run(c.name, func(t *testing.T) {
			f := make([]float32, c.w*c.h)
			for i := range f {
				f[i] = c.v
			}
			for _, m := range []Method{MethodBisect, MethodKway} {
				for _, bg := range []Background{BackgroundDark, BackgroundBright} {
					p := defaultParams()
					p.Method, p.Classes, p.Background = m, 2, bg
					res, err := Run(context.Background(), Input{Width: c.w, Height: c.h, Planes: [][]float32{f}, Luminance: f}, p)
					if err != nil {
						t.Fatalf("%s: %v", m, err)
					}
					if res.NumRegions != 1 {
						t.Errorf("%s: %d regions, want 1", m, res.NumRegions)
					}
					// Nothing stands out from a single region: no
					// objects, whichever side is the background.
					if res.NumObjects != 0 {
						t.Errorf("%s, background %s: %d objects, want 0", m, bg, res.NumObjects)
					}
					for _, v := range res.Eigenvalues {
						if math.IsNaN(v) {
							t.Errorf("%s: NaN eigenvalue", m)
						}
					}
				}
			}
		})
	}
}

func TestParamsValidate(t *testing.T) {
	bad := []struct {
		name string // the parameter the error must name
		set  func(*Params)
	}{
		{"sigma-i", func(p *Params) { p.AutoSigmaI, p.SigmaI = false, 0 }},
		{"sigma-i", func(p *Params) { p.AutoSigmaI, p.SigmaI = false, -1 }},
		{"sigma-i", func(p *Params) { p.AutoSigmaI, p.SigmaI = false, math.NaN() }},
		{"sigma-x", func(p *Params) { p.AutoSigmaX, p.SigmaX = false, math.Inf(1) }},
		{"radius", func(p *Params) { p.Radius = 0 }},
		{"max-ncut", func(p *Params) { p.MaxNcut = 0 }},
		{"method", func(p *Params) { p.Method = "spectral" }},
		{"classes", func(p *Params) { p.Classes = 1 }},
		{"background", func(p *Params) { p.Background = "grey"; p.Classes = 2 }},
		{"background", func(p *Params) { p.Background = BackgroundDark }},
		{"segments", func(p *Params) { p.Segments = -2 }},
		// Ranges: each bound plus one step.
		{"sigma-i", func(p *Params) { p.AutoSigmaI, p.SigmaI = false, MinSigmaI/2 }},
		{"sigma-i", func(p *Params) { p.AutoSigmaI, p.SigmaI = false, MaxSigmaI*1.01 }},
		{"sigma-x", func(p *Params) { p.AutoSigmaX, p.SigmaX = false, MinSigmaX/2 }},
		{"sigma-x", func(p *Params) { p.AutoSigmaX, p.SigmaX = false, 1e308 }},
		{"radius", func(p *Params) { p.Radius = MaxRadius + 1 }},
		{"superpixels", func(p *Params) { p.Superpixels = MaxSuperpixels + 1 }},
		{"compactness", func(p *Params) { p.Compactness = MaxCompactness + 1 }},
		{"compactness", func(p *Params) { p.Compactness = 0 }},
		{"max-ncut", func(p *Params) { p.MaxNcut = 2.0001 }},
		{"segments", func(p *Params) { p.Method, p.Segments = MethodKway, MaxKwaySegments+1 }},
		{"segments", func(p *Params) { p.Segments = MaxBisectSegments + 1 }},
		{"max-segments", func(p *Params) { p.MaxSegments = MaxKwaySegments + 1 }},
		{"max-segments", func(p *Params) { p.Method, p.MaxSegments = MethodKway, 1 }},
		{"min-area", func(p *Params) { p.MinArea = MaxMinArea + 1 }},
		{"min-area", func(p *Params) { p.MinArea = -1 }},
		{"classes", func(p *Params) { p.Classes = MaxClasses + 1 }},
		{"classes", func(p *Params) { p.Classes = 1 << 31 }},
		{"faint", func(p *Params) { p.Classes, p.Background, p.Faint = 2, BackgroundDark, MinFaint-1 }},
		{"faint", func(p *Params) { p.Classes, p.Background, p.Faint = 2, BackgroundBright, MaxFaint+1 }},
		{"faint", func(p *Params) { p.Classes, p.Background, p.Faint = 2, BackgroundDark, -1 }},
		{"faint", func(p *Params) { p.Faint = 4 }},                                             // no background
		{"faint", func(p *Params) { p.Classes, p.Background, p.Faint = 3, BackgroundDark, 4 }}, // three classes
		{"faint", func(p *Params) { p.Background, p.Faint = BackgroundLines, 4 }},
		{"faint", func(p *Params) { p.Classes, p.Background, p.Faint, p.Superpixels = 2, BackgroundDark, 4, 0 }}, // pixel graph
	}
	for i, c := range bad {
		p := defaultParams()
		c.set(&p)
		var pe *ParamError
		if err := p.Validate(); !errors.As(err, &pe) || pe.Name != c.name {
			t.Errorf("case %d: %+v: error %v, want a ParamError naming %s", i, p, err, c.name)
		}
	}
	if err := DefaultParams().Validate(); err != nil {
		t.Errorf("DefaultParams rejected: %v", err)
	}
	if err := defaultParams().Validate(); err != nil {
		t.Errorf("defaults rejected: %v", err)
	}
	// Each end of each range is accepted.
	good := []func(*Params){
		func(p *Params) { p.AutoSigmaI, p.SigmaI, p.AutoSigmaX, p.SigmaX = false, MinSigmaI, false, MinSigmaX },
		func(p *Params) { p.AutoSigmaI, p.SigmaI, p.AutoSigmaX, p.SigmaX = false, MaxSigmaI, false, MaxSigmaX },
		func(p *Params) {
			p.Radius, p.Superpixels, p.Compactness, p.MaxNcut = MaxRadius, MaxSuperpixels, MaxCompactness, MaxNcutLimit
		},
		func(p *Params) { p.Method, p.Segments, p.MaxSegments = MethodKway, MaxKwaySegments, MaxKwaySegments },
		func(p *Params) { p.Segments, p.MinArea, p.Classes = MaxBisectSegments, MaxMinArea, MaxClasses },
		func(p *Params) { p.Classes, p.Background, p.Faint = 2, BackgroundDark, MinFaint },
		func(p *Params) { p.Classes, p.Background, p.Faint = 2, BackgroundBright, MaxFaint },
	}
	for i, f := range good {
		p := defaultParams()
		f(&p)
		if err := p.Validate(); err != nil {
			t.Errorf("range end %d refused: %v", i, err)
		}
	}
}

// Counts the graph cannot hold are refused before it is built: a k-way K
// or a class count above the nodes (12 pixels here, the pixel graph) is a
// *ParamError naming the parameter; K equal to the nodes gives at most one
// region per node.
func TestCountsAboveNodes(t *testing.T) {
	in := discs(4, 3, 1)
	for _, c := range []struct {
		name string
		set  func(*Params)
	}{
		{"segments", func(p *Params) { p.Method, p.Segments = MethodKway, 13 }},
		{"segments", func(p *Params) { p.Method, p.Segments = MethodKway, 50 }},
		{"classes", func(p *Params) { p.Classes = 13 }},
	} {
		p := defaultParams()
		p.MinArea = 0
		c.set(&p)
		var pe *ParamError
		if _, err := Run(context.Background(), in, p); !errors.As(err, &pe) || pe.Name != c.name {
			t.Errorf("%s: error %v, want a ParamError naming %s", c.name, err, c.name)
		}
	}
	p := defaultParams()
	p.Method, p.Segments, p.MinArea = MethodKway, 12, 0
	res, err := Run(context.Background(), in, p)
	if err != nil {
		t.Fatal(err)
	}
	if res.NumRegions < 1 || res.NumRegions > 12 {
		t.Errorf("%d regions for 12 pixels", res.NumRegions)
	}
}

// A Cache must not change any result: for every max-ncut at or below
// the tree's threshold the pruned bisection, and for every sigma-i the
// shared superpixels, give what a direct run gives (labels, regions,
// objects, split list, eigenvalues), on the pixel graph and on
// superpixels, whatever order the settings come in.
func TestCacheSameAsDirect(t *testing.T) {
	for _, c := range []struct {
		name string
		in   Input
		sp   int
		si   []float64 // 0: automatic
	}{
		{"pixels 64x48", faintDiscs(64, 48, 3), 0, []float64{0.03}},
		{"superpixels 200x160", faintDiscs(200, 160, 3), 400, []float64{0, 0.05}},
		// A generated scene: faint and touching nuclei in a shaded
		// background, the classes and objects stages after the cut.
		{"nuclei scene 256x256", sceneInput(scenes.Nuclei(scenes.NucleiOptions{Width: 256, Height: 256, Seed: 77, DimFraction: 0.4})), -1, []float64{0, 0.03}},
	} {
		t.Run(c.name, func(t *testing.T) {
			cache := &Cache{Ceiling: 0.2}
			in := c.in
			in.Cache = cache
			counts := map[int]bool{}
			for _, si := range c.si {
				for _, mx := range []float64{0.05, 0.2, 0.001, 0.1, 0.00001, 0.3} {
					p := defaultParams()
					p.Superpixels, p.MaxNcut, p.MinArea = c.sp, mx, 5
					if c.sp < 0 {
						p.MinArea = 20
					}
					if si > 0 {
						p.SigmaI, p.AutoSigmaI = si, false
					}
					p.Classes, p.Background = 2, "dark"
					// SeamsOnly acts after the cut: it shares the tree.
					p.SeamsOnly = mx == 0.1
					want, err := Run(context.Background(), c.in, p)
					if err != nil {
						t.Fatal(err)
					}
					got, err := Run(context.Background(), in, p)
					if err != nil {
						t.Fatal(err)
					}
					if !slices.Equal(got.Regions.Pix, want.Regions.Pix) || !slices.Equal(got.Labels.Pix, want.Labels.Pix) ||
						got.NumRegions != want.NumRegions || got.NumObjects != want.NumObjects {
						t.Errorf("sigma-i %g, max-ncut %g: %d regions / %d objects with the cache, %d / %d without",
							si, mx, got.NumRegions, got.NumObjects, want.NumRegions, want.NumObjects)
					}
					if !slices.Equal(got.SplitNcuts, want.SplitNcuts) || !slices.Equal(got.Eigenvalues, want.Eigenvalues) {
						t.Errorf("sigma-i %g, max-ncut %g: split list or eigenvalues differ:\n got %v\nwant %v", si, mx, got.SplitNcuts, want.SplitNcuts)
					}
					counts[want.NumRegions] = true
				}
			}
			// The thresholds must give different bisections, or pruning
			// was not exercised.
			if len(counts) < 3 {
				t.Errorf("only %d distinct region counts over the thresholds", len(counts))
			}
			if len(cache.cuts) != len(c.si) {
				t.Errorf("%d bisection trees, want %d (one per sigma-i)", len(cache.cuts), len(c.si))
			}
			wantS := 1 // one superpixel count and compactness
			if c.sp == 0 {
				wantS = 0 // the pixel graph
			}
			if len(cache.slics) != wantS {
				t.Errorf("%d superpixel sets, want %d", len(cache.slics), wantS)
			}
		})
	}
}

// faintDiscs renders four discs of decreasing contrast (0.2 to 0.05) on a
// ramp with Gaussian noise of 0.03: splits at a spread of Ncut values.
func faintDiscs(w, h int, seed uint64) Input {
	rng := rand.New(rand.NewPCG(seed, 2))
	f := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.3 + 0.1*float64(x)/float64(w)
			for _, c := range [][4]float64{{0.25, 0.3, 0.15, 0.2}, {0.7, 0.35, 0.12, 0.12}, {0.4, 0.75, 0.12, 0.08}, {0.8, 0.8, 0.1, 0.05}} {
				dx, dy := float64(x)-c[0]*float64(w), float64(y)-c[1]*float64(h)
				if dx*dx+dy*dy < c[2]*c[2]*float64(w*w) {
					v += c[3]
				}
			}
			f[y*w+x] = float32(v + 0.03*rng.NormFloat64())
		}
	}
	return Input{Width: w, Height: h, Planes: [][]float32{f}, Luminance: f}
}

// sceneInput normalizes a generated scene to 0..1 by its bit depth.
func sceneInput(sc *scenes.Scene) Input {
	f := make([]float32, len(sc.Pixels))
	scale := float32(int(1)<<sc.BitDepth - 1)
	for i, v := range sc.Pixels {
		f[i] = float32(v) / scale
	}
	return Input{Width: sc.Width, Height: sc.Height, Planes: [][]float32{f}, Luminance: f}
}
