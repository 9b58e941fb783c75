package eigen_test

import (
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/eigen"
)

// The three smallest eigenvalues of the normalized Laplacian of a path of
// five nodes with unit weights. For the path P_n they are 1 - cos(πk/(n-1)),
// k = 0..n-1 (Chung 1997, Spectral Graph Theory, example 1.4): 0,
// 1 - cos(π/4) = 0.2929 and 1 for n = 5. The second eigenvector, the
// Fiedler vector, changes sign once, at the middle node.
func ExampleSmallest() {
	var edges []affinity.Edge
	for i := 0; i+1 < 5; i++ {
		edges = append(edges, affinity.Edge{I: i, J: i + 1, W: 1})
	}
	g, err := affinity.FromEdges(5, edges)
	if err != nil {
		panic(err)
	}
	res, err := eigen.Smallest(g, 3, eigen.Options{})
	if err != nil {
		panic(err)
	}
	for _, v := range res.Values {
		fmt.Printf("%.4f\n", max(v, 0)) // the null value may round below 0
	}
	f := res.Vectors[1]
	fmt.Println(f[0]*f[4] < 0, math.Abs(f[2]) < 1e-9)
	// Output:
	// 0.0000
	// 0.2929
	// 1.0000
	// true true
}
