//go:build unix

package csvdata

import (
	"os"
	"syscall"
	"unsafe"
)

// mapFile maps the regular file f into memory, read-only, and returns its
// text and the function that releases it; or nil for a file it cannot map
// (not a regular file, empty, or refused by the system), which is read
// instead.
func mapFile(f *os.File) (string, func() error) {
	info, err := f.Stat()
	if err != nil || !info.Mode().IsRegular() || info.Size() <= 0 || int64(int(info.Size())) != info.Size() {
		return "", nil
	}
	b, err := syscall.Mmap(int(f.Fd()), 0, int(info.Size()), syscall.PROT_READ, syscall.MAP_SHARED)
	if err != nil {
		return "", nil
	}
	return unsafe.String(&b[0], len(b)), func() error { return syscall.Munmap(b) }
}
