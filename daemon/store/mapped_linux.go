//go:build linux

package store

import (
	"os"
	"syscall"
	"unsafe"
)

// residentBytes returns how many bytes of the size bytes mapped at addr
// (page-aligned) are in RAM, from mincore(2).
func residentBytes(addr uintptr, size int) (int64, error) {
	if size <= 0 {
		return 0, nil
	}
	page := os.Getpagesize()
	vec := make([]byte, (size+page-1)/page)
	_, _, errno := syscall.Syscall(syscall.SYS_MINCORE, addr, uintptr(size), uintptr(unsafe.Pointer(&vec[0])))
	if errno != 0 {
		return 0, errno
	}
	var n int64
	for _, v := range vec {
		n += int64(v & 1)
	}
	return n * int64(page), nil
}
