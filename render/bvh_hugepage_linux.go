package render

import (
	"syscall"
	"unsafe"
)

// adviseHugePages asks Linux to back the memory of a large slice (the BVH
// nodes and leaf triangles) with 2 MiB transparent huge pages
// (madvise(2) MADV_HUGEPAGE; the kernel's default "madvise" mode gives
// them only to memory that asks). Incoherent rays touch nodes all over tens
// of megabytes, and with 4 KiB pages nearly every node load also misses the
// TLB. Call it before the memory is first written, so that the page faults
// take huge pages directly. Errors are ignored: the advice is optional.
func adviseHugePages[T any](s []T) {
	if len(s) == 0 {
		return
	}
	const page = 4096
	size := uintptr(len(s)) * unsafe.Sizeof(s[0])
	if size < 4<<20 {
		return // too small to hold a whole aligned huge page for sure
	}
	b := unsafe.Slice((*byte)(unsafe.Pointer(&s[0])), size)
	start := uintptr(unsafe.Pointer(&s[0]))
	lo := (start+page-1)&^(page-1) - start // madvise wants a page-aligned start
	_ = syscall.Madvise(b[lo:], 14)        // MADV_HUGEPAGE
}
