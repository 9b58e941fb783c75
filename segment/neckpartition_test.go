package segment

import (
	"context"
	"math"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// A row of k overlapping discs of radius R, centres sep apart, has k
// maxima in its distance map, and every saddle between neighbours lies
// at half the chord, sqrt(R² - sep²/4), so each neck is
// 1 - sqrt(1 - (sep/2R)²) deep relative to the peak (plane geometry, as
// in TestNeckDepthDiscs): neckPartition parts the row into its k discs
// when that depth clears refineNeckAlone and the drop neckNoise. Each
// piece is then the disc's half-plane cell (the watershed of the distance
// map from the centres runs along the chords), of area πR² less the
// lens the disc shares with each neighbour; a single disc, a row whose
// necks are too shallow, a piece below minPart and pieces whose median
// peak lies more than neckScaleFactor from the image's object radius
// give no partition.
func TestNeckPartitionRow(t *testing.T) {
	lens := func(R, s float64) float64 { // area shared by two discs, centres s apart (common practice)
		return 2*R*R*math.Acos(s/(2*R)) - s/2*math.Sqrt(4*R*R-s*s)
	}
	cases := []struct {
		name    string
		R, sep  float64
		k       int
		minPart int
		radius  float64 // the image's object radius
		want    int     // pieces; 0: no partition
	}{
		{"pair", 12, 20, 2, 20, 12, 2},
		{"chain of seven", 10, 17, 7, 20, 10, 7},
		{"chain of twelve, radius 6", 6, 10.5, 12, 20, 6, 12},
		{"radius estimated 40 % low", 10, 17, 7, 20, 6, 7},
		{"single disc", 15, 0, 1, 20, 15, 0},
		{"necks too shallow", 15, 6, 3, 20, 15, 0}, // depth 1 - sqrt(1 - 0.04) = 0.020 < 0.06
		{"pieces below minPart", 12, 20, 2, 600, 12, 0},
		{"pieces 3x the object radius", 12, 20, 4, 20, 4, 0},
		{"pieces a third of the object radius", 6, 10.5, 5, 20, 18, 0},
		{"no object radius", 10, 17, 7, 20, 0, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			mask, cw, ch := discRow(c.R, c.sep, c.k)
			d := distanceInside(mask, cw, ch)
			piece, n := neckPartition(d, cw, ch, c.minPart, 2, c.radius)
			if n != c.want || (n == 0) != (piece == nil) {
				t.Fatalf("%d pieces (nil %v), want %d", n, piece == nil, c.want)
			}
			if n == 0 {
				return
			}
			area := make([]int, n)
			for i, p := range piece {
				if mask[i] != (p >= 0) {
					t.Fatalf("pixel %d: inside %v but piece %d", i, mask[i], p)
				}
				if p >= 0 {
					area[p]++
				}
			}
			// Each centre lies in a piece of its own.
			seen := map[int32]bool{}
			for j := 0; j < c.k; j++ {
				cx, cy := int(3+c.R+c.sep*float64(j)), int(3+c.R)
				p := piece[cy*cw+cx]
				if seen[p] {
					t.Fatalf("centre %d shares piece %d with another", j, p)
				}
				seen[p] = true
				nb := 2.0
				if j == 0 || j == c.k-1 {
					nb = 1
				}
				want := math.Pi*c.R*c.R - nb*lens(c.R, c.sep)/2
				if got := float64(area[p]); math.Abs(got-want) > 0.08*want {
					t.Errorf("centre %d: piece of %.0f px, want %.0f (within 8%%)", j, got, want)
				}
			}
		})
	}
}

// Elongated pieces between necks (a vessel whose width varies, here a
// row of ellipses of aspect 6 overlapping end to end) are no blobs:
// compactSide fails and nothing is parted, as neckPieces would not part
// them one at a time.
func TestNeckPartitionElongated(t *testing.T) {
	const a, b, k = 30.0, 5.0, 4
	cw, ch := int(2*a*float64(k))+6, int(2*b)+6
	mask := make([]bool, cw*ch)
	for y := 0; y < ch; y++ {
		for x := 0; x < cw; x++ {
			for c := 0; c < k; c++ {
				dx, dy := (float64(x)+0.5-(3+a+1.8*a*float64(c)))/a, (float64(y)+0.5-(3+b))/b
				if dx*dx+dy*dy < 1 {
					mask[y*cw+x] = true
				}
			}
		}
	}
	d := distanceInside(mask, cw, ch)
	if nk := deepestNeck(d, cw, ch, neckNoise); nk.depth < refineNeckAlone {
		t.Fatalf("the necks are %.3f deep: the test no longer covers its case", nk.depth)
	}
	if piece, n := neckPartition(d, cw, ch, 20, 2, b); piece != nil || n != 0 {
		t.Fatalf("%d pieces, want none", n)
	}
}

// A chain of fourteen touching discs of even contrast, larger than
// refineMaxNodes, with no seam between them: the cut of the whole chain
// would peel discs off one by one and stop at the work cap; parted at
// its necks first (refineByNecks), every disc is an object of its own.
func TestRefineLongChain(t *testing.T) {
	const R, sep, k = 16.0, 27.0, 14
	mask, w, h := discRow(R, sep, k)
	labels := make([]int32, w*h)
	con := make([]float64, w*h)
	area := 0
	for i, in := range mask {
		if in {
			labels[i] = 1
			con[i] = 1
			area++
		}
	}
	if area <= refineMaxNodes {
		t.Fatalf("%d px: the chain would not take the large-object path", area)
	}
	ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 20, true, R, 2, 1)
	if err != nil {
		t.Fatal(err)
	}
	if ref.n != k {
		t.Fatalf("%d objects, want %d", ref.n, k)
	}
	seen := map[int32]bool{}
	for j := 0; j < k; j++ {
		cx, cy := int(3+R+sep*float64(j)), int(3+R)
		l := ref.labels[cy*w+cx]
		if l == 0 || seen[l] {
			t.Fatalf("centre %d: label %d (repeated or background)", j, l)
		}
		seen[l] = true
	}
}

// minPieces: a row of seven discs is parted when seven pieces or fewer
// are asked for, and not at all when eight are.
func TestNeckPartitionMinPieces(t *testing.T) {
	mask, cw, ch := discRow(10, 17, 7)
	d := distanceInside(mask, cw, ch)
	for _, c := range []struct{ min, want int }{{5, 7}, {7, 7}, {8, 0}} {
		if _, n := neckPartition(d, cw, ch, 20, c.min, 10); n != c.want {
			t.Errorf("minPieces %d: %d pieces, want %d", c.min, n, c.want)
		}
	}
}

// A clump of six discs of radius 12 in two rows (centres 21 px apart:
// necks deep enough for the neck partition) and a seventh disc 11 px
// beside the third, overlapping it so far that its notches lie within
// concaveNoise (1.3 px deep by plane geometry) and the partition, whose
// floors its digitized neck does not clear, leaves the pair as one
// piece; the six at contrast 1, the seventh 0.6 where no other disc
// covers it. The partition parts the six;
// the re-cut then parts the pair along the step between their
// plateaus (differ; 40 % against refineStep's 10 %), and the dim disc's
// object is the pixels it alone covers (IoU >= 0.8). Without the differ
// rule inside partitioned clumps the pair stays one object (6 objects).
func TestRefineClumpStep(t *testing.T) {
	const R, sep, s2 = 12.0, 21.0, 11.0
	cx := func(c int) float64 { return 3 + R + sep*float64(c%3) }
	cy := func(c int) float64 { return 3 + R + sep*float64(c/3) }
	dx := cx(2) + s2 // the dim disc's centre, on the third disc's row
	w, h := int(dx+R)+4, int(2*R+sep)+6
	labels := make([]int32, w*h)
	con := make([]float64, w*h)
	dim := make([]bool, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			fx, fy := float64(x)+0.5, float64(y)+0.5
			v := 0.0
			for c := range 6 {
				if math.Hypot(fx-cx(c), fy-cy(c)) < R {
					v = 1
				}
			}
			if v == 0 && math.Hypot(fx-dx, fy-cy(0)) < R {
				v, dim[y*w+x] = 0.6, true
			}
			if v > 0 {
				labels[y*w+x], con[y*w+x] = 1, v
			}
		}
	}
	ref, err := refineObjects(context.Background(), con, labelmap.Map{Pix: labels, Width: w, Height: h}, 1, RefineMaxNcut, 20, true, R, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	if ref.n != 7 {
		t.Fatalf("%d objects, want the 7 discs", ref.n)
	}
	l := ref.labels[int(cy(0))*w+int(dx)+4] // inside the dim disc only
	if l == 0 || l == ref.labels[int(cy(0))*w+int(cx(2))] {
		t.Fatalf("dim disc label %d, bright neighbour's %d: not parted", l, ref.labels[int(cy(0))*w+int(cx(2))])
	}
	inter, union := 0, 0
	for i := range dim {
		a, b := dim[i], ref.labels[i] == l
		if a && b {
			inter++
		}
		if a || b {
			union++
		}
	}
	if iou := float64(inter) / float64(union); iou < 0.8 {
		t.Errorf("dim disc's object IoU %.2f with the pixels it alone covers, want >= 0.8", iou)
	}
}
