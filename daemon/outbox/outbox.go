package outbox

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"sync"
	"time"

	bolt "go.etcd.io/bbolt"
)

var (
	bucketRoot     = []byte("notify-outbox")
	bucketQueue    = []byte("q")
	bucketKeys     = []byte("k")
	bucketRemind   = []byte("r")
	bucketDamaged  = []byte("damaged")
	bucketParked   = []byte("parked")
	keyLastSuccess = []byte("last-success")
	keyLastParked  = []byte("last-parked")
)

// Index values in k/: 'p' + seq while queued, 'd' + delivery time, 'x' +
// seq once parked.
const (
	markPending   = 'p'
	markDelivered = 'd'
	markParked    = 'x'
)

// A Clock gives the outbox its times and waits; the daemon's clock fits.
type Clock interface {
	Now() time.Time
	After(d time.Duration) <-chan time.Time
}

// An Entry is one queued notification as a send function sees it.
type Entry struct {
	Seq      uint64    // queue position, FIFO per notifier
	Key      string    // dedupe key: one per alarm transition (and per reminder)
	Payload  []byte    // what the daemon queued, opaque here
	Created  time.Time // when it was queued
	Attempts int       // failed sends so far
	Reminder int       // 0 for a transition; n for the n-th reminder about it
	LastErr  string    // why the last send failed
}

// record is an Entry as stored in q/ (JSON).
type record struct {
	Key      string `json:"key"`
	Payload  []byte `json:"payload"`
	Created  int64  `json:"created_ns"`
	Next     int64  `json:"next_ns"` // not before this time
	Attempts int    `json:"attempts,omitempty"`
	Reminder int    `json:"reminder,omitempty"`
	LastErr  string `json:"last_err,omitempty"`
	Parked   int64  `json:"parked_ns,omitempty"` // in parked/: when it was parked
}

// A SendFunc delivers one batch (one message) and reports whether it
// arrived. It must return promptly once ctx is done.
type SendFunc func(ctx context.Context, batch []Entry) error

// Policy sets how one notifier's queue is sent.
type Policy struct {
	GroupWait     time.Duration // a new entry waits this long so others can join its send; 0 sends at once
	MinBackoff    time.Duration // wait after the first failure; doubled per failure; default 5s
	MaxBackoff    time.Duration // the cap; default 10 min
	MaxBatch      int           // entries per send; default 50; 1 sends one at a time
	KeepDelivered time.Duration // how long delivered keys are remembered; default 30 days
}

// Defaults for a Policy's zero fields.
const (
	DefaultMinBackoff    = 5 * time.Second
	DefaultMaxBackoff    = 10 * time.Minute
	DefaultMaxBatch      = 50
	DefaultKeepDelivered = 30 * 24 * time.Hour
)

func (p Policy) withDefaults() Policy {
	if p.MinBackoff <= 0 {
		p.MinBackoff = DefaultMinBackoff
	}
	if p.MaxBackoff < p.MinBackoff {
		p.MaxBackoff = max(DefaultMaxBackoff, p.MinBackoff)
	}
	if p.MaxBatch <= 0 {
		p.MaxBatch = DefaultMaxBatch
	}
	if p.KeepDelivered <= 0 {
		p.KeepDelivered = DefaultKeepDelivered
	}
	return p
}

// backoff is the wait after the n-th consecutive failure (n >= 1): the
// minimum doubled per failure, capped (exponential backoff, common practice).
func backoff(n int, p Policy) time.Duration {
	d := p.MinBackoff
	for i := 1; i < n && d < p.MaxBackoff; i++ {
		d *= 2
	}
	return min(d, p.MaxBackoff)
}

// notifier is one registered queue and its loop's state.
type notifier struct {
	name   string
	policy Policy
	send   SendFunc
	wake   chan struct{}
	log    *slog.Logger

	// splitThrough is owned by the notifier's serve loop: after a batch
	// was refused for good, entries up to this seq go one at a time, so
	// that only the one the receiver refuses is parked.
	splitThrough uint64

	mu     sync.Mutex
	health Health
}

// An Outbox holds every notifier's queue in one bbolt file.
type Outbox struct {
	db    *bolt.DB
	clock Clock
	log   *slog.Logger

	mu    sync.Mutex
	byKey map[string]*notifier
	order []*notifier
	ran   bool
}

// Open prepares the outbox buckets in db. Register notifiers with Add, then
// call Run.
func Open(db *bolt.DB, clock Clock, log *slog.Logger) (*Outbox, error) {
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	err := db.Update(func(tx *bolt.Tx) error {
		_, err := tx.CreateBucketIfNotExists(bucketRoot)
		return err
	})
	if err != nil {
		return nil, fmt.Errorf("outbox: %w", err)
	}
	return &Outbox{db: db, clock: clock, log: log, byKey: map[string]*notifier{}}, nil
}

// Add registers a notifier's queue, creating its buckets. Add every
// notifier before Run.
func (o *Outbox) Add(name string, p Policy, send SendFunc) error {
	o.mu.Lock()
	defer o.mu.Unlock()
	switch {
	case o.ran:
		return fmt.Errorf("outbox: add %q: the delivery loop is already running", name)
	case name == "":
		return errors.New("outbox: a notifier needs a name")
	case o.byKey[name] != nil:
		return fmt.Errorf("outbox: notifier %q added twice", name)
	}
	err := o.db.Update(func(tx *bolt.Tx) error {
		_, err := notifierBucket(tx, name, true)
		return err
	})
	if err != nil {
		return fmt.Errorf("outbox: add %q: %w", name, err)
	}
	n := &notifier{name: name, policy: p.withDefaults(), send: send, wake: make(chan struct{}, 1),
		log: o.log.With("notifier", name), health: Health{Notifier: name}}
	o.byKey[name] = n
	o.order = append(o.order, n)
	return nil
}

// notifierBucket returns notify-outbox/<name>, creating it and its
// sub-buckets when create is set (in a write tx).
func notifierBucket(tx *bolt.Tx, name string, create bool) (*bolt.Bucket, error) {
	root := tx.Bucket(bucketRoot)
	if root == nil {
		return nil, errors.New("the notify-outbox bucket is missing; open the outbox first")
	}
	if !create {
		if b := root.Bucket([]byte(name)); b != nil {
			return b, nil
		}
		return nil, fmt.Errorf("unknown notifier %q", name)
	}
	b, err := root.CreateBucketIfNotExists([]byte(name))
	if err != nil {
		return nil, err
	}
	for _, sub := range [][]byte{bucketQueue, bucketKeys, bucketRemind, bucketDamaged, bucketParked} {
		if _, err := b.CreateBucketIfNotExists(sub); err != nil {
			return nil, err
		}
	}
	return b, nil
}

func (o *Outbox) notifier(name string) *notifier {
	o.mu.Lock()
	defer o.mu.Unlock()
	return o.byKey[name]
}

// Wake tells the named notifiers' loops (all when none are named) that
// their queues changed. Update does it; callers of In do it after commit.
func (o *Outbox) Wake(names ...string) {
	o.mu.Lock()
	list := o.order
	if len(names) > 0 {
		list = nil
		for _, name := range names {
			if n := o.byKey[name]; n != nil {
				list = append(list, n)
			}
		}
	}
	o.mu.Unlock()
	for _, n := range list {
		select {
		case n.wake <- struct{}{}:
		default:
		}
	}
}

func u64(v uint64) []byte { return binary.BigEndian.AppendUint64(nil, v) }

func encodeRecord(r record) []byte {
	b, err := json.Marshal(r)
	if err != nil {
		panic(fmt.Sprintf("outbox: encoding a record cannot fail: %v", err))
	}
	return b
}

func decodeRecord(seq uint64, v []byte) (Entry, time.Time, error) {
	var r record
	if err := json.Unmarshal(v, &r); err != nil {
		return Entry{}, time.Time{}, fmt.Errorf("entry %d: %w", seq, err)
	}
	e := Entry{Seq: seq, Key: r.Key, Payload: r.Payload, Created: time.Unix(0, r.Created),
		Attempts: r.Attempts, Reminder: r.Reminder, LastErr: r.LastErr}
	return e, time.Unix(0, r.Next), nil
}
