//go:build !linux

package main

// adviseHugePages is a no-op where transparent huge pages cannot be
// requested with madvise.
func adviseHugePages() {}
