//go:build !linux

package drivers

import (
	"errors"
	"runtime"
)

// enableRS485 is only available where the kernel offers a serial RS-485 mode.
func enableRS485(device string) error {
	return errors.New(device + ": switching a port to RS-485 is not supported on " + runtime.GOOS + "; use an adapter with automatic direction control and rs485 off")
}
