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
