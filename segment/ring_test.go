package segment

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// dilateBox against its definition, checked pixel by pixel by brute force
// (a pixel is marked when some pixel of the region lies within
// chessboard distance d) on random label maps and boxes.
func TestDilateBox(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	const w, h = 40, 30
	for trial := range 50 {
		reg := make([]int32, w*h)
		for i := range reg {
			if rng.IntN(12) == 0 {
				reg[i] = 1
			}
		}
		d := 1 + trial%5
		bx0, by0 := rng.IntN(10), rng.IntN(8)
		bw, bh := 5+rng.IntN(w-bx0-5), 5+rng.IntN(h-by0-5)
		got := dilateBox(nil, reg, 1, w, bx0, by0, bw, bh, d)
		for y := 0; y < bh; y++ {
			for x := 0; x < bw; x++ {
				want := false
				for yy := max(0, y-d); yy <= min(bh-1, y+d) && !want; yy++ {
					for xx := max(0, x-d); xx <= min(bw-1, x+d); xx++ {
						if reg[(by0+yy)*w+bx0+xx] == 1 {
							want = true
							break
						}
					}
				}
				if got[y*bw+x] != want {
					t.Fatalf("trial %d (d %d): pixel (%d,%d) of the box marked %v, want %v", trial, d, x, y, got[y*bw+x], want)
				}
			}
		}
	}
}

// ringScene renders, on a flat background of 0.3 with Gaussian pixel
// noise of standard deviation 0.01, a disc of radius 8 whose level
// differs from the background by contrast (a sharp disc) or a Gaussian
// hill of σ 10 px and height contrast (blurred); region 1 is the disc of
// radius 8, or for the hill of radius 12 (its part above half its
// height), region 0 the rest, and every region is in the background
// class.
func ringScene(contrast float64, blurred bool) (lum []float32, reg []int32, w, h int) {
	w, h = 96, 96
	rng := rand.New(rand.NewPCG(11, 12))
	lum = make([]float32, w*h)
	reg = make([]int32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			dx, dy := float64(x)+0.5-48, float64(y)+0.5-48
			d2 := dx*dx + dy*dy
			v := 0.3
			if d2 < 64 || blurred && d2 < 144 {
				reg[i] = 1
			}
			switch {
			case blurred:
				v += contrast * math.Exp(-d2/(2*10*10))
			case d2 < 64:
				v += contrast
			}
			lum[i] = float32(v + 0.01*rng.NormFloat64())
		}
	}
	return lum, reg, w, h
}

// A sharp disc 5 noise standard deviations above (below) its ring
// becomes an object, one at 1 standard deviation does not (the detection
// rule at detectSigmas = 3, common practice), nor does a blurred hill
// 30 standard deviations high, whose region stands out from its ring
// and whose outline passes the edge floor but whose edge is diffuse (see
// diffuseRatio; without the coarse energy it would become an object); a
// region touching an object-class region is left alone.
func TestRingObjects(t *testing.T) {
	cases := []struct {
		name       string
		contrast   float64
		blurred    bool
		background Background
		want       bool
	}{
		{"sharp 5 sd bright on dark", 0.05, false, "dark", true},
		{"sharp 5 sd dark on bright", -0.05, false, "bright", true},
		{"sharp 1 sd", 0.01, false, "dark", false},
		{"wrong side", -0.05, false, "dark", false},
		{"blurred 30 sd", 0.3, true, "dark", false},
	}
	for _, c := range cases {
		lum, reg, w, h := ringScene(c.contrast, c.blurred)
		fine := affinity.EdgeEnergy(lum, w, h, affinity.ContourScale, 1)
		edges := &edgeTest{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1), coarse: coarseEnergy(lum, w, h, 1)}
		bg, obj := int32(0), int32(1)
		if c.background == "bright" {
			bg, obj = 1, 0
		}
		cls := []int32{bg, bg}
		changed := ringObjects(lum, edges, labelmap.Map{Pix: reg, Width: w, Height: h}, cls, bg, c.background)
		if got := cls[1] == obj; got != c.want || changed != c.want {
			t.Errorf("%s: region 1 an object %v (changed %v), want %v", c.name, got, changed, c.want)
		}
		if cls[0] != bg {
			t.Errorf("%s: the background region changed class", c.name)
		}
	}
	// The blurred hill is an object by contrast and edge floor alone.
	{
		lum, reg, w, h := ringScene(0.3, true)
		fine := affinity.EdgeEnergy(lum, w, h, affinity.ContourScale, 1)
		cls := []int32{0, 0}
		if !ringObjects(lum, &edgeTest{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1)}, labelmap.Map{Pix: reg, Width: w, Height: h}, cls, 0, "dark") {
			t.Errorf("blurred 30 sd without the coarse energy: not an object, so the case above tests nothing")
		}
	}
	// The sharp disc again, now beside an object-class region: its ring
	// would be the dark side of that object's rim, so it is left alone.
	lum, reg, w, h := ringScene(0.05, false)
	for y := 40; y < 56; y++ {
		reg[y*w+56] = 2
	}
	fine := affinity.EdgeEnergy(lum, w, h, affinity.ContourScale, 1)
	cls := []int32{0, 0, 1}
	if ringObjects(lum, &edgeTest{w: w, h: h, fine: fine, floor: edgeFloor(fine, 1)}, labelmap.Map{Pix: reg, Width: w, Height: h}, cls, 0, "dark") || cls[1] != 0 {
		t.Errorf("a region touching an object became an object")
	}
}
