//go:build unix

package eigen

import "syscall"

// cpuSeconds is the user plus system CPU time of the process so far
// (getrusage(2)): the benchmarks report it per operation beside the wall
// time, which other work on a shared machine inflates.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)/1e6
}
