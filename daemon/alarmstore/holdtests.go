package alarmstore

import (
	"fmt"
	"strconv"

	bolt "go.etcd.io/bbolt"
)

// bucketHoldTests holds one nested bucket per hold test, keyed by its id
// (a zero-padded number, so byte order is start order), with the report
// as "report.json" and the plot as "rise.svg".
var bucketHoldTests = []byte("hold-tests")

// NewHoldTestID reserves the next hold-test id.
func (s *Store) NewHoldTestID() (string, error) {
	var id string
	err := s.db.Update(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketHoldTests)
		n, err := b.NextSequence()
		if err != nil {
			return err
		}
		id = fmt.Sprintf("%06d", n)
		_, err = b.CreateBucket([]byte(id))
		return err
	})
	return id, err
}

// PutHoldTest stores (or replaces) the named file of hold test id.
func (s *Store) PutHoldTest(id, name string, data []byte) error {
	return s.db.Update(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketHoldTests).Bucket([]byte(id))
		if b == nil {
			return fmt.Errorf("hold test %s: %w", id, ErrNoHoldTest)
		}
		return b.Put([]byte(name), data)
	})
}

// HoldTest returns the named file of hold test id.
func (s *Store) HoldTest(id, name string) ([]byte, error) {
	var out []byte
	err := s.db.View(func(tx *bolt.Tx) error {
		top := tx.Bucket(bucketHoldTests)
		if top == nil || top.Bucket([]byte(id)) == nil {
			return fmt.Errorf("hold test %q: %w", id, ErrNoHoldTest)
		}
		v := top.Bucket([]byte(id)).Get([]byte(name))
		if v == nil {
			return fmt.Errorf("hold test %s has no %s yet", id, name)
		}
		out = append([]byte(nil), v...)
		return nil
	})
	return out, err
}

// HoldTestIDs lists the stored hold tests, oldest first.
func (s *Store) HoldTestIDs() ([]string, error) {
	var ids []string
	err := s.db.View(func(tx *bolt.Tx) error {
		top := tx.Bucket(bucketHoldTests)
		if top == nil {
			return nil
		}
		return top.ForEachBucket(func(k []byte) error {
			if _, err := strconv.Atoi(string(k)); err == nil {
				ids = append(ids, string(k))
			}
			return nil
		})
	})
	return ids, err
}

// ErrNoHoldTest reports an unknown hold-test id.
var ErrNoHoldTest = fmt.Errorf("no such hold test")
