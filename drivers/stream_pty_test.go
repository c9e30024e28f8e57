package drivers

import (
	"context"
	"errors"
	"os"
	"strings"
	"testing"
	"time"
)

func TestSerialExchangeThroughPty(t *testing.T) {
	inst := startInstrument(t, lineAnswer(func(req string) string {
		if req == "SHOW\r" {
			return "v=1.23E-04\r\n"
		}
		return "what\r\n"
	}))
	l := openTestSerial(t, inst.path(), 300*time.Millisecond)
	got, err := l.Exchange(context.Background(), []byte("SHOW\r"), '\n')
	if err != nil {
		t.Fatalf("Exchange: %v", err)
	}
	if string(got) != "v=1.23E-04\r\n" {
		t.Errorf("reply = %q, want %q", got, "v=1.23E-04\r\n")
	}
	if s := l.Stats(); !s.Up || s.Timeouts != 0 {
		t.Errorf("stats = %+v, want up with no timeouts", s)
	}
}

func TestSerialSlowReplyArrivesInPieces(t *testing.T) {
	// 9 bytes over ~90 ms, read in many pieces.
	inst := startPacedInstrument(t, 10*time.Millisecond, lineAnswer(func(string) string { return "7.5E+02\r\n" }))
	l := openTestSerial(t, inst.path(), time.Second)
	got, err := l.Exchange(context.Background(), []byte("Q\r"), '\n')
	if err != nil || string(got) != "7.5E+02\r\n" {
		t.Fatalf("Exchange = %q, %v; want the whole line", got, err)
	}
}

func TestSerialPartialLineTimesOut(t *testing.T) {
	inst := startInstrument(t, lineAnswer(func(string) string { return "1.2E-0" })) // no terminator
	l := openTestSerial(t, inst.path(), 150*time.Millisecond)
	got, err := l.Exchange(context.Background(), []byte("Q\r"), '\n')
	if !isNoReply(err) {
		t.Fatalf("err = %v, want ErrNoReply", err)
	}
	if string(got) != "1.2E-0" {
		t.Errorf("partial reply = %q, want the bytes that came", got)
	}
	if !strings.Contains(err.Error(), "6 bytes arrived") {
		t.Errorf("error %q does not say how much arrived", err)
	}
	if s := l.Stats(); s.Timeouts != 1 || !s.Up {
		t.Errorf("stats = %+v, want 1 timeout and the link still up", s)
	}
}

// A late answer to one query must not be taken as the answer to the next.
func TestSerialStaleBytesAreDiscarded(t *testing.T) {
	n := 0
	inst := startInstrument(t, lineAnswer(func(string) string {
		n++
		if n == 1 {
			return "garbage-without-end"
		}
		return "second\r\n"
	}))
	l := openTestSerial(t, inst.path(), 150*time.Millisecond)
	if _, err := l.Exchange(context.Background(), []byte("A\r"), '\n'); !isNoReply(err) {
		t.Fatalf("first exchange err = %v, want ErrNoReply", err)
	}
	got, err := l.Exchange(context.Background(), []byte("B\r"), '\n')
	if err != nil || string(got) != "second\r\n" {
		t.Fatalf("second exchange = %q, %v; want %q", got, err, "second\r\n")
	}
}

func TestSerialMissingDeviceIsReportedNotFatal(t *testing.T) {
	dev := tempLink(t) // nothing there
	l := openTestSerial(t, dev, 100*time.Millisecond)
	_, err := l.Exchange(context.Background(), []byte("Q\r"), '\n')
	if !IsLinkDown(err) || !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("err = %v, want link down wrapping ErrNotExist", err)
	}
	if !strings.Contains(err.Error(), dev) {
		t.Errorf("error %q does not name the device", err)
	}
	if s := l.Stats(); s.Up || s.Failures == 0 {
		t.Errorf("stats = %+v, want down with a failure counted", s)
	}
}

// The device vanishes (pty closed, its symlink removed) and returns under the
// same path: polling must resume within 2 s without any restart.
func TestSerialDeviceVanishesAndReturns(t *testing.T) {
	dev := tempLink(t)
	answer := lineAnswer(func(string) string { return "ok\r\n" })
	first := startInstrument(t, answer)
	symlinkTo(t, first.path(), dev)
	l := openTestSerial(t, dev, 100*time.Millisecond)
	ctx := context.Background()
	if _, err := l.Exchange(ctx, []byte("Q\r"), '\n'); err != nil {
		t.Fatalf("before unplug: %v", err)
	}
	first.stop()
	os.Remove(dev)
	tick := time.NewTicker(20 * time.Millisecond)
	defer tick.Stop()
	sawDown := false
	for range 10 { // about 200 ms unplugged
		<-tick.C
		_, err := l.Exchange(ctx, []byte("Q\r"), '\n')
		sawDown = sawDown || IsLinkDown(err)
	}
	if !sawDown || l.Stats().Up {
		t.Fatalf("link never reported down; stats %+v", l.Stats())
	}
	second := startInstrument(t, answer)
	symlinkTo(t, second.path(), dev)
	back := time.Now()
	for time.Since(back) < 2*time.Second {
		<-tick.C
		if got, err := l.Exchange(ctx, []byte("Q\r"), '\n'); err == nil && string(got) == "ok\r\n" {
			if s := l.Stats(); !s.Up || s.Reconnects != 1 {
				t.Errorf("stats after return = %+v, want up with 1 reconnect", s)
			}
			return
		}
	}
	t.Fatalf("no reply within 2 s of the device returning; stats %+v", l.Stats())
}
