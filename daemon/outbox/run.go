package outbox

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"slices"
	"sync"
	"time"

	bolt "go.etcd.io/bbolt"
)

// pruneEvery is how often delivered keys past KeepDelivered are forgotten.
const pruneEvery = time.Hour

// Run delivers every registered notifier's queue until ctx is done, one
// goroutine per notifier so a slow receiver delays no other, and returns
// once they have all stopped. A send cut short by ctx leaves its entries
// queued as they were.
func (o *Outbox) Run(ctx context.Context) {
	o.mu.Lock()
	o.ran = true
	list := slices.Clone(o.order)
	o.mu.Unlock()
	o.reportOrphans()
	var wg sync.WaitGroup
	for _, n := range list {
		wg.Go(func() { o.serve(ctx, n) })
	}
	wg.Wait()
}

func (o *Outbox) serve(ctx context.Context, n *notifier) {
	var pruned time.Time
	for ctx.Err() == nil {
		now := o.clock.Now()
		if pruned.IsZero() || now.Sub(pruned) >= pruneEvery {
			o.prune(n, now)
			pruned = now
		}
		remindAt, err := o.fireReminders(n, now)
		if err != nil {
			n.log.Error("reminders not queued; store writes failing", "err", err)
			remindAt = now.Add(n.policy.MinBackoff)
		}
		batch, dueAt, err := o.head(n, now)
		if err != nil {
			n.log.Error("outbox unreadable; retrying", "err", err)
			dueAt = now.Add(n.policy.MinBackoff)
		}
		if len(batch) > 0 {
			err := n.send(ctx, batch)
			if err != nil && ctx.Err() != nil {
				return // shutting down: not the receiver's failure
			}
			o.settle(n, batch, err, o.clock.Now())
			continue
		}
		at := earliest(earliest(dueAt, remindAt), pruned.Add(pruneEvery))
		select {
		case <-ctx.Done():
			return
		case <-n.wake:
		case <-o.clock.After(at.Sub(now)):
		}
	}
}

// earliest is the earlier of two times, where zero means never.
func earliest(a, b time.Time) time.Time {
	switch {
	case a.IsZero():
		return b
	case b.IsZero() || a.Before(b):
		return a
	}
	return b
}

// head returns the queue's first MaxBatch entries when any entry is due
// at now (so the queue goes out in order, and an entry that arrives
// within the group wait joins the send of the one before it), and the
// time the earliest entry is due (zero for an empty queue).
func (o *Outbox) head(n *notifier, now time.Time) (batch []Entry, dueAt time.Time, err error) {
	var damaged []uint64
	err = o.db.View(func(tx *bolt.Tx) error {
		b, err := notifierBucket(tx, n.name, false)
		if err != nil {
			return err
		}
		c := b.Bucket(bucketQueue).Cursor()
		for k, v := c.First(); k != nil; k, v = c.Next() {
			if len(k) != 8 {
				continue // not written by this package
			}
			seq := binary.BigEndian.Uint64(k)
			e, next, err := decodeRecord(seq, v)
			if err != nil {
				damaged = append(damaged, seq)
				continue
			}
			if dueAt.IsZero() || next.Before(dueAt) {
				dueAt = next
			}
			limit := n.policy.MaxBatch
			if len(batch) > 0 && batch[0].Seq <= n.splitThrough {
				limit = 1
			}
			if len(batch) < limit {
				batch = append(batch, e)
			}
		}
		return nil
	})
	if len(damaged) > 0 {
		err = o.moveDamaged(n, damaged)
	}
	if err != nil || dueAt.IsZero() || dueAt.After(now) {
		return nil, dueAt, err
	}
	return batch, dueAt, nil
}

// moveDamaged moves undecodable entries to damaged/, byte for byte.
func (o *Outbox) moveDamaged(n *notifier, seqs []uint64) error {
	return o.db.Update(func(tx *bolt.Tx) error {
		b, err := notifierBucket(tx, n.name, false)
		if err != nil {
			return err
		}
		q := b.Bucket(bucketQueue)
		for _, seq := range seqs {
			n.log.Error("unreadable outbox entry moved aside; it will not be sent", "seq", seq)
			if err := b.Bucket(bucketDamaged).Put(u64(seq), q.Get(u64(seq))); err != nil {
				return err
			}
			if err := q.Delete(u64(seq)); err != nil {
				return err
			}
		}
		return nil
	})
}

// settle records a send's outcome: a delivered batch leaves the queue and
// its keys are marked delivered in the same transaction; a batch the
// receiver refused for good is parked when it is one entry, and otherwise
// sent again one entry at a time at once, so that only the refused entry
// is parked; any other failure is retried after the backoff, and nothing
// queued goes out before that unless a new entry arrives.
func (o *Outbox) settle(n *notifier, batch []Entry, sendErr error, now time.Time) {
	var err error
	parked := 0
	switch {
	case sendErr == nil:
		err = o.db.Update(func(tx *bolt.Tx) error { return delivered(tx, n.name, batch, now) })
		if err == nil {
			n.log.Debug("notification delivered", "entries", len(batch), "first_key", batch[0].Key)
		}
	case Permanent(sendErr) && len(batch) == 1:
		err = o.db.Update(func(tx *bolt.Tx) error { return park(tx, n.name, batch[0], sendErr.Error(), now) })
		if err == nil {
			parked = 1
		}
		n.log.Error("notification refused by the receiver for good; parked, and the queue goes on",
			"key", batch[0].Key, "attempts", batch[0].Attempts+1, "err", sendErr)
	case Permanent(sendErr):
		n.splitThrough = batch[len(batch)-1].Seq
		n.log.Warn("notification batch refused for good; sending its entries one at a time to find the refused one",
			"entries", len(batch), "err", sendErr)
	default:
		wait := backoff(batch[0].Attempts+1, n.policy)
		err = o.db.Update(func(tx *bolt.Tx) error { return failed(tx, n.name, batch, sendErr, now.Add(wait)) })
		n.log.Warn("notification not delivered; will retry", "entries", len(batch),
			"attempts", batch[0].Attempts+1, "retry_in_seconds", wait.Seconds(), "err", sendErr)
	}
	n.mu.Lock()
	defer n.mu.Unlock()
	if sendErr == nil {
		n.health.Delivered++
		n.health.LastSuccess = now
		n.health.LastError = ""
	} else {
		n.health.Failed++
		n.health.LastError = sendErr.Error()
	}
	if parked > 0 {
		n.health.Refused += uint64(parked)
		n.health.LastParked = now
	}
	if err != nil {
		// The receiver has the batch (or not) but the store did not take the
		// outcome: the batch stays queued and goes again (at least once).
		n.log.Error("delivery outcome not stored; the batch will be sent again", "err", err)
	}
}

func delivered(tx *bolt.Tx, name string, batch []Entry, now time.Time) error {
	b, err := notifierBucket(tx, name, false)
	if err != nil {
		return err
	}
	mark := append([]byte{markDelivered}, u64(uint64(now.UnixNano()))...)
	for _, e := range batch {
		if err := b.Bucket(bucketQueue).Delete(u64(e.Seq)); err != nil {
			return err
		}
		if err := b.Bucket(bucketKeys).Put([]byte(e.Key), mark); err != nil {
			return err
		}
	}
	return b.Put(keyLastSuccess, u64(uint64(now.UnixNano())))
}

// failed counts the attempt on the batch's entries and holds every queued
// entry until next.
func failed(tx *bolt.Tx, name string, batch []Entry, sendErr error, next time.Time) error {
	b, err := notifierBucket(tx, name, false)
	if err != nil {
		return err
	}
	q := b.Bucket(bucketQueue)
	inBatch := map[uint64]bool{}
	for _, e := range batch {
		inBatch[e.Seq] = true
	}
	var puts [][2][]byte
	c := q.Cursor()
	for k, v := c.First(); k != nil; k, v = c.Next() {
		var r record
		if json.Unmarshal(v, &r) != nil {
			continue // moved aside by the next head
		}
		if inBatch[binary.BigEndian.Uint64(k)] {
			r.Attempts++
			r.LastErr = sendErr.Error()
		}
		r.Next = max(r.Next, next.UnixNano())
		puts = append(puts, [2][]byte{append([]byte(nil), k...), encodeRecord(r)})
	}
	for _, p := range puts {
		if err := q.Put(p[0], p[1]); err != nil {
			return err
		}
	}
	return nil
}

// prune forgets delivered keys, and parked entries, older than the
// notifier's KeepDelivered.
func (o *Outbox) prune(n *notifier, now time.Time) {
	cut := now.Add(-n.policy.KeepDelivered).UnixNano()
	err := o.db.Update(func(tx *bolt.Tx) error {
		b, err := notifierBucket(tx, n.name, false)
		if err != nil {
			return err
		}
		keys := b.Bucket(bucketKeys)
		var old [][]byte
		c := keys.Cursor()
		for k, v := c.First(); k != nil; k, v = c.Next() {
			if len(v) == 9 && v[0] == markDelivered && int64(binary.BigEndian.Uint64(v[1:])) < cut {
				old = append(old, append([]byte(nil), k...))
			}
		}
		for _, k := range old {
			if err := keys.Delete(k); err != nil {
				return err
			}
		}
		return pruneParked(b, cut)
	})
	if err != nil {
		n.log.Warn("delivered keys not pruned", "err", err)
	}
}
