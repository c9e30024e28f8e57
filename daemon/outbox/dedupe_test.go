package outbox

import (
	"context"
	"errors"
	"path/filepath"
	"testing"
	"testing/synctest"
	"time"

	bolt "go.etcd.io/bbolt"
)

// A key is queued once; once delivered it stays known after the file is
// closed and opened again, so the same transition is never sent twice.
func TestDedupeSurvivesReopen(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		path := filepath.Join(t.TempDir(), "ob.db")
		fake := &fakeSender{}
		run := func(keys ...string) (queued []bool) {
			db := openDB(t, path)
			defer db.Close()
			ob, err := Open(db, bubbleClock{}, nil)
			if err != nil {
				t.Fatal(err)
			}
			if err := ob.Add("hook", Policy{}, fake.send); err != nil {
				t.Fatal(err)
			}
			for _, k := range keys {
				ok, err := ob.Enqueue("hook", k, []byte(k))
				if err != nil {
					t.Fatal(err)
				}
				queued = append(queued, ok)
			}
			ctx, cancel := context.WithCancel(t.Context())
			done := make(chan struct{})
			go func() { ob.Run(ctx); close(done) }()
			synctest.Wait()
			cancel()
			<-done
			return queued
		}
		if got := run("x/raised", "x/raised"); got[0] != true || got[1] != false {
			t.Fatalf("first run queued %v, want [true false]", got)
		}
		if got := run("x/raised", "x/cleared"); got[0] != false || got[1] != true {
			t.Fatalf("second run queued %v, want [false true]", got)
		}
		var keys []string
		for _, c := range fake.log() {
			keys = append(keys, c.keys...)
		}
		if len(keys) != 2 || keys[0] != "x/raised" || keys[1] != "x/cleared" {
			t.Errorf("sent %v, want each key once: [x/raised x/cleared]", keys)
		}
	})
}

// After a failure the queue still goes out in the order it was queued,
// with entries that arrived meanwhile behind the old ones.
func TestOrderKeptAcrossFailures(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		down := true
		fake := &fakeSender{}
		fake.fail = func(int) error {
			if down {
				return errors.New("connection refused")
			}
			return nil
		}
		h := newHarness(t, Policy{MinBackoff: time.Second, MaxBackoff: 8 * time.Second, MaxBatch: 2}, fake)
		h.enqueue("1")
		synctest.Wait()
		h.enqueue("2")
		h.enqueue("3")
		time.Sleep(20 * time.Second)
		synctest.Wait()
		fake.mu.Lock()
		down = false
		fake.mu.Unlock()
		time.Sleep(time.Minute)
		synctest.Wait()
		calls := fake.log()
		var ok [][]string
		for _, c := range calls[len(calls)-2:] {
			ok = append(ok, c.keys)
		}
		if len(ok) != 2 || len(ok[0]) != 2 || ok[0][0] != "1" || ok[0][1] != "2" || ok[1][0] != "3" {
			t.Errorf("last two sends %v, want [[1 2] [3]]; all: %s", ok, h.describe())
		}
		for _, c := range calls {
			if c.keys[0] != "1" && c.at.Before(calls[len(calls)-2].at) {
				t.Errorf("an entry went before the head of the queue: %s", h.describe())
			}
		}
	})
}

// Run returns as soon as ctx is done, even mid-send, and the interrupted
// batch stays queued with its attempt not counted.
func TestShutdownMidSend(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		db := openDB(t, filepath.Join(t.TempDir(), "ob.db"))
		defer db.Close()
		ob, _ := Open(db, bubbleClock{}, nil)
		started := make(chan struct{})
		block := func(ctx context.Context, _ []Entry) error {
			close(started)
			<-ctx.Done()
			return ctx.Err()
		}
		if err := ob.Add("slow", Policy{}, block); err != nil {
			t.Fatal(err)
		}
		ob.Enqueue("slow", "k", nil)
		ctx, cancel := context.WithCancel(t.Context())
		done := make(chan struct{})
		go func() { ob.Run(ctx); close(done) }()
		<-started
		t0 := time.Now()
		cancel()
		<-done
		if d := time.Since(t0); d != 0 {
			t.Errorf("Run took %s of clock time to stop", d)
		}
		hs, _ := ob.Health()
		if hs[0].Queued != 1 || hs[0].Failed != 0 {
			t.Errorf("after shutdown: %+v, want 1 queued and no failure counted", hs[0])
		}
	})
}

// One receiver down does not hold up another notifier.
func TestNotifiersIndependent(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		db := openDB(t, filepath.Join(t.TempDir(), "ob.db"))
		defer db.Close()
		ob, _ := Open(db, bubbleClock{}, nil)
		bad := &fakeSender{fail: func(int) error { return errors.New("down") }}
		good := &fakeSender{}
		ob.Add("bad", Policy{}, bad.send)
		ob.Add("good", Policy{}, good.send)
		if err := ob.Add("good", Policy{}, good.send); err == nil {
			t.Error("adding a notifier twice: no error")
		}
		for _, n := range []string{"bad", "good"} {
			ob.Enqueue(n, "k", nil)
		}
		ctx, cancel := context.WithCancel(t.Context())
		done := make(chan struct{})
		go func() { ob.Run(ctx); close(done) }()
		time.Sleep(time.Hour)
		synctest.Wait()
		cancel()
		<-done
		hs, _ := ob.Health()
		if hs[0].Queued != 1 || hs[0].Delivered != 0 || hs[1].Queued != 0 || hs[1].Delivered != 1 {
			t.Errorf("health: %+v", hs)
		}
		// 5 s doubling to the 10 min cap within an hour: 0,5,15,35,75,155,315,635,1235,1835,2435,3035 s
		if n := len(bad.log()); n != 12 {
			t.Errorf("failing notifier tried %d times in an hour, want 12", n)
		}
	})
}

// An entry that cannot be decoded is moved aside byte for byte (never
// deleted) and the rest of the queue still goes out.
func TestDamagedEntryMovedAside(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		fake := &fakeSender{}
		h := newHarness(t, Policy{GroupWait: time.Second}, fake)
		h.enqueue("good")
		junk := []byte("{not json")
		h.db.Update(func(tx *bolt.Tx) error {
			return tx.Bucket(bucketRoot).Bucket([]byte("hook")).Bucket(bucketQueue).Put(u64(99), junk)
		})
		time.Sleep(2 * time.Second)
		synctest.Wait()
		if got := h.describe(); got != "1s[good]" {
			t.Errorf("sends %s, want 1s[good]", got)
		}
		var kept []byte
		h.db.View(func(tx *bolt.Tx) error {
			kept = append(kept, tx.Bucket(bucketRoot).Bucket([]byte("hook")).Bucket(bucketDamaged).Get(u64(99))...)
			return nil
		})
		if string(kept) != string(junk) {
			t.Errorf("damaged entry kept as %q, want %q", kept, junk)
		}
		if hl := h.health(); hl.Damaged != 1 || hl.Queued != 0 {
			t.Errorf("health %+v, want 1 damaged, 0 queued", hl)
		}
	})
}

// Delivered keys are forgotten after KeepDelivered, not before.
func TestPruneDeliveredKeys(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		h := newHarness(t, Policy{KeepDelivered: 3 * time.Hour}, &fakeSender{})
		h.enqueue("old")
		time.Sleep(2 * time.Hour)
		synctest.Wait()
		if ok, _ := h.ob.Enqueue("hook", "old", nil); ok {
			t.Fatal("a key delivered 2 h ago was queued again")
		}
		time.Sleep(2*time.Hour + time.Minute) // the hourly prune at 4 h sees it 4 h old
		synctest.Wait()
		if ok, _ := h.ob.Enqueue("hook", "old", nil); !ok {
			t.Error("a key delivered 4 h ago (keep 3 h) is still remembered")
		}
	})
}
