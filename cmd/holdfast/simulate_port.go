package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
)

// linkPort makes path a symbolic link to the pseudo-terminal slave, so the
// daemon's config can name a fixed device, and holds a lock beside it
// (".NAME.lock", see portLock) while simulate runs. A second simulate on
// the same path is refused by the lock. A symlink left by a simulate that
// did not exit cleanly (its lock file is there but free, or its target is
// gone) is replaced, even when its pseudo-terminal number has been handed
// out again; a symlink to something that exists that no simulate made, or
// any other file, is refused, so nothing is lost. The returned func
// removes the link, if it still points at slave, and the lock.
func linkPort(path, slave string, stdout io.Writer) (func() error, error) {
	lock, err := lockPort(filepath.Join(filepath.Dir(path), "."+filepath.Base(path)+".lock"), path)
	if err != nil {
		return nil, err
	}
	unlink, err := makeLink(path, slave, lock.existed, stdout)
	if err != nil {
		return nil, errors.Join(err, lock.release())
	}
	return func() error { return errors.Join(unlink(), lock.release()) }, nil
}

// makeLink makes path a link to slave, replacing a stale link: one a dead
// simulate left (stale true) or one whose target is gone.
func makeLink(path, slave string, stale bool, stdout io.Writer) (func() error, error) {
	fi, err := os.Lstat(path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
	case err != nil:
		return nil, fmt.Errorf("--pty %s: %w", path, err)
	case fi.Mode()&fs.ModeSymlink == 0:
		return nil, fmt.Errorf("--pty %s: a %s is there, not a symlink; refusing to replace it (remove it yourself or choose another path)", path, fileKind(fi))
	default:
		old, _ := os.Readlink(path)
		if _, err := os.Stat(path); err == nil && !stale {
			return nil, fmt.Errorf("--pty %s: already links to %s, which exists, and no holdfast simulate made it; remove the link or choose another path", path, old)
		}
		fmt.Fprintf(stdout, "replacing %s, a stale link to %s\n", path, old)
	}
	// Make the link beside path and rename it over: a reader never sees
	// path missing or half made.
	tmp := filepath.Join(filepath.Dir(path), "."+filepath.Base(path)+".tmp"+strconv.Itoa(os.Getpid()))
	os.Remove(tmp)
	if err := os.Symlink(slave, tmp); err != nil {
		return nil, fmt.Errorf("--pty %s: cannot make the link in %s: %w", path, filepath.Dir(path), errors.Unwrap(err))
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return nil, fmt.Errorf("--pty %s: %w", path, err)
	}
	return func() error {
		if target, err := os.Readlink(path); err != nil || target != slave {
			return nil // replaced or removed by someone else: theirs now
		}
		if err := os.Remove(path); err != nil {
			return fmt.Errorf("remove --pty link: %w", err)
		}
		return nil
	}, nil
}

func fileKind(fi fs.FileInfo) string {
	switch {
	case fi.IsDir():
		return "directory"
	case fi.Mode()&fs.ModeDevice != 0:
		return "device"
	case fi.Mode().IsRegular():
		return "regular file"
	}
	return "file"
}
