//go:build !linux || nohugepages

package hugepages

// Advise does nothing where transparent huge pages cannot be requested
// with madvise, or in a build with the tag nohugepages (for comparing the
// two: testdata/hugepages/compare.sh).
func Advise() {}
