package affinity

import (
	"bytes"
	"errors"
	"math"
	"runtime"
	"strings"
	"testing"
)

// hand3x3 is the 3x3 image whose weights the hand-worked tests check.
var hand3x3 = []float32{
	0, 0.5, 1,
	0.5, 0.5, 0,
	1, 0, 0.25,
}

// handRow is one row of a graph worked out by hand: its node, columns
// and weights.
type handRow struct {
	node int
	cols []int32
	want []float64
}

// checkHandRows compares rows of g with hand-worked ones (weights to a
// relative 1e-7, float32 storage) and validates g.
func checkHandRows(t *testing.T, g *Graph, cases []handRow) {
	t.Helper()
	for _, c := range cases {
		lo, hi := g.RowPtr[c.node], g.RowPtr[c.node+1]
		if got := g.Col[lo:hi]; !equalInt32(got, c.cols) {
			t.Errorf("row %d columns %v, want %v", c.node, got, c.cols)
			continue
		}
		for k, want := range c.want {
			if got := float64(g.Weight[lo+k]); relErr(got, want) > 1e-7 {
				t.Errorf("w(%d,%d) = %.9g, want %.9g", c.node, c.cols[k], got, want)
			}
		}
	}
	if err := g.Validate(); err != nil {
		t.Fatal(err)
	}
}

// TestPixelGraphHand3x3 checks rows of a 3x3 image against weights worked
// out by hand from the formula of Shi and Malik (2000), eq. (11):
// w_ij = exp(-|F_i-F_j|²/sigma_I²) exp(-|X_i-X_j|²/sigma_X²) = exp(-(a+b)).
// With sigma_I = 0.5, a = 4 (F_i-F_j)²; with sigma_X = 1, b = dx²+dy².
func TestPixelGraphHand3x3(t *testing.T) {
	img := hand3x3
	g, err := PixelGraph([][]float32{img}, 3, 3, PixelParams{Radius: 2, SigmaI: 0.5, SigmaX: 1}, 1)
	if err != nil {
		t.Fatal(err)
	}
	e := math.Exp
	cases := []handRow{
		// (0,0)=0: (1,0) a=1 b=1; (2,0) a=4 b=4; (0,1) a=1 b=1; (1,1) a=1 b=2; (0,2) a=4 b=4.
		{0, []int32{1, 2, 3, 4, 6}, []float64{e(-2), e(-8), e(-2), e(-3), e(-8)}},
		// (1,1)=0.5: diagonal neighbours b=2, edge neighbours b=1; nothing at distance 2 fits.
		{4, []int32{0, 1, 2, 3, 5, 6, 7, 8}, []float64{e(-3), e(-1), e(-3), e(-1), e(-2), e(-3), e(-2), e(-2.25)}},
		// (2,2)=0.25: (2,0) a=2.25 b=4; (1,1) a=0.25 b=2; (2,1) a=0.25 b=1; (0,2) a=2.25 b=4; (1,2) a=0.25 b=1.
		{8, []int32{2, 4, 5, 6, 7}, []float64{e(-6.25), e(-2.25), e(-1.25), e(-6.25), e(-1.25)}},
	}
	checkHandRows(t, g, cases)
}

func equalInt32(a, b []int32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestPixelGraphMatchesFormula compares every stored and every absent entry
// with the formula evaluated in float64 over all pixel pairs (brute force).
func TestPixelGraphMatchesFormula(t *testing.T) {
	cases := []struct {
		name   string
		w, h   int
		planes int
		p      PixelParams
	}{
		{"gray r3", 13, 11, 1, PixelParams{Radius: 3, SigmaI: 0.3, SigmaX: 2}},
		{"lab r2", 9, 14, 3, PixelParams{Radius: 2, SigmaI: 0.5, SigmaX: 1.5}},
		{"narrow sigma drops edges", 12, 12, 1, PixelParams{Radius: 4, SigmaI: 0.05, SigmaX: 3}},
		{"radius beyond image", 4, 3, 2, PixelParams{Radius: 50, SigmaI: 1, SigmaX: 10}},
		{"one row", 17, 1, 1, PixelParams{Radius: 5, SigmaI: 0.2, SigmaX: 4}},
	}
	for k, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := noiseImage(uint64(10+k), c.w, c.h, c.planes)
			g, err := PixelGraph(f, c.w, c.h, c.p, 2)
			if err != nil {
				t.Fatal(err)
			}
			if err := g.Validate(); err != nil {
				t.Fatal(err)
			}
			n := c.w * c.h
			dropped := 0
			for i := 0; i < n; i++ {
				for j := 0; j < n; j++ {
					dx, dy := i%c.w-j%c.w, i/c.w-j/c.w
					d2x := float64(dx*dx + dy*dy)
					var d2f float64
					for _, pl := range f {
						d := float64(pl[i]) - float64(pl[j])
						d2f += d * d
					}
					arg := d2f/(c.p.SigmaI*c.p.SigmaI) + d2x/(c.p.SigmaX*c.p.SigmaX)
					got, ok := g.At(i, j)
					inDisc := i != j && d2x <= float64(c.p.Radius*c.p.Radius)
					switch {
					case !inDisc && ok:
						t.Fatalf("entry (%d,%d) stored outside the disc", i, j)
					case inDisc && arg > maxExpArg+1e-3:
						if ok {
							t.Fatalf("entry (%d,%d) with exponent %g should be dropped", i, j, arg)
						}
						dropped++
					case inDisc && arg < maxExpArg-1e-3:
						if !ok {
							t.Fatalf("entry (%d,%d) missing", i, j)
						}
						if e := relErr(float64(got), math.Exp(-arg)); e > 1e-7 {
							t.Fatalf("w(%d,%d) = %g, want %g (rel err %g)", i, j, got, math.Exp(-arg), e)
						}
					}
				}
			}
			if c.p.SigmaI < 0.1 && dropped == 0 {
				t.Fatalf("case meant to drop edges dropped none")
			}
		})
	}
}

// TestPixelGraphRadius checks the neighbourhood: an interior pixel has as
// many neighbours as there are lattice points (dx,dy) != 0 with
// dx²+dy² <= r² (Gauss's circle problem, common knowledge: 4, 12, 80 for
// r = 1, 2, 5), counted here by brute force; border pixels lose the points
// outside the image.
func TestPixelGraphRadius(t *testing.T) {
	known := map[int]int{1: 4, 2: 12, 5: 80}
	const w, h = 23, 19
	f := [][]float32{make([]float32, w*h)} // constant: no edge is dropped
	for _, r := range []int{1, 2, 3, 5, 7} {
		g, err := PixelGraph(f, w, h, PixelParams{Radius: r, SigmaI: 0.1, SigmaX: 100}, 2)
		if err != nil {
			t.Fatal(err)
		}
		brute := func(x, y int) int {
			n := 0
			for dy := -r; dy <= r; dy++ {
				for dx := -r; dx <= r; dx++ {
					xx, yy := x+dx, y+dy
					if (dx != 0 || dy != 0) && dx*dx+dy*dy <= r*r && xx >= 0 && xx < w && yy >= 0 && yy < h {
						n++
					}
				}
			}
			return n
		}
		if want, ok := known[r]; ok && brute(w/2, h/2) != want {
			t.Fatalf("brute-force lattice count for r=%d is %d, want %d", r, brute(w/2, h/2), want)
		}
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				i := y*w + x
				if got := g.RowPtr[i+1] - g.RowPtr[i]; got != brute(x, y) {
					t.Fatalf("r=%d pixel (%d,%d): %d neighbours, want %d", r, x, y, got, brute(x, y))
				}
			}
		}
	}
}

// TestPixelGraphWorkersIdentical: same bytes for any worker count.
func TestPixelGraphWorkersIdentical(t *testing.T) {
	for _, planes := range []int{1, 3} {
		f := noiseImage(uint64(planes), 61, 47, planes)
		p := PixelParams{Radius: 4, SigmaI: 0.2, SigmaX: 3}
		g1, err := PixelGraph(f, 61, 47, p, 1)
		if err != nil {
			t.Fatal(err)
		}
		want := graphBytes(t, g1)
		for _, workers := range []int{2, 3, 8, 0} {
			g, err := PixelGraph(f, 61, 47, p, workers)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(graphBytes(t, g), want) {
				t.Fatalf("planes=%d workers=%d: graph differs from workers=1", planes, workers)
			}
		}
	}
}

// TestPixelGraphSymmetricRandom: exact symmetry (Validate) on random images.
func TestPixelGraphSymmetricRandom(t *testing.T) {
	for seed := uint64(0); seed < 8; seed++ {
		w, h := 5+int(seed)*7, 31-int(seed)*3
		planes := 1 + int(seed)%3
		f := noiseImage(100+seed, w, h, planes)
		g, err := PixelGraph(f, w, h, PixelParams{Radius: 1 + int(seed)%6, SigmaI: 0.05 + 0.1*float64(seed), SigmaX: 1 + float64(seed)}, 2)
		if err != nil {
			t.Fatal(err)
		}
		if err := g.Validate(); err != nil {
			t.Fatalf("seed %d: %v", seed, err)
		}
	}
}

func TestPixelParamsValidate(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	cases := []struct {
		p    PixelParams
		want string // "" means valid
	}{
		{PixelParams{Radius: 1, SigmaI: 0.1, SigmaX: 4}, ""},
		{PixelParams{Radius: 0, SigmaI: 0.1, SigmaX: 4}, "radius must be at least 1 pixel, got 0"},
		{PixelParams{Radius: -3, SigmaI: 0.1, SigmaX: 4}, "radius must be at least 1 pixel, got -3"},
		{PixelParams{Radius: 5, SigmaI: 0, SigmaX: 4}, "sigma-i must be a positive number, got 0"},
		{PixelParams{Radius: 5, SigmaI: -0.1, SigmaX: 4}, "sigma-i must be a positive number, got -0.1"},
		{PixelParams{Radius: 5, SigmaI: nan, SigmaX: 4}, "sigma-i must be a positive number, got NaN"},
		{PixelParams{Radius: 5, SigmaI: inf, SigmaX: 4}, "sigma-i must be a positive number, got +Inf"},
		{PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: 0}, "sigma-x must be a positive number, got 0"},
		{PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: -2}, "sigma-x must be a positive number, got -2"},
		{PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: nan}, "sigma-x must be a positive number, got NaN"},
	}
	f := [][]float32{make([]float32, 16)}
	for _, c := range cases {
		err := c.p.Validate()
		_, gerr := PixelGraph(f, 4, 4, c.p, 1)
		if c.want == "" {
			if err != nil || gerr != nil {
				t.Errorf("%+v: unexpected error %v / %v", c.p, err, gerr)
			}
			continue
		}
		if err == nil || err.Error() != c.want {
			t.Errorf("%+v: error %v, want %q", c.p, err, c.want)
		}
		var pe *ParamError
		if !errors.As(gerr, &pe) || pe.Error() != c.want {
			t.Errorf("%+v: PixelGraph error %v is not the ParamError %q", c.p, gerr, c.want)
		}
	}
}

func TestPixelGraphBadInput(t *testing.T) {
	p := PixelParams{Radius: 2, SigmaI: 0.1, SigmaX: 2}
	good := make([]float32, 12)
	bad := make([]float32, 12)
	bad[7] = float32(math.NaN())
	// Infinities, and a largest finite value that must pass (checkPlanes
	// tests v - v != 0: NaN for NaN and ±Inf only, IEEE 754).
	posInf, negInf, huge := make([]float32, 12), make([]float32, 12), make([]float32, 12)
	posInf[5], negInf[11], huge[2] = float32(math.Inf(1)), float32(math.Inf(-1)), math.MaxFloat32
	huge[3] = -math.MaxFloat32
	cases := []struct {
		name string
		f    [][]float32
		w, h int
		want string
	}{
		{"no planes", nil, 4, 3, "no feature planes"},
		{"short plane", [][]float32{good[:11]}, 4, 3, "has 11 values"},
		{"second plane short", [][]float32{good, good[:5]}, 4, 3, "plane 1"},
		{"zero width", [][]float32{{}}, 0, 3, "empty"},
		{"negative height", [][]float32{{}}, 3, -1, "empty"},
		{"NaN feature", [][]float32{bad}, 4, 3, "non-finite value NaN at pixel (3,1)"},
		{"+Inf feature", [][]float32{good, posInf}, 4, 3, "plane 1 has a non-finite value +Inf at pixel (1,1)"},
		{"-Inf feature", [][]float32{negInf}, 4, 3, "non-finite value -Inf at pixel (3,2)"},
	}
	for _, c := range cases {
		_, err := PixelGraph(c.f, c.w, c.h, p, 1)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	if err := checkPlanes([][]float32{huge}, 4, 3); err != nil {
		t.Errorf("largest finite values refused: %v", err)
	}
}

// TestExpNeg checks the float32 exponential against math.Exp.
func TestExpNeg(t *testing.T) {
	worst := 0.0
	for k := 0; k <= 860000; k++ {
		a := float64(k) * 1e-4
		if e := relErr(float64(expNeg(a)), math.Exp(-a)); e > worst {
			worst = e
		}
	}
	if worst > 1e-7 {
		t.Fatalf("worst relative error %g > 1e-7", worst)
	}
	t.Logf("expNeg worst relative error on [0,86]: %.3g", worst)
}

// TestEstimatePixelGraphBytes: the estimate covers what the build
// allocates (runtime.MemStats.TotalAlloc) and is not far above it.
func TestEstimatePixelGraphBytes(t *testing.T) {
	for _, c := range []struct{ w, h, r int }{{152, 192, 5}, {64, 40, 1}, {30, 30, 12}} {
		f := blobImage(3, c.w, c.h, 0.02)
		var m0, m1 runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&m0)
		g, err := PixelGraph(f, c.w, c.h, PixelParams{Radius: c.r, SigmaI: 0.1, SigmaX: 4}, 1)
		runtime.ReadMemStats(&m1)
		if err != nil {
			t.Fatal(err)
		}
		used := int64(m1.TotalAlloc - m0.TotalAlloc)
		est := EstimatePixelGraphBytes(c.w, c.h, c.r)
		if used > est || float64(used) < 0.8*float64(est) {
			t.Errorf("%dx%d r=%d: allocated %d bytes, estimate %d", c.w, c.h, c.r, used, est)
		}
		t.Logf("%dx%d r=%d: nnz %d, allocated %d bytes, estimate %d", c.w, c.h, c.r, g.NNZ(), used, est)
	}
	if EstimatePixelGraphBytes(0, 5, 5) != 0 || EstimatePixelGraphBytes(5, 5, 0) != 0 {
		t.Error("empty sizes should estimate 0")
	}
	if EstimatePixelGraphBytes(1<<25, 1<<25, 5) != math.MaxInt64 {
		t.Error("huge size should saturate")
	}
}
