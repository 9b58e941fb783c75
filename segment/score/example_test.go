package score_test

import (
	"fmt"

	"github.com/cleave-seg/cleave/segment/score"
)

// The adjusted Rand index of two labellings of four pixels, the cases of
// scikit-learn's adjusted_rand_score documentation (recalled from memory;
// Debian python3-sklearn's sklearn.metrics.adjusted_rand_score gives
// 0.5714285714285714, 0.0 and 1.0 for them): one class split in two
// scores 0.57, every pixel apart against one class 0, a renumbering 1.
func ExampleARI() {
	fmt.Printf("%.2f\n", score.ARI([]int32{0, 0, 1, 2}, []int32{0, 0, 1, 1}))
	fmt.Printf("%.2f\n", score.ARI([]int32{0, 1, 2, 3}, []int32{0, 0, 0, 0}))
	fmt.Printf("%.2f\n", score.ARI([]int32{5, 5, 7, 7}, []int32{1, 1, 0, 0}))
	// Output:
	// 0.57
	// 0.00
	// 1.00
}
