package drivers

import (
	"context"
	"errors"
	"strings"
	"sync/atomic"
	"testing"
	"time"
)

// Identify's problems each name the field the config spells.
func TestIdentifyValidate(t *testing.T) {
	err := Identify{Expect: "(", Until: "ab", Timeout: -time.Second}.Validate()
	if err == nil {
		t.Fatal("Validate accepted a missing send, a bad pattern, a two-byte until and a negative timeout")
	}
	for _, want := range []string{"send: missing", "expect: error parsing regexp", "until: want exactly one byte", "timeout: must not be negative"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("Validate: %v\nlacks %q", err, want)
		}
	}
	if err := (SerialConfig{Device: "/dev/x", Identify: &Identify{Send: `WHO\r`}}).Validate(); err == nil ||
		!strings.Contains(err.Error(), "identify.expect: missing") {
		t.Errorf("SerialConfig.Validate with identify lacking expect: %v", err)
	}
	if err := (Identify{Send: `WHO\r`, Expect: `^ME$`, Until: `\r`}).Validate(); err != nil {
		t.Errorf("a good identify: %v", err)
	}
}

// Over a real serial line (a pty): an instrument that does not answer the
// identity question keeps the link down with ErrWrongInstrument and no
// gauge exchange is sent; once it answers rightly, the next open after the
// backoff identifies it and then, only then, the gauge's request goes out.
func TestIdentifyOnOpenOverPty(t *testing.T) {
	var answering atomic.Bool
	in := startInstrument(t, lineAnswer(func(req string) string {
		switch {
		case !answering.Load():
			return "" // silent
		case req == "WHO\r":
			return "ME bench-gauge 2\r\n"
		case req == "READ\r":
			return "4.5E-03\r\n"
		}
		return "??\r\n"
	}))
	l, err := OpenSerial(SerialConfig{Name: "bench", Device: in.path(), Timeout: 150 * time.Millisecond,
		Backoff:  Backoff{Min: 20 * time.Millisecond, Max: 40 * time.Millisecond},
		Identify: &Identify{Send: `WHO\r`, Expect: `^ME bench-gauge \d+$`}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	if st := l.Stats(); st.Up || !strings.Contains(st.LastError, "identity check failed: no reply to") {
		t.Errorf("after opening to a silent instrument: %+v, want down, no reply to the identity question", st)
	}
	_, err = l.Exchange(context.Background(), []byte("READ\r"), '\n')
	if !IsLinkDown(err) || !errors.Is(err, ErrWrongInstrument) {
		t.Errorf("Exchange on an unidentified link: %v, want link down and ErrWrongInstrument", err)
	}
	for _, r := range in.requests() {
		if string(r) != "WHO\r" {
			t.Errorf("the instrument heard %q before it was identified; want only WHO\\r", r)
		}
	}
	answering.Store(true)
	var reply []byte
	for end := time.Now().Add(5 * time.Second); time.Now().Before(end); time.Sleep(10 * time.Millisecond) {
		if reply, err = l.Exchange(context.Background(), []byte("READ\r"), '\n'); err == nil {
			break
		}
	}
	if err != nil || string(reply) != "4.5E-03\r\n" {
		t.Fatalf("after the instrument answers: %q, %v", reply, err)
	}
	if st := l.Stats(); !st.Up || st.Reconnects != 1 {
		t.Errorf("stats %+v, want up after one reconnect", st)
	}
	h := in.requests()
	if n := len(h); n < 2 || string(h[n-2]) != "WHO\r" || string(h[n-1]) != "READ\r" {
		t.Errorf("requests %q, want the identity question just before the first reading", h)
	}
}
