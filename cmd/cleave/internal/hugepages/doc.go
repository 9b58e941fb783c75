// Package hugepages advises the Go heap for transparent huge pages at the
// start of the commands that build graphs and solve eigenproblems
// (Advise). The build tag nohugepages turns it off.
package hugepages
