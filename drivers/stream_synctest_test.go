package drivers

import (
	"context"
	"errors"
	"log/slog"
	"sync"
	"testing"
	"testing/synctest"
	"time"
)

// memPort is an in-memory port: each write queues the scripted reply, or
// nothing when reply is nil (a silent instrument).
type memPort struct {
	mu      sync.Mutex
	reply   []byte
	pending []byte
	closed  bool
}

func (m *memPort) Write(b []byte) (int, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	m.pending = append(m.pending, m.reply...)
	return len(b), nil
}

func (m *memPort) readSome(buf []byte, wait time.Duration) (int, error) {
	m.mu.Lock()
	n := copy(buf, m.pending)
	m.pending = m.pending[n:]
	m.mu.Unlock()
	if n == 0 {
		<-time.After(wait) // the fake clock of the synctest bubble
	}
	return n, nil
}

func (m *memPort) discard() error { m.mu.Lock(); m.pending = nil; m.mu.Unlock(); return nil }
func (m *memPort) Close() error   { m.closed = true; return nil }

var errGone = errors.New("no such device")

func TestReopenBackoffDoublesToTheCap(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		start := time.Now()
		var attempts []time.Duration
		open := func(context.Context) (port, error) {
			attempts = append(attempts, time.Since(start))
			if len(attempts) <= 7 {
				return nil, errGone
			}
			return &memPort{reply: []byte("ok\n")}, nil
		}
		l := newStreamLink("bench", "/dev/fake", 100*time.Millisecond, Backoff{}, slog.New(slog.DiscardHandler), open, nil)
		tick := time.NewTicker(10 * time.Millisecond)
		defer tick.Stop()
		for l.Stats().Reconnects == 0 {
			<-tick.C
			_, err := l.Exchange(context.Background(), []byte("Q\n"), '\n')
			if err != nil && !IsLinkDown(err) {
				t.Fatalf("Exchange: %v, want link down while the device is away", err)
			}
		}
		// Open at 0, then after waits of 100, 200, 400, 800, 1600, 1600, 1600 ms
		// (DefaultMinBackoff doubling to DefaultMaxBackoff), each seen on the
		// first 10 ms tick at or after it is due.
		want := []time.Duration{0, 100, 300, 700, 1500, 3100, 4700, 6300}
		if len(attempts) != len(want) {
			t.Fatalf("open attempts at %v, want %d attempts", attempts, len(want))
		}
		for i, w := range want {
			if got := attempts[i]; got < w*time.Millisecond || got > w*time.Millisecond+10*time.Millisecond {
				t.Errorf("attempt %d at %v, want %v ms (within one 10 ms tick)", i, got, w)
			}
		}
		if s := l.Stats(); !s.Up || s.Failures != 7 {
			t.Errorf("stats = %+v, want up after 7 failed opens", s)
		}
	})
}

func TestExchangeTimesOutOnTheLinkTimeout(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &memPort{} // silent
		l := newStreamLink("bench", "/dev/fake", 300*time.Millisecond, Backoff{}, nil,
			func(context.Context) (port, error) { return p, nil }, nil)
		start := time.Now()
		_, err := l.Exchange(context.Background(), []byte("Q\n"), '\n')
		if !errors.Is(err, ErrNoReply) || IsLinkDown(err) {
			t.Fatalf("err = %v, want no reply with the link up", err)
		}
		if took := time.Since(start); took != 300*time.Millisecond {
			t.Errorf("gave up after %v, want the 300 ms link timeout", took)
		}
		ctx, cancel := context.WithTimeout(context.Background(), 120*time.Millisecond)
		defer cancel()
		start = time.Now()
		_, err = l.Exchange(ctx, []byte("Q\n"), '\n')
		if !errors.Is(err, ErrNoReply) || time.Since(start) != 120*time.Millisecond {
			t.Errorf("with a 120 ms context: %v after %v, want no reply at 120 ms", err, time.Since(start))
		}
		if s := l.Stats(); s.Timeouts != 2 || !s.Up {
			t.Errorf("stats = %+v, want 2 timeouts, still up", s)
		}
	})
}

func TestSilentTCPPeerIsReopened(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		opens := 0
		l := newStreamLink("converter", "192.0.2.1:4001", 100*time.Millisecond, Backoff{}, nil,
			func(context.Context) (port, error) { opens++; return &memPort{}, nil }, nil)
		l.reopenAfter = tcpSilentLimit
		var last error
		for range tcpSilentLimit {
			_, last = l.Exchange(context.Background(), []byte("Q\n"), '\n')
		}
		if !IsLinkDown(last) || !errors.Is(last, ErrNoReply) {
			t.Fatalf("after %d timeouts: %v, want the link taken down", tcpSilentLimit, last)
		}
		time.Sleep(DefaultMinBackoff) // fake clock: let the backoff pass
		l.Exchange(context.Background(), []byte("Q\n"), '\n')
		if opens != 2 {
			t.Errorf("opens = %d, want a reopen after the silent spell", opens)
		}
	})
}

func BenchmarkStreamLinkExchange(b *testing.B) {
	p := &memPort{reply: []byte("v=1.23E-04;s=fine\r\n")}
	l := newStreamLink("bench", "/dev/fake", time.Second, Backoff{}, nil, func(context.Context) (port, error) { return p, nil }, nil)
	req := []byte("SHOW\r")
	ctx := context.Background()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := l.Exchange(ctx, req, '\n'); err != nil {
			b.Fatal(err)
		}
	}
}
