package segment

import (
	"context"
	"errors"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/eigen"
)

// codes lists the warning codes of a result.
func codes(ws []Warning) []string {
	var c []string
	for _, w := range ws {
		c = append(c, w.Code)
	}
	return c
}

// noise renders Gaussian noise of standard deviation s around 0.5, plus
// a bright disc of the given radius (as a fraction of w) in the centre
// when r > 0.
func noiseWithDisc(w, h int, s, r float64, seed uint64) Input {
	rng := rand.New(rand.NewPCG(seed, 3))
	f := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.3
			dx, dy := float64(x)-float64(w)/2, float64(y)-float64(h)/2
			if dx*dx+dy*dy < r*r*float64(w*w) {
				v = 0.8
			}
			f[y*w+x] = float32(v + s*rng.NormFloat64())
		}
	}
	return Input{Width: w, Height: h, Planes: [][]float32{f}, Luminance: f}
}

// ramp is a left-to-right gradient from 0.2 to 0.8 with Gaussian noise of
// standard deviation 0.03: shading with no region in it.
func ramp(w, h int) Input {
	rng := rand.New(rand.NewPCG(7, 7))
	f := make([]float32, w*h)
	for i := range f {
		f[i] = float32(0.2 + 0.6*float64(i%w)/float64(w-1) + 0.03*rng.NormFloat64())
	}
	return Input{Width: w, Height: h, Planes: [][]float32{f}, Luminance: f}
}

// stripes alternates rows of 0.2 and 0.8 (noise of standard deviation
// 0.01): bright objects one row high, each w pixels.
func stripes(w, h int) Input {
	rng := rand.New(rand.NewPCG(8, 8))
	f := make([]float32, w*h)
	for i := range f {
		f[i] = float32(0.2 + 0.6*float64(i/w%2) + 0.01*rng.NormFloat64())
	}
	return Input{Width: w, Height: h, Planes: [][]float32{f}, Luminance: f}
}

// Each situation a user must be told about gets its warning, and a clean
// result gets none. The situations are constructed so the outcome is
// known: no split of a ramp has Ncut 1e-9, a ramp has no object
// brighter than its surroundings, rows one pixel high are smaller than a
// min-area of 60, a disc of radius 0.45 w covers
// 64% of the image, a bright disc taken with background bright leaves the
// dark surroundings as one object over the whole field, and the discs of
// discs() are a plain success.
func TestRunWarnings(t *testing.T) {
	for _, c := range []struct {
		name string
		in   Input
		set  func(*Params)
		want []string
	}{
		{"clean discs", discs(96, 96, 1), func(p *Params) { p.Classes, p.Background = 2, BackgroundDark }, nil},
		{"max-ncut too low", ramp(80, 80), func(p *Params) { p.MaxNcut = 1e-9 }, []string{WarnNoSplit}},
		{"min-area too large", discs(96, 96, 1), func(p *Params) { p.MinArea = 96 * 96 }, []string{WarnNoSplit}},
		{"one big disc", noiseWithDisc(96, 96, 0.02, 0.45, 3), func(p *Params) { p.Classes, p.Background = 2, BackgroundDark }, []string{WarnOneObject}},
		{"wrong polarity", noiseWithDisc(96, 96, 0.02, 0.2, 4), func(p *Params) { p.Classes, p.Background = 2, BackgroundBright }, []string{WarnOneObject}},
		{"ramp as objects", ramp(80, 80), func(p *Params) { p.Classes, p.Background = 2, BackgroundDark }, []string{WarnNoObjects}},
		{"objects under min-area", stripes(40, 40), func(p *Params) { p.Classes, p.Background, p.MinArea = 2, BackgroundDark, 60 }, []string{WarnNoObjects}},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := defaultParams()
			c.set(&p)
			res, err := Run(context.Background(), c.in, p)
			if err != nil {
				t.Fatal(err)
			}
			got := codes(res.Warnings)
			if strings.Join(got, ",") != strings.Join(c.want, ",") {
				t.Fatalf("warnings %v, want %v (regions %d, objects %d): %+v", got, c.want, res.NumRegions, res.NumObjects, res.Warnings)
			}
			for _, w := range res.Warnings {
				// The bright rows are found but every one is smaller
				// than min-area: the message says so, not that every
				// region was background.
				if c.name == "objects under min-area" && !strings.Contains(w.Message, "800 pixels fell outside the dark background class") {
					t.Errorf("%s: %s", w.Code, w.Message)
				}
				if w.Message == "" {
					t.Errorf("%s: empty message", w.Code)
				}
				if strings.Contains(w.Message, "--") {
					t.Errorf("%s: library message uses flag syntax: %s", w.Code, w.Message)
				}
			}
		})
	}
}

// An eigensolve stopped by its step limit is still usable: note keeps the
// best pairs, records the residual reached, and the warning names it; an
// error of another kind is not absorbed.
func TestShortfallNote(t *testing.T) {
	in := noiseWithDisc(60, 60, 0.05, 0.2, 5) // one connected graph
	g, err := buildPixelGraphForTest(in)
	if err != nil {
		t.Fatal(err)
	}
	r, err := eigen.Smallest(g, 3, eigen.Options{MaxIter: 1, Tol: 1e-12, Workers: 1})
	if !errors.Is(err, eigen.ErrNotConverged) {
		t.Fatalf("one step at 1e-12: want ErrNotConverged, got %v", err)
	}
	var s shortfall
	if !s.note(err, r, 1e-12, g.N) {
		t.Fatal("a result above its target was refused")
	}
	if s.residual <= 1e-12 || s.nodes != g.N {
		t.Fatalf("recorded %+v", s)
	}
	w := s.warning()
	if w == nil || w.Code != WarnSolver || !strings.Contains(w.Message, "residual") {
		t.Fatalf("warning %+v", w)
	}
	var none shortfall
	if none.warning() != nil {
		t.Fatal("a warning without any shortfall")
	}
	if none.note(errors.New("eigen: node 3 has zero degree"), nil, 0, 10) {
		t.Fatal("another error was absorbed")
	}
	// merge keeps the worse (by residual over target).
	a := shortfall{residual: 1e-5, tol: 1e-6, nodes: 1}
	a.merge(shortfall{residual: 1e-3, tol: 1e-4, nodes: 2})
	if a.nodes != 1 {
		t.Fatalf("merge kept the milder shortfall: %+v", a)
	}
	a.merge(shortfall{residual: 1e-2, tol: 1e-4, nodes: 3})
	if a.nodes != 3 {
		t.Fatalf("merge dropped the worse shortfall: %+v", a)
	}
}

// buildPixelGraphForTest builds a pixel graph of in (wide intensity
// kernel, so that it is connected).
func buildPixelGraphForTest(in Input) (*affinity.Graph, error) {
	return affinity.PixelGraph(in.Planes, in.Width, in.Height, affinity.PixelParams{Radius: 5, SigmaI: 0.3, SigmaX: 4}, 1)
}

// TestNoSplitWarningPackedHint: a whole-image cut refused by the
// stability test points to the packed mode, unless it is already on.
func TestNoSplitWarningPackedHint(t *testing.T) {
	r := rootSplit{tried: true, found: true, ncut: 0.01, stable: false}
	for _, c := range []struct {
		bg   Background
		want bool
	}{{BackgroundDark, true}, {BackgroundBright, true}, {"", true}, {BackgroundLines, false}} {
		w := noSplitWarning(Params{Background: c.bg, MaxNcut: 0.15}, r, false)
		if got := strings.Contains(w.Message, "background` lines"); got != c.want {
			t.Errorf("background %q: hint %v, want %v (%s)", c.bg, got, c.want, w.Message)
		}
	}
}
