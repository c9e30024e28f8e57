package drivers

import (
	"bytes"
	"errors"
	"io"
	"log"
	"log/slog"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/creack/pty"
	"golang.org/x/sys/unix"
)

// A fakeInstrument plays an instrument on the master side of a pty. answer
// gets the bytes received since the last answer; it returns the reply and
// true once a complete request is there, or false to wait for more bytes.
type fakeInstrument struct {
	t      *testing.T
	master *os.File
	slave  *os.File // held open so the master never reads EIO before the link opens
	answer func(req []byte) ([]byte, bool)
	pace   time.Duration // pause between reply bytes, as a slow instrument
	done   chan struct{}
	mu     sync.Mutex
	heard  [][]byte
}

func startInstrument(t *testing.T, answer func([]byte) ([]byte, bool)) *fakeInstrument {
	t.Helper()
	return startPacedInstrument(t, 0, answer)
}

// startPacedInstrument starts an instrument that pauses pace between the
// bytes of each reply.
func startPacedInstrument(t *testing.T, pace time.Duration, answer func([]byte) ([]byte, bool)) *fakeInstrument {
	t.Helper()
	m, s, err := openPollablePty()
	if err != nil {
		t.Fatalf("pty.Open: %v", err)
	}
	f := &fakeInstrument{t: t, master: m, slave: s, answer: answer, pace: pace, done: make(chan struct{})}
	go f.serve()
	t.Cleanup(f.stop)
	return f
}

// path returns the slave's device path, which the link opens.
func (f *fakeInstrument) path() string { return f.slave.Name() }

// stop closes the pty, as unplugging a USB adapter would.
func (f *fakeInstrument) stop() {
	f.master.Close()
	f.slave.Close()
	<-f.done
}

func (f *fakeInstrument) requests() [][]byte {
	f.mu.Lock()
	defer f.mu.Unlock()
	return slicesClone(f.heard)
}

func slicesClone(b [][]byte) [][]byte { return append([][]byte(nil), b...) }

func (f *fakeInstrument) serve() {
	defer close(f.done)
	var pending []byte
	buf := make([]byte, 512)
	for {
		n, err := f.master.Read(buf)
		if err != nil {
			return // closed
		}
		pending = append(pending, buf[:n]...)
		reply, ok := f.answer(pending)
		if !ok {
			continue
		}
		f.mu.Lock()
		f.heard = append(f.heard, bytes.Clone(pending))
		f.mu.Unlock()
		pending = pending[:0]
		if !f.write(reply) {
			return
		}
	}
}

func (f *fakeInstrument) write(reply []byte) bool {
	if f.pace == 0 {
		_, err := f.master.Write(reply)
		return err == nil
	}
	for _, b := range reply {
		if _, err := f.master.Write([]byte{b}); err != nil {
			return false
		}
		<-time.After(f.pace)
	}
	return true
}

// lineAnswer answers each request ending in '\r' with reply(req).
func lineAnswer(reply func(req string) string) func([]byte) ([]byte, bool) {
	return func(p []byte) ([]byte, bool) {
		if len(p) == 0 || p[len(p)-1] != '\r' {
			return nil, false
		}
		return []byte(reply(string(p))), true
	}
}

// openPollablePty opens a pty whose master is non-blocking, so that closing
// it ends a pending Read (a blocking master would keep its reader stuck).
func openPollablePty() (master, slave *os.File, err error) {
	m, s, err := pty.Open()
	if err != nil {
		return nil, nil, err
	}
	defer m.Close()
	fd, err := unix.Dup(int(m.Fd()))
	if err == nil {
		err = unix.SetNonblock(fd, true)
	}
	if err != nil {
		s.Close()
		return nil, nil, err
	}
	return os.NewFile(uintptr(fd), "ptmx"), s, nil
}

func testLogger(t *testing.T) *slog.Logger {
	return slog.New(slog.NewTextHandler(t.Output(), &slog.HandlerOptions{Level: slog.LevelDebug}))
}

func openTestSerial(t *testing.T, device string, timeout time.Duration) *StreamLink {
	t.Helper()
	l, err := OpenSerial(SerialConfig{Name: "bench", Device: device, Baud: 9600, Timeout: timeout}, testLogger(t))
	if err != nil {
		t.Fatalf("OpenSerial: %v", err)
	}
	t.Cleanup(func() { l.Close() })
	return l
}

func isNoReply(err error) bool { return errors.Is(err, ErrNoReply) }

// symlinkTo points link at target, replacing any old link.
func symlinkTo(t *testing.T, target, link string) {
	t.Helper()
	_ = os.Remove(link)
	if err := os.Symlink(target, link); err != nil {
		t.Fatal(err)
	}
}

func tempLink(t *testing.T) string { return filepath.Join(t.TempDir(), "gauge-port") }

func discardLog() *log.Logger { return log.New(io.Discard, "", 0) }
