//go:build !hugepages

package hugepages

// AtStart says whether cleave's computing commands call Advise at start:
// false in the default build (the tag hugepages turns it on; see the
// package comment).
const AtStart = false
