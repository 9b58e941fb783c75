package affinity

import (
	"fmt"
	"testing"
)

// BenchmarkPixelGraph152x192r5 builds the pixel graph of a 152x192 scene
// (29k nodes, r = 5: 80 neighbours per interior pixel, 2.3M entries), the
// size of the pixel-graph speed case in the project's issue 2, on all cores.
func BenchmarkPixelGraph152x192r5(b *testing.B) {
	f := blobImage(7, 152, 192, 0.03)
	p := PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: 4}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := PixelGraph(f, 152, 192, p, 0); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSLIC1024x3000 runs SLIC with 3000 superpixels on a 1024x1024
// single-plane scene, the size of the whole-command speed case in issue 2,
// on all cores.
func BenchmarkSLIC1024x3000(b *testing.B) {
	f := blobImage(8, 1024, 1024, 0.03)
	p := SLICParams{Count: 3000, Compactness: 10}
	b.ReportAllocs()
	for b.Loop() {
		if _, _, err := SLIC(f, 1024, 1024, p, 0); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSLICCamera runs SLIC on camera-sized single-plane scenes with
// the counts the automatic rule gives generated nuclei frames (about
// 34,000 superpixels at 4 MP, the cap of 48,000 at 16 MP), on all cores;
// cpu-s/op is the process's CPU time per call.
func BenchmarkSLICCamera(b *testing.B) {
	for _, c := range []struct{ n, count int }{{2048, 34000}, {4096, 48000}} {
		b.Run(fmt.Sprintf("%dx%d", c.n, c.n), func(b *testing.B) {
			f := blobImage(8, c.n, c.n, 0.03)
			p := SLICParams{Count: c.count, Compactness: 20}
			b.ReportAllocs()
			c0 := cpuSeconds()
			for b.Loop() {
				if _, _, err := SLIC(f, c.n, c.n, p, 0); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}

// BenchmarkPixelStencilGraph152x192r5 builds the graph of
// BenchmarkPixelGraph152x192r5 in stencil form (each edge computed once).
func BenchmarkPixelStencilGraph152x192r5(b *testing.B) {
	f := blobImage(7, 152, 192, 0.03)
	p := PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: 4}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := PixelStencilGraph(f, 152, 192, p, 0); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkPixelGraphMegapixel builds the r = 5 pixel graph of a
// 912 x 1152 scene (1,050,624 pixels, the largest pixel-graph speed
// case) in compressed rows and in stencil form:
//
//	go test -run '^$' -bench PixelGraphMegapixel -benchtime 3x ./affinity
func BenchmarkPixelGraphMegapixel(b *testing.B) {
	f := blobImage(7, 912, 1152, 0.03)
	p := PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: 4}
	b.Run("csr", func(b *testing.B) {
		for b.Loop() {
			if _, err := PixelGraph(f, 912, 1152, p, 0); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("stencil", func(b *testing.B) {
		for b.Loop() {
			if _, err := PixelStencilGraph(f, 912, 1152, p, 0); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkEnforceConnectivity is SLIC's connectivity pass alone (one
// goroutine, serial by nature) on the superpixels of BenchmarkSLICCamera's
// scenes: every piece flood-filled and numbered again.
func BenchmarkEnforceConnectivity(b *testing.B) {
	for _, c := range []struct{ n, count int }{{2048, 34000}, {4096, 48000}} {
		b.Run(fmt.Sprintf("%dx%d", c.n, c.n), func(b *testing.B) {
			f := blobImage(8, c.n, c.n, 0.03)
			sp, _, err := SLIC(f, c.n, c.n, SLICParams{Count: c.count, Compactness: 20}, 0)
			if err != nil {
				b.Fatal(err)
			}
			scratch := make([]uint32, c.n*c.n)
			expected := c.n * c.n / c.count
			for b.Loop() {
				enforceConnectivity(sp, expected/4, scratch)
			}
		})
	}
}
