package affinity

import "testing"

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
