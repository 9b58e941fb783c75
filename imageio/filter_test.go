package imageio

import (
	"bytes"
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
