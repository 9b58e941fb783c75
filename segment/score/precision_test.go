package score

import (
	"math"
	"testing"
)

// Hand-worked cases of AP(t) = TP/(TP+FP+FN) (Caicedo et al. 2019).
func TestAveragePrecisionHandWorked(t *testing.T) {
	// truth: object 1 = 4 pixels, object 2 = 2 pixels; background 2 pixels.
	truth := []int32{1, 1, 1, 1, 2, 2, 0, 0}
	cases := []struct {
		name string
		pred []int32
		t    float64
		want float64
	}{
		// Exact copy: every IoU is 1, AP 1 at every level.
		{"identical", []int32{5, 5, 5, 5, 9, 9, 0, 0}, 0.95, 1},
		// Object 1 predicted with 3 of 4 pixels: IoU 3/4. Object 2 exact.
		// At 0.7: 2 TP; at 0.8: 1 TP, 1 FP, 1 FN -> 1/3.
		{"partial at 0.7", []int32{1, 1, 1, 0, 2, 2, 0, 0}, 0.7, 1},
		{"partial at 0.8", []int32{1, 1, 1, 0, 2, 2, 0, 0}, 0.8, 1.0 / 3},
		// Both objects merged: IoU with object 1 is 4/6, with 2 is 2/6.
		// At 0.5: 1 TP (object 1), 0 FP, 1 FN -> 1/2. At 0.7: 0/(1+2) = 0.
		{"merged at 0.5", []int32{1, 1, 1, 1, 1, 1, 0, 0}, 0.5, 0.5},
		{"merged at 0.7", []int32{1, 1, 1, 1, 1, 1, 0, 0}, 0.7, 0},
		// A spurious object in the background: 2 TP, 1 FP -> 2/3.
		{"extra object", []int32{1, 1, 1, 1, 2, 2, 3, 0}, 0.5, 2.0 / 3},
		// Nothing predicted: 0 TP, 2 FN -> 0.
		{"empty prediction", []int32{0, 0, 0, 0, 0, 0, 0, 0}, 0.5, 0},
	}
	for _, c := range cases {
		if got := AveragePrecision(c.pred, truth, c.t); math.Abs(got-c.want) > 1e-15 {
			t.Errorf("%s: AP = %v, want %v", c.name, got, c.want)
		}
	}
	// Neither map has an object: 1 by the stated convention.
	none := []int32{0, 0, 0}
	if got := MeanAP(none, none); got != 1 {
		t.Errorf("empty maps: mAP = %v, want 1", got)
	}
}

// mAP averages the ten levels 0.50..0.95: the partial case above has
// IoUs 3/4 and 1, so AP = 1 at 0.50..0.70 (five levels) and 1/3 at
// 0.75..0.95 (IoU 0.75 is not above 0.75), mean (5 + 5/3)/10 = 2/3.
func TestMeanAPHandWorked(t *testing.T) {
	truth := []int32{1, 1, 1, 1, 2, 2, 0, 0}
	pred := []int32{1, 1, 1, 0, 2, 2, 0, 0}
	if got, want := MeanAP(pred, truth), 2.0/3; math.Abs(got-want) > 1e-15 {
		t.Errorf("mAP = %v, want %v", got, want)
	}
	// At 0.5, AP equals TP/(TP+FP+FN) of MatchObjects.
	m := MatchObjects(pred, truth)
	if got, want := AveragePrecision(pred, truth, 0.5), float64(m.TP)/float64(m.TP+m.FP+m.FN); got != want {
		t.Errorf("AP(0.5) = %v, MatchObjects gives %v", got, want)
	}
}
