package drivers

import (
	"context"
	"strings"
	"testing"
	"time"
)

func ptyASCII(t *testing.T, inst *fakeInstrument, o ASCIIOptions) *ASCII {
	t.Helper()
	d, err := NewASCII(openTestSerial(t, inst.path(), 300*time.Millisecond), Options{Gauge: "foreline", ASCII: o})
	if err != nil {
		t.Fatalf("NewASCII: %v", err)
	}
	return d
}

// An invented handshake instrument: "SNAP.<addr>" is acknowledged with ACK,
// and the reading, "<value>|<state letter>", comes only after the host
// sends ENQ.
func TestASCIIHandshakeThroughPty(t *testing.T) {
	armed := false
	inst := startInstrument(t, func(p []byte) ([]byte, bool) {
		switch s := string(p); {
		case s == "SNAP.1\r\n":
			armed = true
			return []byte("\x06\r\n"), true
		case s == "\x05" && armed:
			armed = false
			return []byte("1.0E-03|v\r\n"), true
		case s == "\x05":
			return []byte("\x15\r\n"), true
		case strings.HasSuffix(s, "\n"):
			return []byte("\x15\r\n"), true
		}
		return nil, false
	})
	d := ptyASCII(t, inst, ASCIIOptions{
		Steps:   []Step{{Send: `SNAP.{addr}\r\n`, Expect: `^\x06$`}, {Send: `\x05`, Expect: `^(?P<value>[^|]+)\|(?P<status>[a-z])$`}},
		Address: "1",
		Status:  map[string]Status{"v": StatusOK, "u": StatusUnderRange},
	})
	for i := range 3 {
		r, err := d.Read(context.Background())
		if err != nil || r.Raw != 1e-3 || r.Status != StatusOK {
			t.Fatalf("read %d = %+v, %v; want 1.0E-03 ok", i, r, err)
		}
	}
}

// One query answered with three channels feeds three gauges.
func TestASCIIMultiGaugeThroughPty(t *testing.T) {
	inst := startInstrument(t, lineAnswer(func(string) string { return "[1]5.0E+02/fine [2]2.1E-02/fine [3]1.0E+03/over\r\n" }))
	d := ptyASCII(t, inst, ASCIIOptions{
		Steps:  []Step{{Send: `EACH\r`, Expect: `\[(?P<gauge>\d)\](?P<value>[^/]+)/(?P<status>[a-z]+)`}},
		Status: map[string]Status{"fine": StatusOK, "over": StatusOverRange},
	})
	all, err := d.ReadAll(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(all) != 3 || all["1"].Raw != 500 || all["2"].Raw != 2.1e-2 || all["3"].Status != StatusOverRange {
		t.Errorf("ReadAll = %+v, want channels 1..3 with 3 over-range", all)
	}
	if at := all["1"].At; at.IsZero() || at != all["3"].At {
		t.Errorf("readings of one exchange carry times %v and %v, want one shared time", at, all["3"].At)
	}
}

// Checksum errors and garbage are reported, and the next good reply reads.
// An invented bus instrument: "!<addr>/PEEK/<cs>" gets "!<addr>/<value>/<cs>",
// the sum8 covering everything after the '!'. By hand, with the ASCII codes
// of RFC 20: "01/PEEK/" = 30+31+2F+50+45+45+4B+2F = 0x1E4, so E4;
// "01/+2.0E-3/" = 30+31+2F+2B+32+2E+30+45+2D+33+2F = 0x21F, so 1F.
func TestASCIIBadRepliesThroughPty(t *testing.T) {
	replies := []string{"!01/+2.0E-3/00\r\n", "\x00\xff#!garbage\r\n", "!01/+2.0E-3/1F\r\n"}
	n := 0
	inst := startInstrument(t, lineAnswer(func(string) string { n++; return replies[(n-1)%len(replies)] }))
	d := ptyASCII(t, inst, ASCIIOptions{
		Steps:    []Step{{Send: `!{addr}/PEEK/{cs}\r`, Expect: `^!{addr}/(?P<value>[^/]+)/(?P<cs>[0-9A-F]{2})$`}},
		Address:  "01",
		Checksum: &Checksum{Kind: "sum8", Skip: 1},
	})
	for i, want := range []string{"checksum mismatch", "does not match", ""} {
		r, err := d.Read(context.Background())
		switch {
		case want == "" && (err != nil || r.Raw != 2e-3):
			t.Errorf("read %d = %+v, %v; want 2.0E-3", i, r, err)
		case want != "" && (err == nil || !strings.Contains(err.Error(), want)):
			t.Errorf("read %d: err = %v, want %q", i, err, want)
		}
	}
	if got := string(inst.requests()[0]); got != "!01/PEEK/E4\r" {
		t.Errorf("instrument heard %q, want !01/PEEK/E4\\r", got)
	}
}
