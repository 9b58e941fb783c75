package segment

import (
	"context"
	"testing"
)

// Pixels marked invalid get label 0 and join no region: on a two-level
// image (left half 0.2, right half 0.8, a cut everyone agrees on) with a
// 4 x 4 block of invalid pixels inside the right half, the invalid block
// is 0 in Labels and Regions, every other pixel keeps a region, and the
// regions stay numbered 1..N.
func TestInvalidPixelsJoinNoRegion(t *testing.T) {
	const w, h = 24, 16
	lum := make([]float32, w*h)
	invalid := make([]bool, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			lum[y*w+x] = 0.2
			if x >= w/2 {
				lum[y*w+x] = 0.8
			}
			if x >= 16 && x < 20 && y >= 6 && y < 10 {
				invalid[y*w+x] = true
			}
		}
	}
	res, err := Run(context.Background(), Input{Width: w, Height: h, Planes: [][]float32{lum}, Luminance: lum, Invalid: invalid}, Params{Superpixels: 0, Radius: 2, SigmaI: 0.1, SigmaX: 2, Compactness: 20, MaxNcut: 0.2, MinArea: 1, Method: MethodBisect, Workers: 1, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	seen := map[int32]bool{}
	for i, l := range res.Labels.Pix {
		if invalid[i] != (l == 0) || invalid[i] != (res.Regions.Pix[i] == 0) {
			t.Fatalf("pixel (%d, %d): invalid %v, label %d, region %d", i%w, i/w, invalid[i], l, res.Regions.Pix[i])
		}
		if l > 0 {
			seen[l] = true
		}
	}
	for l := int32(1); l <= int32(res.NumRegions); l++ {
		if !seen[l] {
			t.Fatalf("region %d of %d missing: labels not consecutive", l, res.NumRegions)
		}
	}
	if len(seen) != res.NumRegions || res.NumRegions < 2 {
		t.Fatalf("%d labels seen, NumRegions %d; want the two halves at least", len(seen), res.NumRegions)
	}
}
