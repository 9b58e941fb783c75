package measure

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestRegionsMatchFormerPasses checks Regions against regionsOld, the
// former pixel-by-pixel passes kept verbatim in regions_old_test.go,
// printed value for value (%v keeps NaN and -0 apart): overlapping random
// discs, labels with gaps in their rows (two pieces on one row), mixed
// classes with ties, NaN and infinite intensities, two planes, a region
// whose moments overflow 64 bits (the exact path), a sparse huge label
// and a map that is all one region.
func TestRegionsMatchFormerPasses(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 17))
	type scene struct {
		name   string
		w, h   int
		labels []int32
	}
	var scenes []scene
	for _, sz := range [][2]int{{64, 48}, {300, 200}, {1024, 1024}} {
		w, h := sz[0], sz[1]
		labels := make([]int32, w*h)
		for k := range w * h / 400 {
			cx, cy, r := rng.IntN(w), rng.IntN(h), 1+rng.IntN(20)
			for y := max(cy-r, 0); y < min(cy+r+1, h); y++ {
				for x := max(cx-r, 0); x < min(cx+r+1, w); x++ {
					if (x-cx)*(x-cx)+(y-cy)*(y-cy) <= r*r {
						labels[y*w+x] = int32(k + 1)
					}
				}
			}
		}
		// Label 1 in many pieces: pixels scattered over the image.
		for range w * h / 50 {
			labels[rng.IntN(w*h)] = 1
		}
		scenes = append(scenes, scene{fmt.Sprintf("discs %dx%d", w, h), w, h, labels})
	}
	one := make([]int32, 50*40)
	for i := range one {
		one[i] = 7
	}
	scenes = append(scenes, scene{"one region", 50, 40, one})
	sparse := make([]int32, 30*30)
	sparse[5], sparse[400], sparse[401] = 2_000_000_000, 3, 2_000_000_000
	scenes = append(scenes, scene{"sparse labels", 30, 30, sparse})
	big := make([]int32, 2600*2600) // Sxx near 1.5e13, A Sxx past 2^64
	for i := range big {
		big[i] = 1
	}
	big[0], big[2600*2600-1] = 2, 0
	scenes = append(scenes, scene{"large region", 2600, 2600, big})
	for _, sc := range scenes {
		n := sc.w * sc.h
		p1, p2 := make([]float32, n), make([]float32, n)
		classes := make([]int32, n)
		for i := range p1 {
			p1[i] = float32(rng.NormFloat64()*100 + 1000)
			p2[i] = float32(rng.IntN(65536))
			classes[i] = int32(rng.IntN(3))
			if sc.labels[i] > 0 && rng.IntN(4) > 0 {
				classes[i] = 1
			}
		}
		for k := range 20 {
			p1[rng.IntN(n)] = float32(math.NaN())
			if k%2 == 0 {
				p2[rng.IntN(n)] = float32(math.Inf(1 - 2*(k%4/2)))
			}
		}
		m := labelmap.Map{Pix: sc.labels, Width: sc.w, Height: sc.h}
		for _, c := range []struct {
			planes  [][]float32
			classes []int32
		}{{nil, nil}, {[][]float32{p1}, classes}, {[][]float32{p1, p2}, nil}} {
			got, err := Regions(m, c.planes, c.classes)
			if err != nil {
				t.Fatal(err)
			}
			want, err := regionsOld(m, c.planes, c.classes)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(want) || len(got) == 0 {
				t.Fatalf("%s: %d regions, formerly %d", sc.name, len(got), len(want))
			}
			for k := range got {
				if g, w := fmt.Sprintf("%v", got[k]), fmt.Sprintf("%v", want[k]); g != w {
					t.Fatalf("%s, %d planes, classes %v: region %d\n  now      %s\n  formerly %s", sc.name, len(c.planes), c.classes != nil, k, g, w)
				}
			}
		}
	}
}

// TestConvexHullMatchesSorted checks convexHull (the row extremes, the
// chain along y) against convexHullSorted (Andrew's chain after a sort by
// x, the former code): the same set of vertices on random point sets,
// with duplicates, collinear runs, single rows and single columns.
func TestConvexHullMatchesSorted(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	key := func(h []pt) map[pt]bool {
		m := map[pt]bool{}
		for _, p := range h {
			m[p] = true
		}
		return m
	}
	for trial := range 3000 {
		n := 1 + rng.IntN(40)
		ps := make([]pt, n)
		for i := range ps {
			switch trial % 4 {
			case 0:
				ps[i] = pt{int64(rng.IntN(30)), int64(rng.IntN(30))}
			case 1: // one row
				ps[i] = pt{int64(rng.IntN(30)), 5}
			case 2: // one column
				ps[i] = pt{-3, int64(rng.IntN(30))}
			default: // a diagonal line and a few others
				v := int64(rng.IntN(20))
				ps[i] = pt{v, 2 * v}
				if rng.IntN(5) == 0 {
					ps[i] = pt{int64(rng.IntN(20)), int64(rng.IntN(40))}
				}
			}
		}
		want := key(convexHullSorted(append([]pt(nil), ps...)))
		got := convexHull(append([]pt(nil), ps...))
		if len(got) != len(want) || len(key(got)) != len(got) {
			t.Fatalf("trial %d: hull %v, formerly %v", trial, got, convexHullSorted(ps))
		}
		for _, p := range got {
			if !want[p] {
				t.Fatalf("trial %d: hull %v, formerly %v", trial, got, convexHullSorted(ps))
			}
		}
	}
}

// TestOutlinesMatchFormer checks Outlines against outlinesOld (the former
// first pass, outline_old_test.go): the same polygons in the same order
// on random discs and scattered pixels (pieces meeting at corners, holes,
// several pieces of one label), negative labels and one region.
func TestOutlinesMatchFormer(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 4))
	for trial := range 8 {
		w, h := 20+rng.IntN(300), 20+rng.IntN(300)
		labels := make([]int32, w*h)
		for k := range 5 + rng.IntN(80) {
			cx, cy, r := rng.IntN(w), rng.IntN(h), 1+rng.IntN(25)
			l := int32(k%9 + 1)
			if trial%2 == 1 && k%6 == 0 {
				l = -l
			}
			for y := max(cy-r, 0); y < min(cy+r+1, h); y++ {
				for x := max(cx-r, 0); x < min(cx+r+1, w); x++ {
					if d := (x-cx)*(x-cx) + (y-cy)*(y-cy); d <= r*r && (trial%3 != 2 || d >= r*r/4) {
						labels[y*w+x] = l
					}
				}
			}
		}
		for range w * h / 30 {
			labels[rng.IntN(w*h)] = int32(rng.IntN(4))
		}
		if trial == 7 {
			for i := range labels {
				labels[i] = 3
			}
		}
		m := labelmap.Map{Pix: labels, Width: w, Height: h}
		got, err := Outlines(m)
		if err != nil {
			t.Fatal(err)
		}
		want, err := outlinesOld(m)
		if err != nil {
			t.Fatal(err)
		}
		if len(want) == 0 || fmt.Sprint(got) != fmt.Sprint(want) {
			t.Fatalf("trial %d (%dx%d): %d outlines, formerly %d, or their polygons differ", trial, w, h, len(got), len(want))
		}
	}
}
