package store

import (
	"fmt"

	bolt "go.etcd.io/bbolt"
)

// MappedResident returns how many bytes of the store file, which bbolt
// maps into memory, are in RAM now. They count in the process's resident
// size (RSS) beside the Go heap: pages read recently (queries, merges of
// the open end) stay resident until the kernel needs the memory, so this
// grows with the data read, up to the file's size, while the heap stays
// flat. It is measured on Linux only.
func (db *DB) MappedResident() (int64, error) {
	var n int64
	err := db.bolt.View(func(tx *bolt.Tx) error { // a read transaction: no remap meanwhile
		var err error
		n, err = residentBytes(db.bolt.Info().Data, int(tx.Size()))
		return err
	})
	if err != nil {
		return 0, fmt.Errorf("resident size of %s: %w", db.path, err)
	}
	return n, nil
}
