package main

import (
	"runtime"
	"syscall"
	"unsafe"
)

// hugeReserve is the span of heap address space advised for transparent
// huge pages at start-up. It is virtual: nothing is touched, so it costs
// no memory until the heap grows into it.
const hugeReserve = 256 << 20

// hugePage is the x86-64 and arm64 (4 KiB base page) huge page size.
const hugePage = 2 << 20

// adviseHugePages asks Linux to back the first hugeReserve bytes of the
// Go heap with transparent huge pages (madvise MADV_HUGEPAGE; the kernel's
// default THP mode "madvise" grants them only on request). cleave's
// numeric arrays (graph weights, eigensolver blocks) are large and touched
// once soon after allocation, so with 4 KiB pages a solve pays a page
// fault per 4 KiB of fresh memory: on the 2-core VM where cleave is
// measured a fault cost about 11 µs, and the 29k-node pixel-graph solve
// took 22 thousand of them (0.2 s of system time). With this advice the
// same command took 1.5 thousand faults and about 0.17 s less wall time
// (testdata/eigen/scipy_compare.sh).
//
// It allocates one large block (fresh from the OS, so untouched), advises
// its 2 MiB-aligned interior and drops it; the runtime hands the same
// address range to later allocations, and the advice stays with the
// mapping. It changes only how memory is backed, never what it holds; if
// the kernel refuses (THP disabled or unsupported) nothing changes.
func adviseHugePages() {
	advise := func() {
		b := make([]byte, hugeReserve)
		p := uintptr(unsafe.Pointer(unsafe.SliceData(b)))
		off := int((p+hugePage-1)&^(hugePage-1) - p)
		_ = syscall.Madvise(b[off:off+hugeReserve-hugePage], syscall.MADV_HUGEPAGE)
	}
	advise()
	runtime.GC() // return the block to the heap for reuse
}
