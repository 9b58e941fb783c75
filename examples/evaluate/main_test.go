package main

import (
	"math"
	"testing"
)

// TestMeasure checks the four scores on hand-worked label maps.
func TestMeasure(t *testing.T) {
	truth := []int32{0, 0, 1, 1, 2, 2, 0, 0}
	// Perfect prediction with other label values: every score at its best
	// (hand-worked: labels are only names).
	m := measure([]int32{0, 0, 7, 7, 3, 3, 0, 0}, truth)
	if m.F1 != 1 || m.MAP != 1 || math.Abs(m.ARI-1) > 1e-12 || m.CountErr != 0 {
		t.Errorf("perfect prediction: %+v", m)
	}
	// The two objects merged into one: IoU with each is 2/4 = 0.5, not
	// above 0.5, so no match (F1 0, AP 0 at every threshold); one object
	// found for two, count error |1-2|/2 = 0.5 (hand-worked).
	m = measure([]int32{0, 0, 1, 1, 1, 1, 0, 0}, truth)
	if m.F1 != 0 || m.MAP != 0 || m.CountErr != 0.5 {
		t.Errorf("merged pair: %+v, want F1 0, mAP 0, count error 0.5", m)
	}
}
