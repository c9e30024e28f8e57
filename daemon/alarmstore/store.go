package alarmstore

import (
	"bytes"
	"encoding/binary"
	"encoding/gob"
	"errors"
	"fmt"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/alerts"
)

// Bucket names. Values are gob-encoded: gob tolerates fields added or
// removed later, so a newer daemon reads what an older one stored.
var (
	bucketState       = []byte("alarm-state")       // alarm name → alerts.Saved
	bucketHistory     = []byte("alarm-history")     // time (8 bytes BE ns) + counter (8 bytes BE) → alerts.Event
	bucketUndelivered = []byte("alarm-undelivered") // dedupe key → alerts.Event
)

// A Store is the bbolt-backed alerts.Store. It does not own the *bolt.DB.
type Store struct {
	db       *bolt.DB
	instance string // see instance.go; "" from Wrap
	renewed  string
}

// Open makes the buckets (when missing) in db, reads the file's instance
// id (making a new one for a new or restored file) and returns the store.
func Open(db *bolt.DB) (*Store, error) {
	s := &Store{db: db}
	err := db.Update(func(tx *bolt.Tx) error {
		for _, b := range [][]byte{bucketState, bucketHistory, bucketUndelivered, bucketHoldTests} {
			if _, err := tx.CreateBucketIfNotExists(b); err != nil {
				return err
			}
		}
		var err error
		s.instance, s.renewed, err = openInstance(tx)
		return err
	})
	if err != nil {
		return nil, fmt.Errorf("alarm store: %w", err)
	}
	return s, nil
}

func encode(v any) ([]byte, error) {
	var buf bytes.Buffer
	if err := gob.NewEncoder(&buf).Encode(v); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

func decode(b []byte, v any) error { return gob.NewDecoder(bytes.NewReader(b)).Decode(v) }

// Load returns every stored alarm state. A record that cannot be decoded is
// reported, not dropped: the caller fails to start rather than forget.
func (s *Store) Load() ([]alerts.Saved, error) {
	var out []alerts.Saved
	err := s.db.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketState).ForEach(func(k, v []byte) error {
			var st alerts.Saved
			if err := decode(v, &st); err != nil {
				return fmt.Errorf("alarm %q: stored state unreadable: %w", k, err)
			}
			out = append(out, st)
			return nil
		})
	})
	return out, err
}

// Save writes states and events in one transaction. Events of the history
// are never overwritten; events are also kept as undelivered.
func (s *Store) Save(states []alerts.Saved, events []alerts.Event) error {
	return s.db.Update(func(tx *bolt.Tx) error {
		sb, hb, ub := tx.Bucket(bucketState), tx.Bucket(bucketHistory), tx.Bucket(bucketUndelivered)
		for _, st := range states {
			b, err := encode(st)
			if err != nil {
				return err
			}
			if err := sb.Put([]byte(st.Alarm), b); err != nil {
				return err
			}
		}
		for _, ev := range events {
			b, err := encode(ev)
			if err != nil {
				return err
			}
			n, _ := hb.NextSequence()
			if err := hb.Put(historyKey(ev.At, n), b); err != nil {
				return err
			}
			if ev.DedupeKey != "" {
				if err := ub.Put([]byte(ev.DedupeKey), b); err != nil {
					return err
				}
			}
		}
		return nil
	})
}

func historyKey(at time.Time, n uint64) []byte {
	k := binary.BigEndian.AppendUint64(nil, uint64(at.UnixNano()))
	return binary.BigEndian.AppendUint64(k, n)
}

// Delivered forgets the undelivered copies of the events with these keys.
func (s *Store) Delivered(keys []string) error {
	return s.db.Update(func(tx *bolt.Tx) error {
		ub := tx.Bucket(bucketUndelivered)
		for _, k := range keys {
			if err := ub.Delete([]byte(k)); err != nil {
				return err
			}
		}
		return nil
	})
}

// Undelivered returns the events stored but not yet marked delivered, oldest first.
func (s *Store) Undelivered() ([]alerts.Event, error) {
	var out []alerts.Event
	err := s.db.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketUndelivered).ForEach(func(k, v []byte) error {
			var ev alerts.Event
			if err := decode(v, &ev); err != nil {
				return fmt.Errorf("undelivered event %q unreadable: %w", k, err)
			}
			out = append(out, ev)
			return nil
		})
	})
	sortEvents(out)
	return out, err
}

// History returns up to limit events (0: all) at or after from, oldest
// first, of one alarm ("" for every alarm).
func (s *Store) History(alarm string, from time.Time, limit int) ([]alerts.Event, error) {
	var out []alerts.Event
	var bad []error
	err := s.db.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketHistory)
		if b == nil {
			return nil // nothing stored yet
		}
		c := b.Cursor()
		k, v := c.First()
		if !from.IsZero() {
			k, v = c.Seek(historyKey(from, 0))
		}
		for ; k != nil; k, v = c.Next() {
			var ev alerts.Event
			if err := decode(v, &ev); err != nil {
				bad = append(bad, fmt.Errorf("history entry %x: %w", k, err))
				continue
			}
			if alarm != "" && ev.Alarm != alarm {
				continue
			}
			out = append(out, ev)
			if limit > 0 && len(out) >= limit {
				break
			}
		}
		return nil
	})
	return out, errors.Join(append([]error{err}, bad...)...)
}

// Wrap returns a store over db whose buckets Open has already made.
func Wrap(db *bolt.DB) *Store { return &Store{db: db} }
