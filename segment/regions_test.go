package segment

import (
	"fmt"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestMergeSmall checks mergeSmall on maps worked by hand: a region
// below the minimum area joins the neighbour it shares the longest
// boundary with; with no region below it (labels left empty by the cut
// included) nothing merges and the labels are only renumbered in raster
// order of first appearance (relabel).
func TestMergeSmall(t *testing.T) {
	for _, tc := range []struct {
		name   string
		w      int
		in     []int32
		n, min int
		want   []int32
		wantN  int
	}{
		{
			// Label 2 (2 pixels) touches 0 along 2 pixel edges and 1
			// along 4: it joins 1.
			name: "joins the longest boundary", w: 4, n: 3, min: 3,
			in: []int32{
				0, 0, 1, 1,
				0, 2, 2, 1,
				0, 1, 1, 1,
			},
			want: []int32{
				0, 0, 1, 1,
				0, 1, 1, 1,
				0, 1, 1, 1,
			},
			wantN: 2,
		},
		{
			// A tie (2 edges each with 0 and 1): the lower label.
			name: "tie", w: 4, n: 3, min: 2,
			in: []int32{
				0, 0, 1, 1,
				0, 2, 1, 1,
				0, 1, 1, 1,
			},
			want: []int32{
				0, 0, 1, 1,
				0, 0, 1, 1,
				0, 1, 1, 1,
			},
			wantN: 2,
		},
		{
			// No region below 3 pixels; label 1 is empty: the labels
			// are renumbered 3 -> 1, 0 -> 0, 2 -> 2 in raster order.
			name: "none small", w: 3, n: 4, min: 3,
			in: []int32{
				3, 3, 3,
				0, 0, 0,
				2, 2, 2,
			},
			want: []int32{
				0, 0, 0,
				1, 1, 1,
				2, 2, 2,
			},
			wantN: 3,
		},
	} {
		lab := slices.Clone(tc.in)
		got := mergeSmall(labelmap.Map{Pix: lab, Width: tc.w, Height: len(lab) / tc.w}, tc.n, tc.min)
		if got != tc.wantN || !slices.Equal(lab, tc.want) {
			t.Errorf("%s: %d regions %v, want %d %v", tc.name, got, lab, tc.wantN, tc.want)
		}
	}
}

// BenchmarkMergeSmall is mergeSmall on a region map of 40 x 40 pixel
// squares (about the size of the cut's regions on a generated 4 MP
// nuclei frame) at 4 and 16 megapixels, the minimum area 20 (the
// default): no region is small, as on camera frames cut from
// superpixels; cpu-s/op is the process's CPU time per call (one
// goroutine).
func BenchmarkMergeSmall(b *testing.B) {
	for _, n := range []int{2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			per := (n + 39) / 40
			reg := make([]int32, n*n)
			lab := make([]int32, n*n)
			for i := range reg {
				reg[i] = int32((i/n/40)*per + i%n/40)
			}
			c0 := cpuSeconds()
			for b.Loop() {
				copy(lab, reg)
				mergeSmall(labelmap.Map{Pix: lab, Width: n, Height: n}, per*per, 20)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}
