package score

import (
	"math"
	"testing"
)

// A hand-worked object matching on a 4x6 map (label 0 is background).
//
//	truth           pred
//	1 1 0 0 2 2     1 1 0 0 0 7
//	1 1 0 0 2 2     1 1 0 0 0 7
//	0 0 0 0 0 0     0 0 3 3 0 0
//	3 3 0 0 0 0     0 0 3 3 0 0
//
// pred 1 vs truth 1: intersection 4, union 4, IoU 1 -> match.
// pred 7 vs truth 2: intersection 2, union 4, IoU 0.5 -> not a match (> 0.5 needed).
// pred 3 vs truth 3: intersection 0 -> no match.
// TP 1, FP 2 (pred 7, pred 3), FN 2 (truth 2, truth 3):
// precision 1/3, recall 1/3, F1 2/(2+2+2) = 1/3, mean IoU 1.
func TestMatchObjectsHandWorked(t *testing.T) {
	truth := []int32{
		1, 1, 0, 0, 2, 2,
		1, 1, 0, 0, 2, 2,
		0, 0, 0, 0, 0, 0,
		3, 3, 0, 0, 0, 0,
	}
	pred := []int32{
		1, 1, 0, 0, 0, 7,
		1, 1, 0, 0, 0, 7,
		0, 0, 3, 3, 0, 0,
		0, 0, 3, 3, 0, 0,
	}
	m := MatchObjects(pred, truth)
	want := ObjectMatch{TP: 1, FP: 2, FN: 2, Precision: 1.0 / 3, Recall: 1.0 / 3, F1: 1.0 / 3, MeanIoU: 1}
	if m != want {
		t.Errorf("got %+v\nwant %+v", m, want)
	}
	// Widen pred 7 to columns 3..5: intersection 4, union 6, IoU 2/3 -> a match.
	pred[3], pred[4], pred[9], pred[10] = 7, 7, 7, 7
	m = MatchObjects(pred, truth)
	want = ObjectMatch{TP: 2, FP: 1, FN: 1, Precision: 2.0 / 3, Recall: 2.0 / 3, F1: 2.0 / 3, MeanIoU: (1 + 2.0/3) / 2}
	if m.TP != want.TP || m.FP != want.FP || m.FN != want.FN ||
		math.Abs(m.F1-want.F1) > 1e-15 || math.Abs(m.MeanIoU-want.MeanIoU) > 1e-15 {
		t.Errorf("got %+v\nwant %+v", m, want)
	}
}

// Two touching truth objects predicted as one merged object: the merged
// object has IoU 1/2 with each, so neither matches (the way a threshold
// loses touching nuclei).
func TestMatchObjectsMerged(t *testing.T) {
	truth := []int32{1, 1, 2, 2, 0}
	pred := []int32{5, 5, 5, 5, 0}
	m := MatchObjects(pred, truth)
	if m.TP != 0 || m.FP != 1 || m.FN != 2 || m.F1 != 0 || m.MeanIoU != 0 {
		t.Errorf("got %+v, want TP 0, FP 1, FN 2, F1 0, MeanIoU 0", m)
	}
}

func TestMatchObjectsDegenerate(t *testing.T) {
	bg := []int32{0, 0, 0}
	if m := MatchObjects(bg, bg); m != (ObjectMatch{Precision: 1, Recall: 1, F1: 1, MeanIoU: 1}) {
		t.Errorf("no objects anywhere: %+v", m)
	}
	if m := MatchObjects(bg, []int32{0, 4, 0}); m != (ObjectMatch{FN: 1}) {
		t.Errorf("nothing predicted: %+v", m)
	}
	if m := MatchObjects([]int32{0, 4, 0}, bg); m != (ObjectMatch{FP: 1}) {
		t.Errorf("nothing true: %+v", m)
	}
}

// Hand-worked Dice and IoU: |P| = 3, |T| = 2, |P ∩ T| = 2:
// Dice = 4/5 (Dice 1945), IoU = 2/3 (Jaccard 1912).
func TestDice(t *testing.T) {
	for _, tc := range []struct {
		name        string
		pred, truth []int32
		dice, iou   float64
	}{
		{"partial", []int32{1, 2, 2, 0, 0}, []int32{0, 3, 3, 0, 0}, 0.8, 2.0 / 3},
		{"disjoint", []int32{1, 0}, []int32{0, 1}, 0, 0},
		{"both_empty", []int32{0, 0}, []int32{0, 0}, 1, 1},
		{"labels_ignored", []int32{9, 9}, []int32{1, 2}, 1, 1},
	} {
		d, j := Dice(tc.pred, tc.truth)
		if math.Abs(d-tc.dice) > 1e-15 || math.Abs(j-tc.iou) > 1e-15 {
			t.Errorf("%s: dice, iou = %v, %v; want %v, %v", tc.name, d, j, tc.dice, tc.iou)
		}
		// dice = 2 iou / (1 + iou), an identity of the two definitions.
		if math.Abs(d-2*j/(1+j)) > 1e-15 {
			t.Errorf("%s: dice %v != 2 iou/(1+iou) with iou %v", tc.name, d, j)
		}
	}
}
