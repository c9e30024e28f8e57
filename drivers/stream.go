package drivers

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"sync"
	"time"
)

// ErrLinkDown means the link's device or endpoint is not open: it failed and
// is waiting to be reopened. Gauges on it read as down meanwhile.
var ErrLinkDown = errors.New("link down")

// readSlice bounds each blocking read so that a cancelled context is noticed
// promptly even on ports whose reads cannot be interrupted.
const readSlice = 50 * time.Millisecond

// port is one open connection under a StreamLink.
type port interface {
	io.Writer
	// readSome waits up to wait for bytes; it returns (0, nil) when none came.
	readSome(buf []byte, wait time.Duration) (int, error)
	// discard drops bytes already received and not yet read.
	discard() error
	Close() error
}

// LinkStats are a link's health figures, for the daemon's metrics.
type LinkStats struct {
	Up         bool   // the device is open and the last exchange did not fail it
	Reconnects uint64 // successful reopens after a failure
	Timeouts   uint64 // exchanges that got no complete reply in time
	Failures   uint64 // times the link went down, plus failed reopen attempts
	LastError  string // the most recent failure, empty if none
}

// A StreamLink is a Link over a byte stream (a serial line or a TCP
// connection) that reopens itself. When an exchange fails because the device
// went away (hang-up, port closed, connection reset), the link closes it and
// refuses exchanges with ErrLinkDown until a backoff has passed; the next
// exchange after that reopens the device by its configured path. Exchanges run
// one at a time; the daemon's single goroutine per link is the expected user,
// and Stats may be called from any goroutine.
type StreamLink struct {
	name    string
	open    func(ctx context.Context) (port, error)
	timeout time.Duration
	// reopenAfter closes the link after this many timeouts in a row
	// (0: never); a TCP peer that rebooted leaves a silent half-open socket.
	reopenAfter int
	// ident, when set, is run on every open before the link counts as up
	// (see Identify).
	ident *identity

	mu    sync.Mutex // held for a whole exchange
	p     port
	dirty bool // the last exchange may have left bytes behind
	reconnector
}

func newStreamLink(name, target string, timeout time.Duration, b Backoff, log *slog.Logger,
	open func(context.Context) (port, error), ident *identity) *StreamLink {
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	if timeout <= 0 {
		timeout = DefaultTimeout
	}
	l := &StreamLink{name: name, open: open, timeout: timeout, ident: ident, reconnector: reconnector{
		target: target, backoff: b.withDefaults(), log: log.With("link", name, "device", target)}}
	l.mu.Lock()
	defer l.mu.Unlock()
	ctx, cancel := context.WithTimeout(context.Background(), l.timeout)
	defer cancel()
	_ = l.reopen(ctx) // a missing device at start is logged and retried, not fatal
	return l
}

// Name returns the link's config name.
func (l *StreamLink) Name() string { return l.name }

// Close closes the device. A later Exchange reopens it.
func (l *StreamLink) Close() error {
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.p == nil {
		return nil
	}
	err := l.p.Close()
	l.p = nil
	l.updateStats(func(s *LinkStats) { s.Up = false })
	return err
}

// Exchange writes req (when non-empty) and reads until the byte until, the
// link's timeout or the end of ctx, whichever comes first. The reply includes
// the terminator. On a timeout it returns the bytes received so far with an
// error wrapping ErrNoReply; when the device is gone it returns an error
// wrapping ErrLinkDown and the OS's error.
func (l *StreamLink) Exchange(ctx context.Context, req []byte, until byte) ([]byte, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if l.p == nil {
		if err := l.reopen(ctx); err != nil {
			return nil, err
		}
	}
	deadline := time.Now().Add(l.timeout)
	if d, ok := ctx.Deadline(); ok && d.Before(deadline) {
		deadline = d
	}
	if err := l.prepare(req); err != nil {
		return nil, l.fail(err)
	}
	return l.readUntil(ctx, until, deadline)
}

// Send writes req without waiting for a reply, for commands an instrument
// does not answer.
func (l *StreamLink) Send(ctx context.Context, req []byte) error {
	l.mu.Lock()
	defer l.mu.Unlock()
	if err := ctx.Err(); err != nil {
		return err
	}
	if l.p == nil {
		if err := l.reopen(ctx); err != nil {
			return err
		}
	}
	if err := l.prepare(req); err != nil {
		return l.fail(err)
	}
	return nil
}

func (l *StreamLink) prepare(req []byte) error {
	if l.dirty || len(req) > 0 {
		if err := l.p.discard(); err != nil {
			return err
		}
		l.dirty = false
	}
	if len(req) == 0 {
		return nil
	}
	_, err := l.p.Write(req)
	return err
}

func (l *StreamLink) readUntil(ctx context.Context, until byte, deadline time.Time) ([]byte, error) {
	var reply []byte
	var buf [256]byte
	start := time.Now()
	for {
		// The deadline is checked first: a context deadline is the
		// exchange's timeout (deadline includes it) and reads as no reply.
		wait := min(time.Until(deadline), readSlice)
		if wait <= 0 {
			return reply, l.timedOut(len(reply), until, time.Since(start).Round(time.Millisecond))
		}
		if err := ctx.Err(); err != nil {
			l.dirty = true
			return reply, err
		}
		n, err := l.p.readSome(buf[:], wait)
		if err != nil {
			return reply, l.fail(err)
		}
		reply = append(reply, buf[:n]...)
		if i := bytes.IndexByte(reply, until); i >= 0 {
			l.dirty = i+1 < len(reply)
			l.silent = 0
			return reply[:i+1], nil
		}
		if len(reply) > maxReply {
			l.dirty = true
			return reply, fmt.Errorf("%s: reply longer than %d bytes without the terminator %q: check the terminator and baud rate", l.target, maxReply, until)
		}
	}
}

func (l *StreamLink) timedOut(got int, until byte, waited time.Duration) error {
	l.dirty = true
	l.silent++
	l.updateStats(func(s *LinkStats) { s.Timeouts++ })
	err := fmt.Errorf("%s: %w within %s", l.target, ErrNoReply, waited)
	if got > 0 {
		err = fmt.Errorf("%s: %w: %d bytes arrived but no terminator %q within %s", l.target, ErrNoReply, got, until, waited)
	}
	if l.reopenAfter > 0 && l.silent >= l.reopenAfter {
		return l.fail(err)
	}
	return err
}
