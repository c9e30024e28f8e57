package outbox

import (
	"encoding/binary"
	"encoding/json"
	"errors"
	"time"

	bolt "go.etcd.io/bbolt"
)

// Permanent reports whether err says the receiver will never take the
// batch as it is: some error in its chain has a Permanent method that
// returns true (notify.StatusError does for an HTTP 4xx other than 408 and
// 429). Sending it again would only block the queue behind it.
func Permanent(err error) bool {
	var p interface{ Permanent() bool }
	return errors.As(err, &p) && p.Permanent()
}

// A Parked entry is one the receiver refused for good. It is kept, with
// the refusal, under parked/ for the notifier's KeepDelivered, and its key
// stays known, so the same transition is not queued again.
type Parked struct {
	Entry
	At     time.Time // when it was parked
	Reason string    // the receiver's refusal
}

// park moves one entry from q/ to parked/ with the reason, marks its key
// parked and records the time, in tx.
func park(tx *bolt.Tx, name string, e Entry, reason string, now time.Time) error {
	b, err := notifierBucket(tx, name, false)
	if err != nil {
		return err
	}
	q := b.Bucket(bucketQueue)
	v := q.Get(u64(e.Seq))
	if v == nil {
		return nil // gone already
	}
	var r record
	if err := json.Unmarshal(v, &r); err != nil {
		return err
	}
	r.Attempts++
	r.LastErr, r.Parked = reason, now.UnixNano()
	return errors.Join(
		b.Bucket(bucketParked).Put(u64(e.Seq), encodeRecord(r)),
		q.Delete(u64(e.Seq)),
		b.Bucket(bucketKeys).Put([]byte(e.Key), append([]byte{markParked}, u64(e.Seq)...)),
		b.Put(keyLastParked, u64(uint64(now.UnixNano()))),
	)
}

// Parked lists the named notifier's parked entries, oldest first.
// Entries that cannot be decoded are skipped (they stay stored).
func (o *Outbox) Parked(name string) ([]Parked, error) {
	var out []Parked
	err := o.db.View(func(tx *bolt.Tx) error {
		b, err := notifierBucket(tx, name, false)
		if err != nil {
			return err
		}
		pb := b.Bucket(bucketParked)
		if pb == nil {
			return nil
		}
		return pb.ForEach(func(k, v []byte) error {
			if len(k) != 8 {
				return nil
			}
			var r record
			if json.Unmarshal(v, &r) != nil {
				return nil
			}
			e, _, _ := decodeRecord(binary.BigEndian.Uint64(k), v)
			out = append(out, Parked{Entry: e, At: time.Unix(0, r.Parked), Reason: r.LastErr})
			return nil
		})
	})
	return out, err
}

// pruneParked forgets parked entries parked before cut, and their keys.
func pruneParked(b *bolt.Bucket, cut int64) error {
	pb := b.Bucket(bucketParked)
	if pb == nil {
		return nil
	}
	var old [][]byte
	var keys []string
	c := pb.Cursor()
	for k, v := c.First(); k != nil; k, v = c.Next() {
		var r record
		if json.Unmarshal(v, &r) == nil && r.Parked < cut {
			old = append(old, append([]byte(nil), k...))
			keys = append(keys, r.Key)
		}
	}
	for i, k := range old {
		if err := errors.Join(pb.Delete(k), b.Bucket(bucketKeys).Delete([]byte(keys[i]))); err != nil {
			return err
		}
	}
	return nil
}
