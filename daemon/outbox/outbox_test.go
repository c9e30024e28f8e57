package outbox

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"testing/synctest"
	"time"

	bolt "go.etcd.io/bbolt"
)

// bubbleClock is the real time package; inside a synctest bubble its time
// is the bubble's fake time.
type bubbleClock struct{}

func (bubbleClock) Now() time.Time                         { return time.Now() }
func (bubbleClock) After(d time.Duration) <-chan time.Time { return time.After(d) }

func openDB(t testing.TB, path string) *bolt.DB {
	t.Helper()
	db, err := bolt.Open(path, 0o600, &bolt.Options{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	return db
}

// sent is one call of a fake sender.
type sent struct {
	at   time.Time
	keys []string
}

// fakeSender records batches and fails while fail returns an error.
type fakeSender struct {
	mu    sync.Mutex
	calls []sent
	fail  func(call int) error
}

func (f *fakeSender) send(ctx context.Context, batch []Entry) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	keys := make([]string, len(batch))
	for i, e := range batch {
		keys[i] = e.Key
	}
	f.calls = append(f.calls, sent{at: time.Now(), keys: keys})
	if f.fail != nil {
		return f.fail(len(f.calls))
	}
	return nil
}

func (f *fakeSender) log() []sent {
	f.mu.Lock()
	defer f.mu.Unlock()
	return slices.Clone(f.calls)
}

// harness is an outbox with one fake-sent notifier "hook", running.
type harness struct {
	t      *testing.T
	db     *bolt.DB
	ob     *Outbox
	fake   *fakeSender
	start  time.Time
	cancel func()
	done   chan struct{}
}

func newHarness(t *testing.T, p Policy, fake *fakeSender) *harness {
	t.Helper()
	db := openDB(t, filepath.Join(t.TempDir(), "ob.db"))
	t.Cleanup(func() { db.Close() })
	ob, err := Open(db, bubbleClock{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := ob.Add("hook", p, fake.send); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(t.Context())
	h := &harness{t: t, db: db, ob: ob, fake: fake, start: time.Now(), cancel: cancel, done: make(chan struct{})}
	go func() { ob.Run(ctx); close(h.done) }()
	t.Cleanup(h.stop)
	return h
}

func (h *harness) stop() {
	h.cancel()
	<-h.done
}

func (h *harness) enqueue(key string) {
	h.t.Helper()
	ok, err := h.ob.Enqueue("hook", key, []byte("payload of "+key))
	if err != nil || !ok {
		h.t.Fatalf("enqueue %s: queued %v, err %v", key, ok, err)
	}
}

// at says when each call happened, in seconds after the harness started.
func (h *harness) describe() string {
	var b strings.Builder
	for _, c := range h.fake.log() {
		fmt.Fprintf(&b, "%gs%v ", c.at.Sub(h.start).Seconds(), c.keys)
	}
	return strings.TrimSpace(b.String())
}

func (h *harness) health() Health {
	h.t.Helper()
	hs, err := h.ob.Health()
	if err != nil || len(hs) != 1 {
		h.t.Fatalf("health: %v %v", hs, err)
	}
	return hs[0]
}

// Entries that arrive within the group wait of the first go in its send;
// one that arrives after that send waits for its own group.
func TestGroupWait(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		h := newHarness(t, Policy{GroupWait: 30 * time.Second}, &fakeSender{})
		h.enqueue("a")
		time.Sleep(10 * time.Second)
		h.enqueue("b")
		time.Sleep(30 * time.Second) // t = 40 s: a and b went at 30 s
		h.enqueue("c")
		time.Sleep(time.Minute)
		synctest.Wait()
		if got, want := h.describe(), "30s[a b] 70s[c]"; got != want {
			t.Errorf("sends: got %s, want %s", got, want)
		}
		if q := h.health().Queued; q != 0 {
			t.Errorf("queue after delivery: %d entries, want 0", q)
		}
	})
}

// A failing receiver is retried after 1, 2, 4, 4 s (doubling, capped), and
// the entry leaves the queue only after the send that worked.
func TestBackoffCapped(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		fake := &fakeSender{fail: func(call int) error {
			if call <= 4 {
				return errors.New("503 service unavailable")
			}
			return nil
		}}
		h := newHarness(t, Policy{MinBackoff: time.Second, MaxBackoff: 4 * time.Second}, fake)
		h.enqueue("a")
		synctest.Wait()
		if hl := h.health(); hl.Queued != 1 || hl.Failed != 1 || hl.LastError != "503 service unavailable" {
			t.Errorf("after first failure: %+v", hl)
		}
		time.Sleep(time.Minute)
		synctest.Wait()
		if got, want := h.describe(), "0s[a] 1s[a] 3s[a] 7s[a] 11s[a]"; got != want {
			t.Errorf("attempts: got %s, want %s", got, want)
		}
		hl := h.health()
		if hl.Queued != 0 || hl.Delivered != 1 || hl.Failed != 4 || hl.LastError != "" {
			t.Errorf("after success: %+v", hl)
		}
		if want := h.start.Add(11 * time.Second); !hl.LastSuccess.Equal(want) {
			t.Errorf("last success %v, want %v", hl.LastSuccess, want)
		}
	})
}

func TestBackoffTable(t *testing.T) {
	p := Policy{MinBackoff: 5 * time.Second, MaxBackoff: time.Minute}.withDefaults()
	want := []time.Duration{5 * time.Second, 10 * time.Second, 20 * time.Second, 40 * time.Second, time.Minute, time.Minute}
	for i, w := range want {
		if got := backoff(i+1, p); got != w {
			t.Errorf("backoff after %d failures: %s, want %s", i+1, got, w)
		}
	}
	if got := backoff(1000, p); got != time.Minute {
		t.Errorf("backoff after 1000 failures: %s, want the cap", got)
	}
}
