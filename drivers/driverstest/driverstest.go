// Package driverstest checks drivers alike and gives tests a scripted Link.
package driverstest

import (
	"bytes"
	"context"
	"errors"
	"sync"
	"testing"
	"testing/synctest"
	"time"

	"holdfast/drivers"
)

// A Reply is one scripted answer of a Link.
type Reply struct {
	Data  []byte
	Err   error
	Block bool // wait until the exchange's context is done, as a silent instrument
}

// Link is a drivers.Link that answers each Exchange with the next scripted
// Reply (the last one repeats) and records what was sent. Safe for
// concurrent use.
type Link struct {
	mu      sync.Mutex
	replies []Reply
	sent    [][]byte
}

// NewLink returns a Link that gives the replies in order.
func NewLink(replies ...Reply) *Link { return &Link{replies: replies} }

// Lines returns a Link whose replies are the given strings.
func Lines(replies ...string) *Link {
	l := &Link{}
	for _, r := range replies {
		l.replies = append(l.replies, Reply{Data: []byte(r)})
	}
	return l
}

// Exchange records req and returns the next reply.
func (l *Link) Exchange(ctx context.Context, req []byte, until byte) ([]byte, error) {
	l.mu.Lock()
	l.sent = append(l.sent, bytes.Clone(req))
	var r Reply
	if len(l.replies) > 0 {
		r = l.replies[0]
		if len(l.replies) > 1 {
			l.replies = l.replies[1:]
		}
	}
	l.mu.Unlock()
	if r.Block {
		<-ctx.Done()
		return nil, ctx.Err()
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return bytes.Clone(r.Data), r.Err
}

// Sent returns every request so far.
func (l *Link) Sent() [][]byte {
	l.mu.Lock()
	defer l.mu.Unlock()
	return append([][]byte(nil), l.sent...)
}

// Conformance checks what every driver over a Link must do: read a good
// reply, return a *GaugeError for link failures, unreadable replies and
// cancellation, return promptly once its context is done, and leave no
// goroutine behind (each check runs in a synctest bubble, which fails on a
// leftover goroutine). good is a reply the driver accepts; bad one it must
// refuse.
func Conformance(t *testing.T, build func(drivers.Link) (drivers.Driver, error), good, bad []byte) {
	t.Helper()
	run := func(name string, link *Link, check func(*testing.T, drivers.Driver)) {
		t.Run(name, func(t *testing.T) {
			synctest.Test(t, func(t *testing.T) {
				d, err := build(link)
				if err != nil {
					t.Fatalf("build: %v", err)
				}
				check(t, d)
			})
		})
	}
	run("good reply", NewLink(Reply{Data: good}), func(t *testing.T, d drivers.Driver) {
		if _, err := d.Read(context.Background()); err != nil {
			t.Errorf("Read = %v, want a reading", err)
		}
	})
	run("link error", NewLink(Reply{Err: drivers.ErrNoReply}), func(t *testing.T, d drivers.Driver) {
		wantGaugeError(t, d, context.Background(), drivers.ErrNoReply)
	})
	run("bad reply", NewLink(Reply{Data: bad}), func(t *testing.T, d drivers.Driver) {
		wantGaugeError(t, d, context.Background(), nil)
	})
	run("cancelled", NewLink(Reply{Block: true}), func(t *testing.T, d drivers.Driver) {
		ctx, cancel := context.WithTimeout(context.Background(), time.Second)
		defer cancel()
		start := time.Now()
		wantGaugeError(t, d, ctx, context.DeadlineExceeded)
		if took := time.Since(start); took > time.Second+10*time.Millisecond {
			t.Errorf("Read returned %s after its context ended, want promptly", took-time.Second)
		}
	})
}

func wantGaugeError(t *testing.T, d drivers.Driver, ctx context.Context, target error) {
	t.Helper()
	_, err := d.Read(ctx)
	var ge *drivers.GaugeError
	if !errors.As(err, &ge) {
		t.Fatalf("Read error = %v (%T), want *drivers.GaugeError", err, err)
	}
	if target != nil && !errors.Is(err, target) {
		t.Errorf("Read error = %v, want it to wrap %v", err, target)
	}
}
