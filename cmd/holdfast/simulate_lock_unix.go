//go:build unix

package main

import (
	"errors"
	"fmt"
	"os"
	"syscall"
)

// portLock is the lock a running simulate holds on a file beside its
// --pty link. It is an flock(2) lock, so the kernel releases it when the
// process dies however it dies (SIGKILL included); a link whose lock is
// free was left by a simulate that is gone.
type portLock struct {
	f       *os.File
	existed bool // the lock file was there before: a simulate made the link
}

// lockPort takes the lock at path, failing at once if a live simulate
// holds it.
func lockPort(path, link string) (*portLock, error) {
	_, statErr := os.Stat(path)
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o600)
	if err != nil {
		return nil, fmt.Errorf("--pty %s: lock file: %w", link, err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, fmt.Errorf("--pty %s: another holdfast simulate serves it (it holds %s); stop that one or choose another path", link, path)
		}
		return nil, fmt.Errorf("--pty %s: lock %s: %w", link, path, err)
	}
	return &portLock{f: f, existed: statErr == nil}, nil
}

// release removes the lock file and lets the lock go.
func (l *portLock) release() error {
	return errors.Join(os.Remove(l.f.Name()), l.f.Close())
}
