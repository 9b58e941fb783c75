// Package hugepages advises the Go heap for transparent huge pages
// (Advise). cleave's commands call it at start only in a build with the
// tag hugepages (AtStart): on this project's machine (kernel THP mode and
// defrag both "madvise") the advice no longer paid in any case measured,
// and on camera frames it cost a few tenths of a second of system time a
// run, the kernel faulting 2 MiB pages back in (zeroed, compacted for)
// after the runtime's scavenger had returned them (DEVELOPERS.md,
// "Measured choices"). testdata/hugepages/compare.sh compares the two
// builds.
package hugepages
