//go:build unix

package mapped

import (
	"os"
	"syscall"
)

// mapFile maps the first size bytes of f read-only, or returns nil if the
// system refuses (the reader then uses ReadAt).
func mapFile(f *os.File, size int64) []byte {
	if size <= 0 || size != int64(int(size)) {
		return nil
	}
	m, err := syscall.Mmap(int(f.Fd()), 0, int(size), syscall.PROT_READ, syscall.MAP_SHARED)
	if err != nil {
		return nil
	}
	return m
}

func unmapFile(m []byte) error { return syscall.Munmap(m) }
