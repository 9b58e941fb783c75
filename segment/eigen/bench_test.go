package eigen

import (
	"fmt"
	"testing"
)

// BenchmarkSmallestPixel152x192 solves for the 6 smallest eigenpairs of
// the pixel graph of the coins image (29184 nodes, r = 5, about 2.3M
// stored entries), the size at which scipy's eigsh was timed in DESIGN.md.
func BenchmarkSmallestPixel152x192(b *testing.B) {
	g := coinsGraph(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 6, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

func benchPlanar(b *testing.B, n int) {
	g := planarGraph(n, 7)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Smallest(g, 2, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSmallestN500 is one recursive two-way cut on a superpixel-like
// graph of 500 nodes (k = 2).
func BenchmarkSmallestN500(b *testing.B) { benchPlanar(b, 500) }

// BenchmarkSmallestN3000 is the same on 3000 nodes.
func BenchmarkSmallestN3000(b *testing.B) { benchPlanar(b, 3000) }

// BenchmarkCrossover times the dense and the coarse-to-fine paths for
// k = 2 on superpixel-like graphs around the dense limit (denseMax).
func BenchmarkCrossover(b *testing.B) {
	for _, n := range []int{40, 60, 80, 100, 200} {
		g := planarGraph(n, 3)
		for _, path := range []struct {
			name  string
			limit int
		}{{"dense", n}, {"multilevel", 0}} {
			b.Run(fmt.Sprintf("n=%d/%s", n, path.name), func(b *testing.B) {
				for i := 0; i < b.N; i++ {
					if _, err := smallest(g, 2, Options{Workers: 1}, path.limit); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
