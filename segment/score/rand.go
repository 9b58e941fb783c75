package score

import "math/big"

// PairCounts classifies the n(n-1)/2 unordered pairs of samples by whether
// the two labellings put them together: Same (together in both), OnlyA
// (together in a only), OnlyB (together in b only) and Neither. With
// choose2(x) = x(x-1)/2:
//
//	Same  = sum_ij choose2(n_ij)
//	OnlyA = sum_i choose2(a_i) - Same
//	OnlyB = sum_j choose2(b_j) - Same
//	Neither = choose2(n) - Same - OnlyA - OnlyB
//
// Counts are exact in uint64 for n < 2^32.
type PairCounts struct {
	Same, OnlyA, OnlyB, Neither uint64
}

func choose2(x int64) uint64 { return uint64(x) * uint64(x-1) / 2 }

// Pairs returns the pair counts of the table.
func (t *Table) Pairs() PairCounts {
	var same, sa, sb uint64
	for _, c := range t.Cells {
		same += choose2(c.Count)
	}
	for _, s := range t.RowSum {
		sa += choose2(s)
	}
	for _, s := range t.ColSum {
		sb += choose2(s)
	}
	p := PairCounts{Same: same, OnlyA: sa - same, OnlyB: sb - same}
	if t.N > 1 {
		p.Neither = choose2(t.N) - sa - sb + same
	}
	return p
}

// RandIndex is the share of sample pairs on which the two labellings agree
// (Rand 1971; Hubert and Arabie 1985):
//
//	RI = (Same + Neither) / choose2(n).
//
// With fewer than two samples there is no pair; RI is then 1, as in
// scikit-learn's rand_score.
func (t *Table) RandIndex() float64 {
	p := t.Pairs()
	agree := p.Same + p.Neither
	total := agree + p.OnlyA + p.OnlyB
	if total == 0 || agree == total {
		return 1
	}
	return float64(agree) / float64(total)
}

// ARI is the Rand index adjusted for chance (Hubert and Arabie 1985,
// Comparing partitions, J. Classification 2):
//
//	ARI = (sum_ij C(n_ij) - S_a S_b / C(n)) / ((S_a + S_b)/2 - S_a S_b / C(n)),
//	S_a = sum_i C(a_i), S_b = sum_j C(b_j), C(x) = x(x-1)/2,
//
// computed in the equivalent pair-count form
//
//	ARI = 2 (Same*Neither - OnlyA*OnlyB) /
//	      ((Same+OnlyA)(OnlyA+Neither) + (Same+OnlyB)(OnlyB+Neither))
//
// with exact integer arithmetic and one correctly rounded division. ARI is 1
// for identical partitions, about 0 for independent ones and can be
// negative. Degenerate cases follow scikit-learn's adjusted_rand_score: when
// no pair is together in one labelling only (OnlyA = OnlyB = 0), the
// partitions agree on every pair and ARI is 1; this covers identical
// partitions including both being one cluster or all singletons, and fewer
// than two samples.
func (t *Table) ARI() float64 {
	p := t.Pairs()
	if p.OnlyA == 0 && p.OnlyB == 0 {
		return 1
	}
	u := func(x uint64) *big.Int { return new(big.Int).SetUint64(x) }
	mul := func(x, y *big.Int) *big.Int { return new(big.Int).Mul(x, y) }
	add := func(x, y *big.Int) *big.Int { return new(big.Int).Add(x, y) }
	same, oa, ob, nei := u(p.Same), u(p.OnlyA), u(p.OnlyB), u(p.Neither)
	num := new(big.Int).Sub(mul(same, nei), mul(oa, ob))
	num.Lsh(num, 1)
	den := add(mul(add(same, oa), add(oa, nei)), mul(add(same, ob), add(ob, nei)))
	f, _ := new(big.Rat).SetFrac(num, den).Float64()
	return f
}

// RandIndex of the labellings a and b; see Table.RandIndex. It panics if
// the lengths differ.
func RandIndex(a, b []int32) float64 { return Contingency(a, b).RandIndex() }

// ARI is the adjusted Rand index of the labellings a and b (Hubert and
// Arabie 1985); see Table.ARI. It is symmetric in a and b. It panics if the
// lengths differ.
func ARI(a, b []int32) float64 { return Contingency(a, b).ARI() }
