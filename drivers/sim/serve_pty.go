//go:build linux

package sim

import (
	"errors"
	"fmt"
	"os"

	"github.com/creack/pty"
	"golang.org/x/sys/unix"
)

// A PTY is a pseudo-terminal pair to serve instruments on: a Server reads
// and writes Master, and a client opens Name() as if it were a serial port.
// The slave side is held open for the PTY's life, so a client may close and
// reopen the port (as the daemon does after a failure) without the master
// seeing a hang-up, and it is put in raw mode, so that bytes pass unchanged
// whatever the client sets.
type PTY struct {
	Master *os.File // non-blocking: Close ends a pending Read
	slave  *os.File
}

// OpenPTY opens a pseudo-terminal pair.
func OpenPTY() (*PTY, error) {
	m, s, err := pty.Open()
	if err != nil {
		return nil, fmt.Errorf("open a pseudo-terminal: %w", err)
	}
	defer m.Close() // the non-blocking duplicate below replaces it
	if err := makeRaw(int(s.Fd())); err != nil {
		s.Close()
		return nil, fmt.Errorf("pseudo-terminal %s: raw mode: %w", s.Name(), err)
	}
	fd, err := unix.Dup(int(m.Fd()))
	if err == nil {
		if err = unix.SetNonblock(fd, true); err != nil {
			unix.Close(fd)
		}
	}
	if err != nil {
		s.Close()
		return nil, fmt.Errorf("pseudo-terminal %s: %w", s.Name(), err)
	}
	return &PTY{Master: os.NewFile(uintptr(fd), "ptmx"), slave: s}, nil
}

// Name returns the path of the slave side, the port clients open.
func (p *PTY) Name() string { return p.slave.Name() }

// Close closes both sides; a Server reading Master returns.
func (p *PTY) Close() error {
	return errors.Join(p.Master.Close(), p.slave.Close())
}

// makeRaw sets the terminal as cfmakeraw(3) describes: no input or output
// processing, no echo, no signals, 8-bit characters, reads return at once.
func makeRaw(fd int) error {
	t, err := unix.IoctlGetTermios(fd, unix.TCGETS)
	if err != nil {
		return err
	}
	t.Iflag &^= unix.IGNBRK | unix.BRKINT | unix.PARMRK | unix.ISTRIP | unix.INLCR | unix.IGNCR | unix.ICRNL | unix.IXON
	t.Oflag &^= unix.OPOST
	t.Lflag &^= unix.ECHO | unix.ECHONL | unix.ICANON | unix.ISIG | unix.IEXTEN
	t.Cflag &^= unix.CSIZE | unix.PARENB
	t.Cflag |= unix.CS8
	t.Cc[unix.VMIN], t.Cc[unix.VTIME] = 1, 0
	return unix.IoctlSetTermios(fd, unix.TCSETS, t)
}
