package affinity

import "math"

// maxExpArg bounds the exponent of stored weights: an edge whose kernel
// argument a exceeds it would weigh exp(-a) < exp(-86) ≈ 4.5e-38, within a
// factor of four of float32's smallest normal number (2^-126). Such edges
// are left out of the graph: they cannot change a degree at float32
// precision, and subnormal arithmetic is slow on common CPUs.
const maxExpArg = 86

// expNeg returns exp(-a) rounded to float32 for 0 <= a <= maxExpArg. The
// tests check it against math.Exp to 1e-7 relative (float32 itself
// resolves 6e-8).
//
// Range reduction as in Go's math.Exp and Cephes (Moshier 1989, Methods and
// Programs for Mathematical Functions): -a = k ln2 + r with integer k and
// |r| <= ln2/2, ln2 split in a high part with trailing zero bits and a low
// part so k ln2 is nearly exact. e^r is its Taylor polynomial of degree 9
// (truncation error below (ln2/2)^10/10! ≈ 7e-12), and 2^k is placed in the
// exponent bits. Everything runs in float64, which costs the same as
// float32 in scalar code and keeps the argument's rounding out of sight.
func expNeg(a float64) float32 {
	const (
		log2e = 1.44269504088896338700e+00
		ln2hi = 6.93147180369123816490e-01
		ln2lo = 1.90821492927058770002e-10
	)
	x := -a
	k := int64(x*log2e - 0.5) // round to nearest for x <= 0
	kf := float64(k)
	r := (x - kf*ln2hi) - kf*ln2lo
	p := 1 + r*(1+r*(1.0/2+r*(1.0/6+r*(1.0/24+r*(1.0/120+r*(1.0/720+r*(1.0/5040+r*(1.0/40320+r*(1.0/362880)))))))))
	return float32(p * math.Float64frombits(uint64(k+1023)<<52))
}
