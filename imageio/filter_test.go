package imageio

import (
	"bytes"
	"math"
	"math/rand/v2"
	"testing"
)

// TestFilterKernelsMatchGo checks the AVX2 kernels of the Up, Sub, None
// and Average candidates against the PNG specification's filters
// (section 9.2: x - b, x - a, x, x - floor((a + b)/2), all modulo 256)
// written out byte by byte here, with the sum of |byte| read as int8:
// random rows, bytes at 0, 127, 128 and 255 where differences wrap and
// sums of neighbours pass 255, and smooth rows as pictures give, 32 to
// 512 bytes.
func TestFilterKernelsMatchGo(t *testing.T) {
	if !useFilterAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the filters run in Go alone")
	}
	rng := rand.New(rand.NewPCG(15, 31))
	absSum := func(b []byte) int {
		s := 0
		for _, v := range b {
			s += abs8(v)
		}
		return s
	}
	for n := 32; n <= 512; n += 32 {
		for trial := 0; trial < 30; trial++ {
			x, y, z := make([]byte, n), make([]byte, n), make([]byte, n)
			for i := range x {
				switch trial % 3 {
				case 0:
					x[i], y[i], z[i] = byte(rng.IntN(256)), byte(rng.IntN(256)), byte(rng.IntN(256))
				case 1:
					pick := func() byte { return []byte{0, 1, 127, 128, 129, 254, 255}[rng.IntN(7)] }
					x[i], y[i], z[i] = pick(), pick(), pick()
				default:
					v := 100 + rng.IntN(20)
					x[i], y[i], z[i] = byte(v), byte(v+rng.IntN(5)), byte(v+rng.IntN(9)-4)
				}
			}
			// x - y (Up with y above, Sub with y to the left).
			want := make([]byte, n)
			for i := range want {
				want[i] = x[i] - y[i]
			}
			got := make([]byte, n+1)
			got[n] = 0x5a
			if s := subAbsAVX2(&x[0], &y[0], &got[0], n); s != absSum(want) || !bytes.Equal(got[:n], want) || got[n] != 0x5a {
				t.Fatalf("subAbsAVX2 n = %d, trial %d: sum %d bytes %v, want %d %v", n, trial, s, got[:n], absSum(want), want)
			}
			// None.
			if s := absSumAVX2(&x[0], n); s != absSum(x) {
				t.Fatalf("absSumAVX2 n = %d, trial %d: %d, want %d", n, trial, s, absSum(x))
			}
			// Average: x - floor((y + z)/2), y to the left, z above.
			for i := range want {
				want[i] = x[i] - byte((int(y[i])+int(z[i]))/2)
			}
			if s := avgAbsAVX2(&x[0], &y[0], &z[0], &got[0], n); s != absSum(want) || !bytes.Equal(got[:n], want) || got[n] != 0x5a {
				t.Fatalf("avgAbsAVX2 n = %d, trial %d: sum %d bytes %v, want %d %v", n, trial, s, got[:n], absSum(want), want)
			}
		}
	}
}

// TestGrayBytesAVX2MatchesGo checks the overlay's gray kernel against
// round8(255 * unit(v)) (the Go path, whose rounding TestRound8MatchesRound
// checks against math.Round): every float32 just below, at and above
// each half step (k + 1/2)/255 and each k/255, NaN, infinities, -0,
// subnormals, values below 0 and above 1, and random values.
func TestGrayBytesAVX2MatchesGo(t *testing.T) {
	if !useFilterAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the overlay's gray runs in Go alone")
	}
	var vs []float32
	for k := -2; k <= 258; k++ {
		for _, q := range []float64{float64(k), float64(k) + 0.5} {
			v := float32(q / 255)
			vs = append(vs, v, math.Nextafter32(v, -10), math.Nextafter32(v, 10), math.Nextafter32(math.Nextafter32(v, 10), 10))
		}
	}
	vs = append(vs, float32(math.NaN()), float32(math.Inf(1)), float32(math.Inf(-1)), float32(math.Copysign(0, -1)),
		math.SmallestNonzeroFloat32, -math.SmallestNonzeroFloat32, math.MaxFloat32, -math.MaxFloat32, 1e-30, 0.25/255, 0.5/255)
	rng := rand.New(rand.NewPCG(2, 99))
	for range 100000 {
		vs = append(vs, float32(rng.Float64()*1.4-0.2))
	}
	for len(vs)%8 != 0 {
		vs = append(vs, 0.5)
	}
	got := make([]byte, len(vs)+1)
	got[len(vs)] = 0x5a
	grayBytesAVX2(&vs[0], &got[0], len(vs))
	if got[len(vs)] != 0x5a {
		t.Fatal("the kernel wrote past the row")
	}
	for i, v := range vs {
		if want := round8(255 * unit(float64(v))); got[i] != want {
			t.Fatalf("value %g (bits %#x): kernel %d, Go %d", v, math.Float32bits(v), got[i], want)
		}
	}
}
