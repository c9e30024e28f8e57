package alarmstore

import (
	"errors"
	"fmt"

	bolt "go.etcd.io/bbolt"
)

// bucketBakes holds one record per bake, keyed by its id (a zero-padded
// number, so byte order is start order); the value is the daemon's JSON
// record, replaced as the bake goes on and final once it is done.
var bucketBakes = []byte("bakes")

// ErrNoBake reports an unknown bake id.
var ErrNoBake = errors.New("no such bake")

// NewBakeID reserves the next bake id.
func (s *Store) NewBakeID() (string, error) {
	var id string
	err := s.db.Update(func(tx *bolt.Tx) error {
		b, err := tx.CreateBucketIfNotExists(bucketBakes)
		if err != nil {
			return err
		}
		n, err := b.NextSequence()
		id = fmt.Sprintf("%06d", n)
		return err
	})
	return id, err
}

// PutBake stores (or replaces) the record of bake id.
func (s *Store) PutBake(id string, data []byte) error {
	return s.db.Update(func(tx *bolt.Tx) error {
		b, err := tx.CreateBucketIfNotExists(bucketBakes)
		if err != nil {
			return err
		}
		return b.Put([]byte(id), data)
	})
}

// Bake returns the record of bake id.
func (s *Store) Bake(id string) ([]byte, error) {
	var out []byte
	err := s.db.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketBakes)
		var v []byte
		if b != nil {
			v = b.Get([]byte(id))
		}
		if v == nil {
			return fmt.Errorf("bake %q: %w", id, ErrNoBake)
		}
		out = append([]byte(nil), v...)
		return nil
	})
	return out, err
}

// Bakes returns every stored bake record, oldest first. A store opened
// read-only that has never seen a bake has none.
func (s *Store) Bakes() ([][]byte, error) {
	var out [][]byte
	err := s.db.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketBakes)
		if b == nil {
			return nil
		}
		return b.ForEach(func(_, v []byte) error {
			out = append(out, append([]byte(nil), v...))
			return nil
		})
	})
	return out, err
}
