package store

import (
	"encoding/binary"
	"fmt"
	"time"

	bolt "go.etcd.io/bbolt"
)

// bucketCursors holds, per reader of the store (a remote-write receiver),
// how far that reader has got in each series: cursors/<reader>/<series> =
// 8-byte big-endian ns of the last point it has taken.
var bucketCursors = []byte("cursors")

// Cursors returns how far reader has got in each series: the time of the
// last point it has taken. A series it has not started is absent. A store
// that never kept a cursor returns an empty map.
func (db *DB) Cursors(reader string) (map[string]time.Time, error) {
	if db.isClosed() {
		return nil, ErrClosed
	}
	out := map[string]time.Time{}
	err := db.bolt.View(func(tx *bolt.Tx) error {
		top := tx.Bucket(bucketCursors)
		if top == nil {
			return nil
		}
		b := top.Bucket([]byte(reader))
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			if len(v) != 8 {
				return fmt.Errorf("cursor %s/%s: %d bytes, want 8", reader, k, len(v))
			}
			out[string(k)] = time.Unix(0, int64(binary.BigEndian.Uint64(v))).UTC()
			return nil
		})
	})
	return out, err
}

// SetCursors records in one transaction how far reader has got in the
// given series; other series' cursors are left as they are.
func (db *DB) SetCursors(reader string, at map[string]time.Time) error {
	if db.isClosed() {
		return ErrClosed
	}
	if db.readOnly {
		return fmt.Errorf("set cursors of %s: the store is open read-only", reader)
	}
	if reader == "" {
		return fmt.Errorf("set cursors: empty reader name")
	}
	return db.bolt.Update(func(tx *bolt.Tx) error {
		top, err := tx.CreateBucketIfNotExists(bucketCursors)
		if err != nil {
			return err
		}
		b, err := top.CreateBucketIfNotExists([]byte(reader))
		if err != nil {
			return err
		}
		for series, t := range at {
			if series == "" {
				return fmt.Errorf("set cursors of %s: empty series name", reader)
			}
			var v [8]byte
			binary.BigEndian.PutUint64(v[:], uint64(clampNano(t)))
			if err := b.Put([]byte(series), v[:]); err != nil {
				return err
			}
		}
		return nil
	})
}
