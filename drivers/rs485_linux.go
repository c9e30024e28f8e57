package drivers

import (
	"fmt"
	"unsafe"

	"golang.org/x/sys/unix"
)

// serialRS485 mirrors struct serial_rs485 of linux/serial.h: flags, the
// delays before and after sending, and padding (layout and flag values from
// memory of the kernel header, not from a published table).
type serialRS485 struct {
	Flags           uint32
	DelayBeforeSend uint32
	DelayAfterSend  uint32
	AddressRecv     uint8
	AddressDest     uint8
	Padding0        [2]uint8
	Padding1        [4]uint32
}

const (
	serRS485Enabled   = 1 << 0
	serRS485RTSOnSend = 1 << 1
)

// enableRS485 switches the UART driver behind device to RS-485 mode, with
// RTS driving the transmitter while sending.
func enableRS485(device string) error {
	fd, err := unix.Open(device, unix.O_RDWR|unix.O_NOCTTY|unix.O_NONBLOCK|unix.O_CLOEXEC, 0)
	if err != nil {
		return fmt.Errorf("open %s: %w", device, err)
	}
	defer unix.Close(fd)
	conf := serialRS485{Flags: serRS485Enabled | serRS485RTSOnSend}
	_, _, errno := unix.Syscall(unix.SYS_IOCTL, uintptr(fd), unix.TIOCSRS485, uintptr(unsafe.Pointer(&conf)))
	if errno != 0 {
		return fmt.Errorf("%s: the port's driver has no RS-485 mode (%w); adapters with automatic direction control need rs485 off", device, errno)
	}
	return nil
}
