package outbox

import (
	"context"
	"path/filepath"
	"strconv"
	"testing"
	"time"
)

type wall struct{}

func (wall) Now() time.Time                         { return time.Now() }
func (wall) After(d time.Duration) <-chan time.Time { return time.After(d) }

// BenchmarkEnqueue measures the durable part of d.notify: one transition
// queued for one notifier in its own committed transaction (fsync included).
func BenchmarkEnqueue(b *testing.B) {
	db := openDB(b, filepath.Join(b.TempDir(), "ob.db"))
	defer db.Close()
	ob, _ := Open(db, wall{}, nil)
	ob.Add("hook", Policy{}, func(context.Context, []Entry) error { return nil })
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		if _, err := ob.Enqueue("hook", "k"+strconv.Itoa(i), make([]byte, 400)); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkDeliver measures enqueue plus delivery through the loop with a
// sender that always succeeds: the outbox's own cost per notification.
func BenchmarkDeliver(b *testing.B) {
	db := openDB(b, filepath.Join(b.TempDir(), "ob.db"))
	defer db.Close()
	ob, _ := Open(db, wall{}, nil)
	got := make(chan struct{}, 1)
	ob.Add("hook", Policy{MaxBatch: 1}, func(context.Context, []Entry) error { got <- struct{}{}; return nil })
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan struct{})
	go func() { ob.Run(ctx); close(done) }()
	for i := 0; b.Loop(); i++ {
		ob.Enqueue("hook", "k"+strconv.Itoa(i), make([]byte, 400))
		<-got
	}
	cancel()
	<-done
}
