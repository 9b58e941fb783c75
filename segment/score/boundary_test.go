package score

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Hand-worked boundary matches (boundary pixels: a 4-neighbour with another
// label, as defined in BoundaryPixels; matching within Euclidean distance
// tol, the distance approximation of Martin, Fowlkes and Malik 2004).
func TestBoundaryHandWorked(t *testing.T) {
	// 4x4, truth cut between columns 1 and 2: boundary columns 1 and 2 (8 px).
	halves := []int32{
		0, 0, 1, 1,
		0, 0, 1, 1,
		0, 0, 1, 1,
		0, 0, 1, 1,
	}
	// Prediction cut between columns 2 and 3: boundary columns 2 and 3.
	shifted := []int32{
		0, 0, 0, 1,
		0, 0, 0, 1,
		0, 0, 0, 1,
		0, 0, 0, 1,
	}
	uniform := make([]int32, 16)
	// 5x5 spots: truth a centre pixel (boundary: centre and its 4 neighbours,
	// 5 px), prediction a corner pixel (boundary (0,0), (1,0), (0,1), 3 px).
	spotT := make([]int32, 25)
	spotT[12] = 1
	spotP := make([]int32, 25)
	spotP[0] = 2
	for _, tc := range []struct {
		name        string
		pred, truth []int32
		w, h        int
		tol         float64
		p, r, f     float64
		np, nt      int
	}{
		// Column 2 is shared: 4 of 8 on each side.
		{"shift_tol0", shifted, halves, 4, 4, 0, 0.5, 0.5, 0.5, 8, 8},
		// Column 3 is 1 px from column 2, column 1 is 1 px from column 2.
		{"shift_tol1", shifted, halves, 4, 4, 1, 1, 1, 1, 8, 8},
		// No predicted boundary but a true one: precision 0 by convention, recall 0.
		{"no_pred_boundary", uniform, halves, 4, 4, 2, 0, 0, 0, 0, 8},
		// Neither has a boundary: perfect agreement.
		{"both_uniform", uniform, uniform, 4, 4, 1, 1, 1, 1, 0, 0},
		// tol 1: the nearest pairs, (1,0)-(2,1) and (0,1)-(1,2), are sqrt 2 apart.
		{"spots_tol1", spotP, spotT, 5, 5, 1, 0, 0, 0, 3, 5},
		// tol 1.5: (1,0) and (0,1) match (2 of 3); (2,1) and (1,2) match (2 of 5);
		// (0,0) is sqrt 5 from the nearest. F = 2 (2/3)(2/5) / (2/3 + 2/5) = 1/2.
		{"spots_tol1.5", spotP, spotT, 5, 5, 1.5, 2.0 / 3, 2.0 / 5, 0.5, 3, 5},
	} {
		m := Boundary(labelmap.Map{Pix: tc.pred, Width: tc.w, Height: tc.h}, labelmap.Map{Pix: tc.truth, Width: tc.w, Height: tc.h}, tc.tol)
		if !near(m.Precision, tc.p, 1e-15) || !near(m.Recall, tc.r, 1e-15) || !near(m.F, tc.f, 1e-15) ||
			m.PredPixels != tc.np || m.TruthPixels != tc.nt {
			t.Errorf("%s: got %+v, want P %v R %v F %v, pixels %d/%d", tc.name, m, tc.p, tc.r, tc.f, tc.np, tc.nt)
		}
	}
}

// Identities of the definition: a map against itself (any renaming) has
// P = R = F = 1 at tol 0, and swapping the maps swaps precision and recall.
func TestBoundaryIdentities(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	const w, h = 23, 17
	for trial := 0; trial < 5; trial++ {
		a := blobs(r, w, h, 4)
		b := blobs(r, w, h, 6)
		ren := make([]int32, len(a))
		for i, v := range a {
			ren[i] = 7 - 2*v
		}
		if m := Boundary(labelmap.Map{Pix: ren, Width: w, Height: h}, labelmap.Map{Pix: a, Width: w, Height: h}, 0); m.Precision != 1 || m.Recall != 1 || m.F != 1 {
			t.Errorf("trial %d: renamed self gives %+v, want 1, 1, 1", trial, m)
		}
		for _, tol := range []float64{0, 1, 2.5} {
			ab, ba := Boundary(labelmap.Map{Pix: a, Width: w, Height: h}, labelmap.Map{Pix: b, Width: w, Height: h}, tol), Boundary(labelmap.Map{Pix: b, Width: w, Height: h}, labelmap.Map{Pix: a, Width: w, Height: h}, tol)
			if ab.Precision != ba.Recall || ab.Recall != ba.Precision || ab.F != ba.F {
				t.Errorf("trial %d tol %v: (a,b) %+v vs (b,a) %+v not swapped", trial, tol, ab, ba)
			}
			// A larger tolerance can only match more pixels.
			wide := Boundary(labelmap.Map{Pix: a, Width: w, Height: h}, labelmap.Map{Pix: b, Width: w, Height: h}, tol+1)
			if wide.Precision < ab.Precision || wide.Recall < ab.Recall {
				t.Errorf("trial %d: tol %v gave %+v, tol %v gave less %+v", trial, tol, ab, tol+1, wide)
			}
		}
	}
}

// blobs is a random piecewise-constant map: k random rectangles painted in turn.
func blobs(r *rand.Rand, w, h, k int) []int32 {
	m := make([]int32, w*h)
	for l := 1; l <= k; l++ {
		x0, y0 := r.IntN(w), r.IntN(h)
		x1, y1 := x0+1+r.IntN(w-x0), y0+1+r.IntN(h-y0)
		for y := y0; y < y1; y++ {
			for x := x0; x < x1; x++ {
				m[y*w+x] = int32(l)
			}
		}
	}
	return m
}

// Hand-worked covering (Arbelaez et al. 2011, sec. 3.2).
func TestCoveringHandWorked(t *testing.T) {
	for _, tc := range []struct {
		name        string
		pred, truth []int32
		want        float64
	}{
		// T0 (4 px) best IoU 4/6 with P0; T1 (4 px) best 2/4 with P1:
		// (4*2/3 + 4*1/2)/8 = 7/12.
		{"split_shifted", []int32{0, 0, 0, 0, 0, 0, 1, 1}, []int32{0, 0, 0, 0, 1, 1, 1, 1}, 7.0 / 12},
		// The reverse direction: P0 (6 px) best 4/6, P1 (2 px) best 1/2: (4 + 1)/8 = 5/8.
		{"reverse", []int32{0, 0, 0, 0, 1, 1, 1, 1}, []int32{0, 0, 0, 0, 0, 0, 1, 1}, 5.0 / 8},
		// One predicted region over two equal true halves: each IoU 1/2.
		{"merged", []int32{3, 3, 3, 3}, []int32{0, 0, 1, 1}, 0.5},
		// Equal up to renaming.
		{"renamed", []int32{5, 5, 2, 9}, []int32{0, 0, 1, 2}, 1},
		{"empty", []int32{}, []int32{}, 1},
	} {
		if got := Covering(tc.pred, tc.truth); !near(got, tc.want, 1e-15) {
			t.Errorf("%s: covering = %v, want %v", tc.name, got, tc.want)
		}
	}
}

func TestBoundaryPanicsOnBadTolerance(t *testing.T) {
	for _, tol := range []float64{-1, math.NaN(), math.Inf(1)} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("tol %v: no panic", tol)
				}
			}()
			Boundary(labelmap.Map{Pix: []int32{0}, Width: 1, Height: 1}, labelmap.Map{Pix: []int32{0}, Width: 1, Height: 1}, tol)
		}()
	}
}

// within, computed through the distance transform, counts exactly the
// pixels that the definition counts: a marked pixel of a is a hit when some
// marked pixel of b lies within Euclidean distance tol (checked here by
// trying every pair). Random sparse and dense marks, tolerances from 0 to
// beyond any image, and a b with no mark at all.
func TestWithinMatchesDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for trial := 0; trial < 40; trial++ {
		w, h := 1+rng.IntN(30), 1+rng.IntN(30)
		density := []float64{0, 0.01, 0.1, 0.5}[trial%4]
		a, b := make([]bool, w*h), make([]bool, w*h)
		for k := range a {
			a[k] = rng.Float64() < 0.3
			b[k] = rng.Float64() < density
		}
		for _, tol := range []float64{0, 0.5, 1, 1.5, 2, 2.9, 7.3, 40, 1e5, 1e308} {
			hits, total, err := within(context.Background(), a, b, w, h, tol)
			if err != nil {
				t.Fatal(err)
			}
			wantHits, wantTotal := 0, 0
			for k, on := range a {
				if !on {
					continue
				}
				wantTotal++
				x, y := k%w, k/w
				for j, m := range b {
					dx, dy := float64(j%w-x), float64(j/w-y)
					if m && dx*dx+dy*dy <= tol*tol {
						wantHits++
						break
					}
				}
			}
			if hits != wantHits || total != wantTotal {
				t.Fatalf("%dx%d, density %v, tol %v: %d of %d hits, want %d of %d", w, h, density, tol, hits, total, wantHits, wantTotal)
			}
		}
	}
}
