//go:build !linux

package store

import "errors"

// residentBytes is not measured on this system.
func residentBytes(uintptr, int) (int64, error) {
	return 0, errors.New("resident size of a mapping is measured on Linux only")
}
