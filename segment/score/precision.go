package score

// IoUThresholds returns the intersection-over-union levels 0.50, 0.55,
// ..., 0.95 over which MeanAP averages (Caicedo et al. 2019, Nature
// Methods: the counting metric of nucleus segmentation benchmarks).
func IoUThresholds() [10]float64 {
	return [10]float64{0.50, 0.55, 0.60, 0.65, 0.70, 0.75, 0.80, 0.85, 0.90, 0.95}
}

// AveragePrecision is the object-level precision at one IoU threshold t
// as defined for instance segmentation by Caicedo et al. (2019):
//
//	AP(t) = TP(t) / (TP(t) + FP(t) + FN(t)),
//
// where a predicted object and a true object match when their IoU is
// above t. For t >= 0.5 a match is unique (see MatchObjects), so no
// assignment step is needed; t below 0.5 panics (programmer error).
// Label 0 is background in both maps. When neither map has an object the
// value is 1 (nothing to find, nothing claimed). It panics if the lengths
// differ.
func AveragePrecision(pred, truth []int32, t float64) float64 {
	return Contingency(pred, truth).precisionAt([]float64{t})[0]
}

// MeanAP is AveragePrecision averaged over IoUThresholds(): mAP(0.5:0.95)
// of Caicedo et al. (2019).
func MeanAP(pred, truth []int32) float64 {
	return Contingency(pred, truth).MeanAP()
}

// MeanAP is MeanAP of the table's two label maps (A predicted, B truth).
func (t *Table) MeanAP() float64 {
	levels := IoUThresholds()
	ap := t.precisionAt(levels[:])
	var s float64
	for _, v := range ap {
		s += v
	}
	return s / float64(len(ap))
}

// precisionAt returns AP(t) for each threshold of ts (each >= 0.5).
func (t *Table) precisionAt(ts []float64) []float64 {
	for _, th := range ts {
		if !(th >= 0.5 && th < 1) {
			panic("score: IoU threshold outside [0.5, 1)")
		}
	}
	nPred, nTruth := t.objects()
	// IoU of every candidate pair: only cells with IoU > 0.5 can match at
	// any threshold in range.
	var ious []float64
	for _, c := range t.Cells {
		if t.A[c.Row] == 0 || t.B[c.Col] == 0 {
			continue
		}
		union := t.RowSum[c.Row] + t.ColSum[c.Col] - c.Count
		if 2*c.Count > union {
			ious = append(ious, float64(c.Count)/float64(union))
		}
	}
	out := make([]float64, len(ts))
	for k, th := range ts {
		tp := 0
		for _, v := range ious {
			if v > th {
				tp++
			}
		}
		den := nPred + nTruth - tp // TP + FP + FN
		if den == 0 {
			out[k] = 1
		} else {
			out[k] = float64(tp) / float64(den)
		}
	}
	return out
}
