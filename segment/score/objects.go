package score

// ObjectMatch counts objects found and missed when predicted objects are
// paired with true ones. TP is the number of matched pairs, FP the predicted
// objects left unmatched, FN the true objects left unmatched;
//
//	Precision = TP/(TP+FP), Recall = TP/(TP+FN), F1 = 2TP/(2TP+FP+FN),
//
// and MeanIoU is the mean intersection over union of the matched pairs.
type ObjectMatch struct {
	TP, FP, FN                     int
	Precision, Recall, F1, MeanIoU float64
}

// MatchObjects pairs the objects of a predicted label map with those of a
// truth map. Label 0 is background in both; every other label is one
// object. A predicted object p and a true object t match when
//
//	IoU(p,t) = |p ∩ t| / |p ∪ t| > 0.5,
//
// the criterion common in cell-segmentation benchmarks (common practice; the
// 0.5 level is a convention, not a derived constant). The matching is unique
// by construction: IoU > 0.5 implies |p ∩ t| > |p ∪ t|/2 >= |p|/2, so t
// covers more than half of p and no second true object can; likewise for t.
// No assignment step is needed.
//
// Degenerate cases: a ratio whose denominator is zero is 1 when neither map
// has an object (nothing to find, nothing claimed) and 0 otherwise; MeanIoU
// is 1 when neither map has an object and 0 when objects exist but none
// matched. It panics if the lengths differ.
func MatchObjects(pred, truth []int32) ObjectMatch {
	t := Contingency(pred, truth)
	var m ObjectMatch
	nPred, nTruth := t.objects()
	var sumIoU float64
	for _, c := range t.Cells {
		if t.A[c.Row] == 0 || t.B[c.Col] == 0 {
			continue
		}
		union := t.RowSum[c.Row] + t.ColSum[c.Col] - c.Count
		if 2*c.Count > union { // IoU > 0.5, exact in integers
			m.TP++
			sumIoU += float64(c.Count) / float64(union)
		}
	}
	m.FP = nPred - m.TP
	m.FN = nTruth - m.TP
	empty := nPred == 0 && nTruth == 0
	m.Precision = ratio(m.TP, m.TP+m.FP, empty)
	m.Recall = ratio(m.TP, m.TP+m.FN, empty)
	m.F1 = ratio(2*m.TP, 2*m.TP+m.FP+m.FN, empty)
	switch {
	case m.TP > 0:
		m.MeanIoU = sumIoU / float64(m.TP)
	case empty:
		m.MeanIoU = 1
	}
	return m
}

func ratio(num, den int, empty bool) float64 {
	if den == 0 {
		if empty {
			return 1
		}
		return 0
	}
	return float64(num) / float64(den)
}

// objects counts the non-zero labels of the table's two maps.
func (t *Table) objects() (nA, nB int) {
	for _, l := range t.A {
		if l != 0 {
			nA++
		}
	}
	for _, l := range t.B {
		if l != 0 {
			nB++
		}
	}
	return nA, nB
}
