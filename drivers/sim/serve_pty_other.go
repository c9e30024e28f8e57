//go:build !linux

package sim

import (
	"errors"
	"os"
)

// A PTY is a pseudo-terminal pair to serve instruments on; only Linux has
// one here.
type PTY struct {
	Master *os.File
}

// OpenPTY fails: serving on a pseudo-terminal is built for Linux only.
func OpenPTY() (*PTY, error) {
	return nil, errors.New("serving on a pseudo-terminal is built for Linux only; use a Linux machine or container")
}

// Name returns "".
func (p *PTY) Name() string { return "" }

// Close does nothing.
func (p *PTY) Close() error { return nil }
