package imageio

import (
	"bytes"
	"math"
	"math/rand/v2"
	"testing"
)

// TestPaethAVX2MatchesGo checks the AVX2 Paeth kernel against paethRow
// (the Go loop, which follows the PNG specification's predictor, section
// 9.4) byte for byte and sum for sum: random rows, rows whose predictor
// ties (a = b = c, equal distances), and bytes at 0 and 255 where the
// differences wrap, for 16 to 256 bytes.
func TestPaethAVX2MatchesGo(t *testing.T) {
	if !usePaethAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the Paeth filter runs in Go alone")
	}
	rng := rand.New(rand.NewPCG(4, 21))
	for n := 16; n <= 256; n += 16 {
		for trial := 0; trial < 40; trial++ {
			a, b, c, cur := make([]byte, n), make([]byte, n), make([]byte, n), make([]byte, n)
			for i := range a {
				switch trial % 4 {
				case 0: // random
					a[i], b[i], c[i], cur[i] = byte(rng.IntN(256)), byte(rng.IntN(256)), byte(rng.IntN(256)), byte(rng.IntN(256))
				case 1: // ties
					v := byte(rng.IntN(256))
					a[i], b[i], c[i], cur[i] = v, v+byte(rng.IntN(2)), v, byte(rng.IntN(256))
				case 2: // extremes
					pick := func() byte { return []byte{0, 1, 127, 128, 254, 255}[rng.IntN(6)] }
					a[i], b[i], c[i], cur[i] = pick(), pick(), pick(), pick()
				default: // smooth, as pictures are
					v := 100 + rng.IntN(20)
					a[i], b[i], c[i], cur[i] = byte(v), byte(v+rng.IntN(5)), byte(v+rng.IntN(5)), byte(v+rng.IntN(9)-4)
				}
			}
			want, got := make([]byte, n), make([]byte, n+1)
			got[n] = 0x5a
			ws := paethRow(a, b, c, cur, want)
			gs := paethAVX2(&cur[0], &a[0], &b[0], &c[0], &got[0], n)
			if got[n] != 0x5a {
				t.Fatalf("n = %d: the kernel wrote past the row", n)
			}
			if gs != ws || !bytes.Equal(got[:n], want) {
				t.Fatalf("n = %d, trial %d: kernel sum %d bytes %v, Go %d %v", n, trial, gs, got[:n], ws, want)
			}
		}
	}
}

// TestPNGFilterAVX2Identical filters rows of RGB (bpp 3), 16-bit gray
// (bpp 2) and gray (bpp 1) with and without the AVX2 kernels (Paeth and
// the other four candidates) and checks the chosen filter and the
// filtered bytes.
func TestPNGFilterAVX2Identical(t *testing.T) {
	if !usePaethAVX2 {
		t.Skip("no AVX2 kernel on this machine or build: the Paeth filter runs in Go alone")
	}
	rng := rand.New(rand.NewPCG(9, 23))
	avx2Filters := useFilterAVX2
	chosen := map[int]int{}
	for _, bpp := range []int{1, 2, 3, 6} {
		for _, px := range []int{2, 6, 21, 22, 43, 260, 1000} {
			n := px * bpp // whole pixels, as the encoder's rows
			for trial := 0; trial < 12; trial++ {
				prior, row := make([]byte, n+1), make([]byte, n)
				for i := range row {
					base := 60*(trial%3) + 30*i/n
					switch trial % 4 {
					case 0:
						row[i], prior[i+1] = byte(rng.IntN(256)), byte(rng.IntN(256))
					case 1:
						row[i], prior[i+1] = byte(base+rng.IntN(3)), byte(base+rng.IntN(3))
					case 2:
						row[i], prior[i+1] = byte(base+(i%bpp)*40), byte(base+rng.IntN(60))
					default:
						row[i], prior[i+1] = byte(i*7/bpp), byte(i*5/bpp+rng.IntN(2))
					}
				}
				run := func() (int, []byte) {
					var cr [5][]byte
					for f := range cr {
						cr[f] = make([]byte, n+1)
						cr[f][0] = byte(f)
					}
					copy(cr[0][1:], row)
					f := pngFilter(&cr, prior, bpp)
					return f, cr[f]
				}
				fa, ra := run()
				usePaethAVX2, useFilterAVX2 = false, false
				fb, rb := run()
				usePaethAVX2, useFilterAVX2 = true, avx2Filters
				if fa != fb || !bytes.Equal(ra, rb) {
					t.Fatalf("bpp %d, n %d, trial %d: filter %d with the kernels, %d without, or bytes differ", bpp, n, trial, fa, fb)
				}
				chosen[fa]++
			}
		}
	}
	for f, name := range []string{"None", "Sub", "Up", "Average", "Paeth"} {
		if chosen[f] == 0 {
			t.Fatalf("no row chose %s (%v): that kernel's result was never used", name, chosen)
		}
	}
}

// TestRound8MatchesRound checks round8 against uint8(math.Round(v)) on
// every half and quarter step of 0..255.25, the floats just beside each
// half, and random values in [0, 255.5).
func TestRound8MatchesRound(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 25))
	var vs []float64
	for q := 0; q <= 4*255+1; q++ {
		v := float64(q) / 4
		vs = append(vs, v, math.Nextafter(v, 0), math.Nextafter(v, 256))
	}
	for range 100000 {
		vs = append(vs, rng.Float64()*255.5)
	}
	for _, v := range vs {
		if v < 0 || v >= 255.5 {
			continue
		}
		if got, want := round8(v), uint8(math.Round(v)); got != want {
			t.Fatalf("round8(%v) = %d, math.Round gives %d", v, got, want)
		}
	}
}
