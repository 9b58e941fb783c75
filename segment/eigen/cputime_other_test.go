//go:build !unix

package eigen

// cpuSeconds is 0 where getrusage(2) is missing; the benchmarks' cpu-s/op
// is then 0.
func cpuSeconds() float64 { return 0 }
