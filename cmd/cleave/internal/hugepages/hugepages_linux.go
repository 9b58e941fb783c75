//go:build linux

package hugepages

import (
	"runtime"
	"syscall"
	"unsafe"
)

// reserve is the span of heap address space advised for transparent huge
// pages. It is virtual: nothing is touched, so it costs no memory until
// the heap grows into it.
const reserve = 256 << 20

// hugePage is the x86-64 and arm64 (4 KiB base page) huge page size.
const hugePage = 2 << 20

// Advise asks Linux to back the first 256 MiB of the Go heap with
// transparent huge pages (madvise MADV_HUGEPAGE; the kernel's default THP
// mode "madvise" grants them only on request). cleave's numeric arrays
// (graph weights, eigensolver blocks) are large and touched once soon
// after allocation, so with 4 KiB pages a solve pays a page fault per
// 4 KiB of fresh memory; with 2 MiB pages one per 2 MiB. DEVELOPERS.md,
// "Measured choices", gives the measurement behind it.
//
// It allocates one large block (fresh from the OS, so untouched), advises
// its 2 MiB-aligned interior and drops it, and a collection returns the
// block to the heap at once, so that the runtime hands the same address
// range to the allocations that follow; the advice stays with the
// mapping. (Without the collection the block lives until the first
// automatic one, later allocations take fresh addresses and the advice is
// mostly lost.) It changes only how memory is backed, never what it
// holds; if the kernel refuses (THP disabled or unsupported) nothing
// changes.
func Advise() {
	advise := func() {
		b := make([]byte, reserve)
		p := uintptr(unsafe.Pointer(unsafe.SliceData(b)))
		off := int((p+hugePage-1)&^(hugePage-1) - p)
		_ = syscall.Madvise(b[off:off+reserve-hugePage], syscall.MADV_HUGEPAGE)
	}
	advise()
	runtime.GC() // return the block to the heap for reuse
}
