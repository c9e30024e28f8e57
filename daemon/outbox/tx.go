package outbox

import (
	"errors"
	"fmt"
	"slices"
	"time"

	bolt "go.etcd.io/bbolt"
)

// A Tx queues entries and schedules reminders inside one bbolt write
// transaction, so that an alarm's stored state and its notifications are
// committed together or not at all.
type Tx struct {
	o       *Outbox
	tx      *bolt.Tx
	touched []string
}

// Update runs fn in its own write transaction and wakes the notifiers it
// touched once the transaction has committed.
func (o *Outbox) Update(fn func(*Tx) error) error {
	var t *Tx
	err := o.db.Update(func(btx *bolt.Tx) error {
		t = o.In(btx)
		return fn(t)
	})
	if err != nil {
		return fmt.Errorf("outbox: %w", err)
	}
	o.Wake(t.Touched()...)
	return nil
}

// In returns a Tx inside the caller's write transaction. After it commits
// the caller calls Wake with Touched, or the loops notice at their next
// scheduled look.
func (o *Outbox) In(btx *bolt.Tx) *Tx { return &Tx{o: o, tx: btx} }

// Touched lists the notifiers whose queues this Tx changed.
func (t *Tx) Touched() []string { return slices.Clone(t.touched) }

func (t *Tx) touch(name string) {
	if !slices.Contains(t.touched, name) {
		t.touched = append(t.touched, name)
	}
}

func (t *Tx) bucket(name string) (*notifier, *bolt.Bucket, error) {
	n := t.o.notifier(name)
	if n == nil {
		return nil, nil, fmt.Errorf("notifier %q is not registered", name)
	}
	b, err := notifierBucket(t.tx, name, false)
	return n, b, err
}

// Enqueue queues payload for the named notifier under a dedupe key. It
// returns false, and queues nothing, when the key is already queued or was
// delivered within the notifier's KeepDelivered.
func (t *Tx) Enqueue(name, key string, payload []byte) (bool, error) {
	n, b, err := t.bucket(name)
	if err != nil {
		return false, err
	}
	return t.enqueue(n, b, record{Key: key, Payload: payload}, t.o.clock.Now())
}

func (t *Tx) enqueue(n *notifier, b *bolt.Bucket, r record, now time.Time) (bool, error) {
	if r.Key == "" {
		return false, errors.New("an entry needs a dedupe key")
	}
	keys := b.Bucket(bucketKeys)
	if keys.Get([]byte(r.Key)) != nil {
		return false, nil
	}
	q := b.Bucket(bucketQueue)
	seq, err := q.NextSequence()
	if err != nil {
		return false, err
	}
	r.Created = now.UnixNano()
	r.Next = now.Add(n.policy.GroupWait).UnixNano()
	if err := q.Put(u64(seq), encodeRecord(r)); err != nil {
		return false, err
	}
	if err := keys.Put([]byte(r.Key), append([]byte{markPending}, u64(seq)...)); err != nil {
		return false, err
	}
	t.touch(n.name)
	return true, nil
}

// Enqueue queues one entry in its own transaction; see Tx.Enqueue.
func (o *Outbox) Enqueue(name, key string, payload []byte) (queued bool, err error) {
	err = o.Update(func(t *Tx) error {
		queued, err = t.Enqueue(name, key, payload)
		return err
	})
	return queued, err
}
