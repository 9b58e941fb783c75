package score

// Covering is the segmentation covering of the truth by the prediction
// (Arbelaez, Maire, Fowlkes and Malik 2011, Contour detection and
// hierarchical image segmentation, IEEE TPAMI 33(5), sec. 3.2):
//
//	C(pred -> truth) = 1/N sum_{T in truth} |T| max_{P in pred} IoU(P, T),
//	IoU(P, T) = |P ∩ T| / |P ∪ T|,
//
// every label (0 included) being one region. It lies in (0, 1] for N > 0
// and is 1 exactly when the partitions are equal up to renaming. It is not
// symmetric: merging regions of the truth lowers it more than splitting.
// An empty map has covering 1. It panics if the lengths differ.
func Covering(pred, truth []int32) float64 { return Contingency(pred, truth).Covering() }

// Covering of the column labelling (the truth, b) by the row labelling (a);
// see the function Covering.
func (t *Table) Covering() float64 {
	if t.N == 0 {
		return 1
	}
	best := make([]float64, len(t.B))
	for _, c := range t.Cells {
		iou := float64(c.Count) / float64(t.RowSum[c.Row]+t.ColSum[c.Col]-c.Count)
		if iou > best[c.Col] {
			best[c.Col] = iou
		}
	}
	var sum float64
	for j, s := range t.ColSum {
		sum += float64(s) * best[j]
	}
	return sum / float64(t.N)
}
