package segment

import (
	"context"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/score"
)

// packedScene draws a k x k mosaic of square tiles of side s with thin
// lines (2 px) between them, each tile at its own level with noise; the
// truth marks every tile an object and the lines 0. With dark false the
// lines are brighter than the tiles.
func packedScene(k, s int, dark bool, seed uint64) (lum []float32, truth []int32, w int) {
	r := rand.New(rand.NewPCG(seed, 1))
	w = k*s + (k-1)*2
	lum = make([]float32, w*w)
	truth = make([]int32, w*w)
	level := make([]float32, k*k)
	for i := range level {
		level[i] = 0.45 + 0.35*r.Float32()
	}
	for y := 0; y < w; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			tx, ty := x/(s+2), y/(s+2)
			onLine := x%(s+2) >= s || y%(s+2) >= s
			v := float32(0.15)
			if !dark {
				v = 0.95
			}
			if !onLine {
				v = level[ty*k+tx]
				truth[i] = int32(ty*k + tx + 1)
			}
			lum[i] = v + float32(0.02*r.NormFloat64())
		}
	}
	return lum, truth, w
}

// Packed tiles with dark or bright lines come out as one object per tile
// (the construction above is the reference: every tile is an object),
// also when tiles next to each other have nearly the same level, which
// only the line between them tells apart.
func TestPackedObjects(t *testing.T) {
	for _, dark := range []bool{true, false} {
		lum, truth, w := packedScene(5, 24, dark, 3)
		p := defaultParams()
		p.Classes, p.Background, p.Contour = 0, BackgroundLines, true
		p.Superpixels = 400
		res, err := Run(context.Background(), Input{Width: w, Height: w, Planes: [][]float32{lum}, Luminance: lum}, p)
		if err != nil {
			t.Fatal(err)
		}
		m := score.MatchObjects(res.Labels.Pix, truth)
		if m.F1 < 0.95 {
			t.Errorf("dark lines %v: %d objects, F1 %.3f (TP %d FP %d FN %d), want F1 >= 0.95", dark, res.NumObjects, m.F1, m.TP, m.FP, m.FN)
		}
	}
}

// With classes the lines mode is refused (it needs none).
func TestPackedRefusesClasses(t *testing.T) {
	p := defaultParams()
	p.Classes, p.Background = 2, BackgroundLines
	if err := p.Validate(); err == nil {
		t.Error("lines with classes: no error")
	}
}

// joinUnlined: in a packed field, a piece that meets its neighbour
// directly (no line pixel between) along most of its outline joins it;
// two objects with a line between them stay apart. Hand-drawn maps; the
// expected outcome is the rule's definition.
func TestJoinUnlined(t *testing.T) {
	// 12 x 6: objects 1 (left) and 2 (right) separated by a line column
	// (0) at x = 6; object 3, a 2 x 2 speck inside object 1, touches
	// only it.
	w, h := 12, 6
	labels := make([]int32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			switch {
			case x < 6:
				labels[y*w+x] = 1
			case x > 6:
				labels[y*w+x] = 2
			}
		}
	}
	for _, p := range [][2]int{{2, 2}, {3, 2}, {2, 3}, {3, 3}} {
		labels[p[1]*w+p[0]] = 3
	}
	got, n := joinUnlined(labelmap.Map{Pix: labels, Width: w, Height: h}, 3)
	if n != 2 {
		t.Fatalf("%d objects, want 2 (the speck joins object 1)", n)
	}
	if got[2*w+2] != got[0] || got[0] == got[w-1] {
		t.Errorf("speck in %d, left object %d, right object %d: want the speck with the left one and the two sides apart", got[2*w+2], got[0], got[w-1])
	}
}

// withoutFragments on a 4 x 4 mosaic of 10 x 10 tiles (median area 100):
// a corner piece of 3 x 3 pixels cut off one tile (area 9, under 100/8)
// goes to the background and the rest are renumbered in raster order; a
// piece of 4 x 4 (16, above 12.5) stays, and a mosaic of equal tiles is
// returned unchanged.
func TestWithoutFragments(t *testing.T) {
	const w, s = 40, 10
	mosaic := func(cut int) ([]int32, int) {
		lab := make([]int32, w*w)
		n := int32(0)
		id := map[[2]int]int32{}
		for y := 0; y < w; y++ {
			for x := 0; x < w; x++ {
				k := [2]int{y / s, x / s}
				if cut > 0 && x >= 15 && x < 15+cut && y >= 15 && y < 15+cut {
					k = [2]int{-1, -1} // the corner piece of tile (1, 1)
				}
				if id[k] == 0 {
					n++
					id[k] = n
				}
				lab[y*w+x] = id[k]
			}
		}
		return lab, int(n)
	}
	for _, c := range []struct {
		cut, want int
	}{{0, 16}, {3, 16}, {4, 17}} {
		lab, n := mosaic(c.cut)
		out, m := withoutFragments(lab, n)
		if m != c.want {
			t.Errorf("corner piece %dx%d: %d objects, want %d", c.cut, c.cut, m, c.want)
		}
		if c.cut == 3 && (out[16*w+16] != 0 || out[0] != 1 || out[w*w-1] != 16) {
			t.Errorf("corner piece 3x3: label %d at the piece (want 0), %d and %d at the field's corners (want 1 and 16)", out[16*w+16], out[0], out[w*w-1])
		}
		if c.cut == 0 && !slices.Equal(out, lab) {
			t.Error("equal tiles: labels changed")
		}
	}
}

// splitEnclosed splits an object that a broken line divides when the
// line's gaps are at most 2·lineGapRadius pixels and both sides are
// sizeable, and leaves it whole when a gap is wider or a side is a crumb;
// an object's pixels stay object pixels either way.
func TestSplitEnclosed(t *testing.T) {
	const w, h = 60, 30
	for _, c := range []struct {
		name   string
		gap    int // pixels of the line left open
		corner int // 0: the line runs at x = 30 (open from y = 12); else it closes off the corner x, y < corner (open at the far corner)
		want   int
	}{
		{"no gap: closed by the cut's lines already", 0, 0, 2},
		{"gap of 2 px", 2, 0, 2},
		{"gap of 2·lineGapRadius px", 2 * lineGapRadius, 0, 2},
		{"gap one wider", 2*lineGapRadius + 1, 0, 1},
		{"corner of 24 x 24 px behind a gapped line", 2, 24, 2},
		{"crumb: corner of 12 x 12 px, under 1/8 of the object", 2, 12, 1},
	} {
		labels := make([]int32, w*h)
		line := make([]bool, w*h)
		for i := range labels {
			labels[i] = 1
		}
		if s := c.corner; s > 0 {
			// An L of line pixels around the corner, open for c.gap
			// pixels next to its bend at (s, s).
			for k := 0; k <= s-c.gap; k++ {
				line[s*w+k], line[k*w+s] = true, true
			}
		} else {
			for y := 0; y < h; y++ {
				if y < 12 || y >= 12+c.gap {
					line[y*w+30] = true
				}
			}
		}
		for i, on := range line {
			if on {
				labels[i] = 0
			}
		}
		// The pieces that lines closed off completely are objects of
		// their own before the split, as packedObjects makes them.
		group := make([]int32, len(labels))
		for i, l := range labels {
			group[i] = l - 1
		}
		before, n := componentsOfGroups(group, w, h, 1, 1)
		got, m := splitEnclosed(labelmap.Map{Pix: before, Width: w, Height: h}, n, dilateSquare(line, w, h, lineGapRadius), 1)
		if m != c.want {
			t.Errorf("%s: %d objects, want %d", c.name, m, c.want)
		}
		for i := range got {
			if (got[i] > 0) != (before[i] > 0) || got[i] > int32(m) {
				t.Fatalf("%s: pixel %d labelled %d, was %d (of %d objects)", c.name, i, got[i], before[i], m)
			}
		}
		if m == 2 && got[0] == got[w*h-1] {
			t.Errorf("%s: the two sides of the line share a label", c.name)
		}
	}
}
