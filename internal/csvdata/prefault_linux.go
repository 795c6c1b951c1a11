//go:build linux

package csvdata

import (
	"syscall"
	"unsafe"
)

// madvPopulateWrite is Linux's MADV_POPULATE_WRITE (5.14 and later).
const madvPopulateWrite = 23

// prefault makes the pages under s present and writable in one system
// call, rather than one page fault each as s is first written: on a
// machine whose faults are dear, it halves the cost of fresh memory.
// It changes no byte (the pages are the ones a write would bring in);
// where the system refuses, the pages fault in as they are written.
func prefault[T any](s []T) {
	if len(s) == 0 {
		return
	}
	page := uintptr(syscall.Getpagesize())
	start := uintptr(unsafe.Pointer(&s[0]))
	end := start + uintptr(len(s))*unsafe.Sizeof(s[0])
	start &^= page - 1 // the start of the page holding s's first byte, which a write to s faults in anyway
	syscall.Syscall(syscall.SYS_MADVISE, start, end-start, madvPopulateWrite)
}
