//go:build hugepages

package hugepages

// AtStart says whether cleave's computing commands call Advise at start:
// true in this build (tag hugepages).
const AtStart = true
