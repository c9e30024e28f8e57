package outbox

import (
	"encoding/json"
	"errors"
	"fmt"
	"strconv"
	"time"

	bolt "go.etcd.io/bbolt"
)

// reminder is a schedule in r/<alarm> (JSON): every Every, queue Payload
// again under Key + "#reminder-" + n.
type reminder struct {
	Key     string `json:"key"`
	Payload []byte `json:"payload"`
	Every   int64  `json:"every_ns"`
	Next    int64  `json:"next_ns"`
	Count   int    `json:"count,omitempty"`
}

// ReminderKey is the dedupe key of the n-th reminder about the transition
// whose key is key.
func ReminderKey(key string, n int) string { return key + "#reminder-" + strconv.Itoa(n) }

// Remind schedules reminders about an alarm for the named notifier: every
// interval from now, payload is queued again as reminder 1, 2, ... until
// StopReminder. Scheduling the same key again keeps the running schedule,
// so a transition reported twice (after a restart) does not reset it; a
// new key replaces it.
func (t *Tx) Remind(name, alarm, key string, payload []byte, every time.Duration) error {
	if every <= 0 {
		return fmt.Errorf("reminder interval must be positive, got %s", every)
	}
	_, b, err := t.bucket(name)
	if err != nil {
		return err
	}
	rb := b.Bucket(bucketRemind)
	if old := rb.Get([]byte(alarm)); old != nil {
		var r reminder
		if json.Unmarshal(old, &r) == nil && r.Key == key {
			return nil
		}
	}
	r := reminder{Key: key, Payload: payload, Every: int64(every), Next: t.o.clock.Now().Add(every).UnixNano()}
	t.touch(name)
	return rb.Put([]byte(alarm), mustJSON(r))
}

// StopReminder ends the named notifier's reminders about an alarm (it was
// acknowledged, cleared, shelved). Stopping none is not an error.
func (t *Tx) StopReminder(name, alarm string) error {
	_, b, err := t.bucket(name)
	if err != nil {
		return err
	}
	return b.Bucket(bucketRemind).Delete([]byte(alarm))
}

// fireReminders queues every reminder of n that is due at now and
// reschedules it one interval after now (missed reminders during downtime
// become one, not a burst). It returns the earliest next reminder, or the
// zero time when there is none.
func (o *Outbox) fireReminders(n *notifier, now time.Time) (next time.Time, err error) {
	err = o.db.Update(func(btx *bolt.Tx) error {
		t := o.In(btx)
		b, err := notifierBucket(btx, n.name, false)
		if err != nil {
			return err
		}
		rb := b.Bucket(bucketRemind)
		var bad [][]byte
		c := rb.Cursor()
		for k, v := c.First(); k != nil; k, v = c.Next() {
			var r reminder
			if err := json.Unmarshal(v, &r); err != nil || r.Every <= 0 {
				bad = append(bad, append([]byte(nil), k...))
				continue
			}
			if r.Next <= now.UnixNano() {
				r.Count++
				rec := record{Key: ReminderKey(r.Key, r.Count), Payload: r.Payload, Reminder: r.Count}
				if _, err := t.enqueue(n, b, rec, now); err != nil {
					return err
				}
				r.Next = now.Add(time.Duration(r.Every)).UnixNano()
				if err := c.Bucket().Put(k, mustJSON(r)); err != nil {
					return err
				}
			}
			if at := time.Unix(0, r.Next); next.IsZero() || at.Before(next) {
				next = at
			}
		}
		return moveBad(b, rb, bad, n)
	})
	return next, err
}

// moveBad moves reminder schedules that cannot be read to damaged/, byte
// for byte under "r/<alarm>", so the loop stops tripping on them and
// nothing stored is lost.
func moveBad(b, rb *bolt.Bucket, bad [][]byte, n *notifier) error {
	for _, k := range bad {
		n.log.Error("unreadable reminder schedule moved aside; reminders for this alarm stop until it is raised again", "alarm", string(k))
		err := errors.Join(b.Bucket(bucketDamaged).Put(append([]byte("r/"), k...), rb.Get(k)), rb.Delete(k))
		if err != nil {
			return err
		}
	}
	return nil
}

func mustJSON(v any) []byte {
	b, err := json.Marshal(v)
	if err != nil {
		panic(fmt.Sprintf("outbox: encoding cannot fail: %v", err))
	}
	return b
}
