package affinity

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// slicRowGo is the Go loop of slicState.assign on one plane, the
// reference of slicRowAVX2.
func slicRowGo(f, dx2 []float32, dist []uint32, lab []int32, fc, dy2 float32, label int32) {
	for x, d2 := range dx2 {
		d := f[x] - fc
		D := math.Float32bits(d*d + d2 + dy2)
		if D < dist[x] {
			dist[x], lab[x] = D, label
		}
	}
}

// TestSLICRowAVX2MatchesGo checks the AVX2 row kernel against the Go
// loop bit for bit on rows of 1 to 40 pixels (every remainder of the
// eight-pixel groups, done with masked loads and stores), with stored
// distances of +Inf, of larger and smaller values and equal to the new
// D (a tie keeps the old label), and features equal to the centre's
// (d = 0). Where the kernel is not available (another architecture, no
// AVX2, the purego tag) there is nothing to compare and the test says so.
func TestSLICRowAVX2MatchesGo(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: SLIC's assignment runs in Go alone")
	}
	rng := rand.New(rand.NewPCG(5, 11))
	inf := math.Float32bits(float32(math.Inf(1)))
	for n := 1; n <= 40; n++ {
		for trial := 0; trial < 50; trial++ {
			f, dx2 := make([]float32, n), make([]float32, n)
			dist, lab := make([]uint32, n), make([]int32, n)
			fc, dy2 := float32(rng.Float64()), float32(rng.Float64()*0.5)
			for x := range f {
				f[x] = float32(rng.Float64())
				if x%7 == 3 {
					f[x] = fc
				}
				dx2[x] = float32(rng.Float64() * 0.5)
				lab[x] = int32(rng.IntN(1000))
				switch x % 4 {
				case 0:
					dist[x] = inf
				case 1:
					dist[x] = math.Float32bits(float32(rng.Float64() * 2))
				case 2:
					d := f[x] - fc
					dist[x] = math.Float32bits(d*d + dx2[x] + dy2) // a tie
				default:
					dist[x] = math.Float32bits(float32(rng.Float64() * 0.3))
				}
			}
			wantD, wantL := slices.Clone(dist), slices.Clone(lab)
			slicRowGo(f, dx2, wantD, wantL, fc, dy2, 77)
			// Sentinels after the row: the masked tail must not write them.
			dist, lab = append(dist, 12345), append(lab, -9)
			slicRowAVX2(&f[0], &dx2[0], &dist[0], &lab[0], n, fc, dy2, 77)
			if dist[n] != 12345 || lab[n] != -9 {
				t.Fatalf("n = %d: the kernel wrote past the row", n)
			}
			dist, lab = dist[:n], lab[:n]
			if !slices.Equal(dist, wantD) || !slices.Equal(lab, wantL) {
				t.Fatalf("n = %d, trial %d: kernel gives distances %v labels %v, Go %v %v", n, trial, dist, lab, wantD, wantL)
			}
		}
	}
}

// TestSLICAVX2Identical runs SLIC with and without the AVX2 kernel on
// single-plane scenes of several sizes and superpixel counts (windows
// narrower than eight pixels included) and checks that
// the labels are the same.
func TestSLICAVX2Identical(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: SLIC's assignment runs in Go alone")
	}
	for _, c := range []struct{ w, h, count int }{{97, 61, 40}, {160, 120, 300}, {256, 256, 4000}, {300, 200, 15000}} {
		f := blobImage(21, c.w, c.h, 0.05)
		p := SLICParams{Count: c.count, Compactness: 20}
		a, na, err := SLIC(f, c.w, c.h, p, 2)
		if err != nil {
			t.Fatal(err)
		}
		useAVX2 = false
		b, nb, err := SLIC(f, c.w, c.h, p, 2)
		useAVX2 = true
		if err != nil {
			t.Fatal(err)
		}
		if na != nb || !slices.Equal(a.Pix, b.Pix) {
			t.Fatalf("%dx%d, %d superpixels: %d labels with AVX2, %d without, maps differ", c.w, c.h, c.count, na, nb)
		}
	}
}

// TestSymTapsAVX2MatchesGo checks the AVX2 kernel of symTaps against
// symTapsGo bit for bit for kernel radii 1 to 9 (odd and even, so the
// pair loop and the single last tap) and rows of 8 to 41 outputs (the
// overlapping last group of eight), with values of both signs, zeros and
// a signed zero.
func TestSymTapsAVX2MatchesGo(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the blurs run in Go alone")
	}
	rng := rand.New(rand.NewPCG(6, 13))
	for r := 1; r <= 9; r++ {
		k := gaussKernel(float64(r) / 3) // radius ceil(3σ) = r
		if len(k) != r+1 {
			t.Fatalf("gaussKernel(%d/3) has %d taps, want %d", r, len(k), r+1)
		}
		for n := 8; n <= 41; n++ {
			src := make([][]float32, 2*r+1)
			for j := range src {
				src[j] = make([]float32, n)
				for x := range src[j] {
					switch (x + j) % 11 {
					case 0:
						src[j][x] = 0
					case 1:
						src[j][x] = float32(math.Copysign(0, -1))
					default:
						src[j][x] = float32(rng.Float64()*2 - 0.5)
					}
				}
			}
			want, got := make([]float32, n), make([]float32, n+1)
			got[n] = 42 // a sentinel the kernel must not write
			symTapsGo(want, src, k)
			symTapsAVX2(&got[0], &src[0], &k[0], r, n)
			if got[n] != 42 {
				t.Fatalf("r = %d, n = %d: the kernel wrote past the row", r, n)
			}
			for x := range want {
				if math.Float32bits(got[x]) != math.Float32bits(want[x]) {
					t.Fatalf("r = %d, n = %d, x = %d: kernel %v, Go %v", r, n, x, got[x], want[x])
				}
			}
		}
	}
}

// TestObjectScaleAVX2Identical runs ObjectScale with and without the
// AVX2 blur kernel on a scene of disks and checks that the estimates
// are the same.
func TestObjectScaleAVX2Identical(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the blurs run in Go alone")
	}
	f := blobImage(23, 301, 257, 0.04)[0]
	a := ObjectScale(f, 301, 257, 2)
	useAVX2 = false
	b := ObjectScale(f, 301, 257, 2)
	useAVX2 = true
	if a != b || !a.Found {
		t.Fatalf("with AVX2 %+v, without %+v (want equal and found)", a, b)
	}
}

// TestNormLapAVX2MatchesGo checks the AVX2 row kernel of normLaplacian
// against normLapRow bit for bit on rows of 8 to 41 pixels.
func TestNormLapAVX2MatchesGo(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the Laplacian runs in Go alone")
	}
	rng := rand.New(rand.NewPCG(7, 17))
	row := func(n int) []float32 {
		v := make([]float32, n)
		for i := range v {
			v[i] = float32(rng.Float64()*1.5 - 0.25)
		}
		return v
	}
	for n := 8; n <= 41; n++ {
		pad, u2, u1, d1, d2 := row(n+4), row(n), row(n), row(n), row(n)
		tf := float32(rng.Float64() * 3)
		want, got := make([]float32, n), make([]float32, n+1)
		got[n] = 42
		normLapRow(want, pad, u2, u1, d1, d2, tf)
		normLapAVX2(&got[0], &pad[0], &u2[0], &u1[0], &d1[0], &d2[0], tf, n)
		if got[n] != 42 {
			t.Fatalf("n = %d: the kernel wrote past the row", n)
		}
		for x := range want {
			if math.Float32bits(got[x]) != math.Float32bits(want[x]) {
				t.Fatalf("n = %d, x = %d: kernel %v, Go %v", n, x, got[x], want[x])
			}
		}
	}
}

// TestGaussianJetAVX2Identical runs gaussianJet with and without the
// AVX2 kernels on random planes (values of both signs and zeros) of
// widths and heights around the kernel's radius and larger, at several
// scales, and checks the five derivative rows bit for bit.
func TestGaussianJetAVX2Identical(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the Gaussian jet runs in Go alone")
	}
	rng := rand.New(rand.NewPCG(8, 19))
	jet := func(plane []float32, w, h int, sigma float64) []float64 {
		out := make([]float64, 5*w*h)
		gaussianJet(plane, w, h, sigma, 2, func(y int, ix, iy, ixx, iyy, ixy []float64) {
			for f, row := range [][]float64{ix, iy, ixx, iyy, ixy} {
				copy(out[f*w*h+y*w:], row[:w])
			}
		})
		return out
	}
	for _, sigma := range []float64{0.2, 0.7, ContourScale, 3, 6} {
		for _, sz := range [][2]int{{3, 5}, {4, 4}, {7, 9}, {13, 13}, {17, 6}, {37, 29}, {130, 70}, {301, 140}} {
			w, h := sz[0], sz[1]
			plane := make([]float32, w*h)
			for i := range plane {
				if i%13 != 0 {
					plane[i] = float32(rng.Float64()*1.2 - 0.1)
				}
			}
			a := jet(plane, w, h, sigma)
			useAVX2 = false
			b := jet(plane, w, h, sigma)
			useAVX2 = true
			for i := range a {
				if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
					f, p := i/(w*h), i%(w*h)
					t.Fatalf("σ %v, %dx%d: derivative %d at (%d, %d): %v with AVX2, %v without", sigma, w, h, f, p%w, p/w, a[i], b[i])
				}
			}
		}
	}
}

// TestEdgeEnergyAVX2Identical computes EdgeEnergy with and without the
// AVX2 kernels (the jet's and the energy row's) on random planes of
// several sizes at several scales and checks every value bit for bit.
func TestEdgeEnergyAVX2Identical(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the edge energy runs in Go alone")
	}
	rng := rand.New(rand.NewPCG(14, 29))
	for _, sigma := range []float64{0.7, ContourScale, 3, 6} {
		for _, sz := range [][2]int{{3, 4}, {4, 7}, {5, 5}, {9, 13}, {37, 29}, {301, 140}} {
			w, h := sz[0], sz[1]
			plane := make([]float32, w*h)
			for i := range plane {
				if i%11 != 0 {
					plane[i] = float32(rng.Float64()*1.2 - 0.1)
				}
			}
			a := EdgeEnergy(plane, w, h, sigma, 2)
			useAVX2 = false
			b := EdgeEnergy(plane, w, h, sigma, 2)
			useAVX2 = true
			for i := range a {
				if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
					t.Fatalf("σ %v, %dx%d: energy at (%d, %d) %v with AVX2, %v without", sigma, w, h, i%w, i/w, a[i], b[i])
				}
			}
		}
	}
}
