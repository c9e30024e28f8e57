package outbox

import (
	"encoding/binary"
	"time"

	bolt "go.etcd.io/bbolt"
)

// Health is one notifier's delivery record, for metrics and the API.
type Health struct {
	Notifier    string
	Queued      int       // entries waiting in the outbox
	Damaged     int       // entries moved aside as unreadable
	Delivered   uint64    // successful sends since the outbox was opened
	Failed      uint64    // failed sends since the outbox was opened (a refused one included)
	Refused     uint64    // entries parked since the outbox was opened
	Parked      int       // parked entries kept now
	LastSuccess time.Time // last successful send, kept across restarts; zero if never
	LastParked  time.Time // when an entry was last parked, kept across restarts; zero if never
	LastError   string    // the last failure's reason; empty after a success
	Oldest      time.Time // when the oldest queued entry was queued; zero for an empty queue
}

// Health reports every registered notifier, in the order they were added.
func (o *Outbox) Health() ([]Health, error) {
	o.mu.Lock()
	list := append([]*notifier(nil), o.order...)
	o.mu.Unlock()
	out := make([]Health, len(list))
	for i, n := range list {
		n.mu.Lock()
		out[i] = n.health
		n.mu.Unlock()
	}
	err := o.db.View(func(tx *bolt.Tx) error {
		for i, n := range list {
			b, err := notifierBucket(tx, n.name, false)
			if err != nil {
				return err
			}
			q := b.Bucket(bucketQueue)
			out[i].Queued = q.Stats().KeyN
			out[i].Damaged = b.Bucket(bucketDamaged).Stats().KeyN
			if pb := b.Bucket(bucketParked); pb != nil {
				out[i].Parked = pb.Stats().KeyN
			}
			if v := b.Get(keyLastSuccess); len(v) == 8 && out[i].LastSuccess.IsZero() {
				out[i].LastSuccess = time.Unix(0, int64(binary.BigEndian.Uint64(v)))
			}
			if v := b.Get(keyLastParked); len(v) == 8 && out[i].LastParked.IsZero() {
				out[i].LastParked = time.Unix(0, int64(binary.BigEndian.Uint64(v)))
			}
			out[i].Oldest = oldest(q)
		}
		return nil
	})
	return out, err
}

// oldest is the creation time of the first decodable entry in q/: seqs
// grow with time, so it is the one that has waited longest.
func oldest(q *bolt.Bucket) time.Time {
	c := q.Cursor()
	for k, v := c.First(); k != nil; k, v = c.Next() {
		if len(k) != 8 {
			continue
		}
		if e, _, err := decodeRecord(binary.BigEndian.Uint64(k), v); err == nil {
			return e.Created
		}
	}
	return time.Time{}
}

// reportOrphans warns about entries queued for notifiers that are no
// longer registered: they are kept, and sent if the notifier comes back.
func (o *Outbox) reportOrphans() {
	_ = o.db.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketRoot).ForEachBucket(func(name []byte) error {
			if o.notifier(string(name)) != nil {
				return nil
			}
			b, _ := notifierBucket(tx, string(name), false)
			if q := b.Bucket(bucketQueue); q != nil && q.Stats().KeyN > 0 {
				o.log.Warn("notifications queued for a notifier no longer configured are kept; configure it again to send them",
					"notifier", string(name), "entries", q.Stats().KeyN)
			}
			return nil
		})
	})
}
