package store

import (
	"fmt"
	"io"

	bolt "go.etcd.io/bbolt"
)

// Backup writes a consistent copy of the whole file (every bucket, the
// daemon's included) to w while the store stays in use: it flushes, then
// copies in one read transaction (bbolt's Tx.WriteTo), so Append and Flush
// go on meanwhile and what they add after the copy began is not in it. It
// returns the bytes written. The copy is a valid store file as it is;
// Compact it to drop its free pages. A long copy holds a read transaction:
// a Flush that must grow the file's memory map waits for it (the map is
// sized to 256 MiB at Open, so that only happens past that size).
func (db *DB) Backup(w io.Writer) (int64, error) {
	if !db.readOnly {
		if err := db.Flush(); err != nil {
			return 0, fmt.Errorf("backup: %w", err)
		}
	}
	if db.isClosed() {
		return 0, ErrClosed
	}
	var n int64
	err := db.bolt.View(func(tx *bolt.Tx) error {
		var err error
		n, err = tx.WriteTo(w)
		return err
	})
	if err != nil {
		return n, fmt.Errorf("backup of %s: %w", db.path, err)
	}
	return n, nil
}
