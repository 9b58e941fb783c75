// Package unionfind is the disjoint-set forest that segment and its
// sub-packages share (Tarjan 1975, "Efficiency of a good but not linear
// set union algorithm", J. ACM 22(2); path halving as in Tarjan and van
// Leeuwen 1984, J. ACM 31(2)). Each user links roots by its own rule (by
// size, by the higher peak, by the lower index), so the forest offers
// Find and leaves the linking to the caller: f[root] = other root.
package unionfind

// Forest holds the parent of every node 0..n-1; a root is its own
// parent. A caller may give a node a negative parent to mark it as not
// yet in the forest; Find must not be called on such a node.
type Forest []int32

// New returns a forest of n single-node trees.
func New(n int) Forest {
	f := make(Forest, n)
	for i := range f {
		f[i] = int32(i)
	}
	return f
}

// Union joins the trees of a and b under the smaller of their two
// roots, so the roots do not depend on the order of the unions or of
// their arguments.
func (f Forest) Union(a, b int32) {
	ra, rb := f.Find(a), f.Find(b)
	if ra < rb {
		f[rb] = ra
	} else if rb < ra {
		f[ra] = rb
	}
}

// Find returns the root of x's tree, halving the path on the way (every
// node visited is pointed at its grandparent), which keeps the trees
// shallow: with union by size or rank the amortized cost per operation
// is the inverse Ackermann function of n.
func (f Forest) Find(x int32) int32 {
	for f[x] != x {
		f[x] = f[f[x]]
		x = f[x]
	}
	return x
}
