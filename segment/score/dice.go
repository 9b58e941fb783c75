package score

import "fmt"

// Dice compares the foregrounds (label != 0) of a prediction P and a truth T:
//
//	dice = 2|P ∩ T| / (|P| + |T|)   (Dice 1945, Ecology 26),
//	iou  = |P ∩ T| / |P ∪ T|        (Jaccard 1912),
//
// related by dice = 2 iou / (1 + iou). When both foregrounds are empty they
// agree perfectly and both are 1. It panics if the lengths differ.
func Dice(pred, truth []int32) (dice, iou float64) {
	if len(pred) != len(truth) {
		panic(fmt.Sprintf("score: label maps of different lengths %d and %d", len(pred), len(truth)))
	}
	var np, nt, both int64
	for k, p := range pred {
		fp, ft := p != 0, truth[k] != 0
		if fp {
			np++
		}
		if ft {
			nt++
		}
		if fp && ft {
			both++
		}
	}
	if np+nt == 0 {
		return 1, 1
	}
	return 2 * float64(both) / float64(np+nt), float64(both) / float64(np+nt-both)
}
