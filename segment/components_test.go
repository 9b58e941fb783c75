package segment

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// componentsOfRegions (groups looked up per region, row by row) gives
// the labelling of the group plane it stands for, and
// componentsOfGroupsInto writes componentsOfGroups' labels over a plane
// of stale values.
func TestComponentsOfRegionsMatchesGroupPlane(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 5))
	for _, sz := range [][2]int{{1, 1}, {9, 4}, {130, 200}, {257, 300}} {
		w, h := sz[0], sz[1]
		reg := randomGroups(rng, w, h, 60)
		for i := range reg {
			reg[i]++ // regions 0..60
		}
		table := make([]int32, 61)
		for r := range table {
			table[r] = int32(rng.IntN(6)) - 1 // groups -1..4
		}
		group := make([]int32, len(reg))
		for i, r := range reg {
			group[i] = table[r]
		}
		for _, minArea := range []int{0, 20} {
			want, wn := componentsOfGroups(group, w, h, minArea, 1)
			for _, workers := range []int{1, 3} {
				got, n := componentsOfRegions(reg, table, w, h, minArea, workers)
				if n != wn || !slices.Equal(got, want) {
					t.Fatalf("%dx%d minArea %d workers %d: regions give %d pieces, the plane %d (maps equal: %v)", w, h, minArea, workers, n, wn, slices.Equal(got, want))
				}
				stale := make([]int32, len(reg))
				for i := range stale {
					stale[i] = int32(rng.IntN(1000)) - 500
				}
				into, in := componentsOfGroupsInto(stale, group, w, h, minArea, workers)
				if in != wn || !slices.Equal(into, want) || &into[0] != &stale[0] {
					t.Fatalf("%dx%d minArea %d workers %d: into a stale plane %d pieces, want %d (maps equal: %v)", w, h, minArea, workers, in, wn, slices.Equal(into, want))
				}
			}
		}
	}
}

// maskOfClass and classMap, on blocks of pixels on the workers, give the
// plain loops' mask, class map and counts (worked by hand: one pixel at
// a time, cls[reg[i]]), on maps of one block and of several.
func TestMaskOfClassAndClassMap(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 7))
	for _, sz := range [][2]int{{1, 1}, {7, 5}, {300, 300}, {513, 257}} {
		w, h := sz[0], sz[1]
		reg := randomGroups(rng, w, h, 50)
		for i := range reg {
			reg[i]++ // regions 0..50
		}
		cls := make([]int32, 51)
		for r := range cls {
			cls[r] = int32(rng.IntN(3))
		}
		for _, c := range []int32{0, 1, 2, 3} { // 3: no region of that class
			wantMask, wantAny := make([]bool, len(reg)), false
			wantMap, wantOut := make([]int32, len(reg)), 0
			for i, r := range reg {
				wantMask[i] = cls[r] == c
				wantAny = wantAny || wantMask[i]
				wantMap[i] = cls[r]
				if cls[r] != c {
					wantOut++
				}
			}
			for _, workers := range []int{1, 3} {
				mask := make([]bool, len(reg))
				for i := range mask {
					mask[i] = rng.IntN(2) == 0 // stale values
				}
				if got := maskOfClass(mask, reg, cls, c, workers); got != wantAny || !slices.Equal(mask, wantMask) {
					t.Fatalf("%dx%d class %d workers %d: maskOfClass found %v, want %v (masks equal: %v)", w, h, c, workers, got, wantAny, slices.Equal(mask, wantMask))
				}
				out := make([]int32, len(reg))
				if n := classMap(out, reg, cls, c, workers); n != wantOut || !slices.Equal(out, wantMap) {
					t.Fatalf("%dx%d class %d workers %d: classMap counted %d outside, want %d (maps equal: %v)", w, h, c, workers, n, wantOut, slices.Equal(out, wantMap))
				}
			}
		}
	}
}
