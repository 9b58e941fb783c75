//go:build !linux

package hugepages

// Advise does nothing where transparent huge pages cannot be requested
// with madvise.
func Advise() {}
