//go:build unix

package drivers

import (
	"errors"
	"fmt"
	"os"

	"golang.org/x/sys/unix"
)

// lockPort takes an advisory exclusive lock on the serial device, held
// until the returned file is closed. The serial library's TIOCEXCL already
// refuses a second opener, but not one with CAP_SYS_ADMIN (root; tty_ioctl(2)),
// so a probe run as root would share the line with a running daemon and
// garble both exchanges. Every holdfast process takes this lock.
func lockPort(device string) (*os.File, error) {
	f, err := os.OpenFile(device, os.O_RDONLY|unix.O_NOCTTY|unix.O_NONBLOCK, 0)
	if err != nil {
		return nil, err
	}
	if err := unix.Flock(int(f.Fd()), unix.LOCK_EX|unix.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, unix.EWOULDBLOCK) {
			return nil, fmt.Errorf("%s is in use by another holdfast (a running daemon, probe or simulator); stop it or ask the daemon's API", device)
		}
		return nil, fmt.Errorf("lock %s: %w", device, err)
	}
	return f, nil
}
