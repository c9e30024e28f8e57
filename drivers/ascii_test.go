package drivers_test

import (
	"context"
	"math"
	"strings"
	"testing"

	"holdfast/drivers"
	"holdfast/drivers/driverstest"
)

func newASCII(t *testing.T, link drivers.Link, o drivers.ASCIIOptions) *drivers.ASCII {
	t.Helper()
	d, err := drivers.NewASCII(link, drivers.Options{Gauge: "foreline", ASCII: o})
	if err != nil {
		t.Fatalf("NewASCII: %v", err)
	}
	return d
}

// simpleExchange reads an invented instrument: "SHOW\r" gets
// "v=<value>;s=<state>", the state one of fine, under, over, broken.
var simpleExchange = drivers.ASCIIOptions{
	Steps: []drivers.Step{{Send: `SHOW\r`, Expect: `^v=(?P<value>[^;]*);s=(?P<status>\w+)$`}},
	Status: map[string]drivers.Status{"fine": drivers.StatusOK, "under": drivers.StatusUnderRange, "over": drivers.StatusOverRange,
		"broken": drivers.StatusSensorFault},
}

func TestASCIIConformance(t *testing.T) {
	driverstest.Conformance(t, func(l drivers.Link) (drivers.Driver, error) {
		return drivers.NewASCII(l, drivers.Options{Gauge: "foreline", ASCII: simpleExchange})
	}, []byte("v=1.0E-3;s=fine\r\n"), []byte("v=garbage;s=fine\r\n"))
}

func TestASCIIValuesAndStatuses(t *testing.T) {
	for _, c := range []struct {
		reply  string
		raw    float64
		status drivers.Status
	}{
		{"v=1.23E-04;s=fine\r\n", 1.23e-4, drivers.StatusOK},
		{"v= 7.5E+02;s=over\r\n", 750, drivers.StatusOverRange},
		{"v=5.0-4;s=fine\r\n", 5e-4, drivers.StatusOK},
		{"v=----;s=broken\r\n", math.NaN(), drivers.StatusSensorFault},
	} {
		t.Run(strings.TrimSpace(c.reply), func(t *testing.T) {
			link := driverstest.Lines(c.reply)
			r, err := newASCII(t, link, simpleExchange).Read(context.Background())
			if err != nil {
				t.Fatalf("Read: %v", err)
			}
			if r.Status != c.status || !sameFloat(r.Raw, c.raw) {
				t.Errorf("reading = %v %v, want %v %v", r.Raw, r.Status, c.raw, c.status)
			}
			if got := string(link.Sent()[0]); got != "SHOW\r" {
				t.Errorf("sent %q, want %q", got, "SHOW\r")
			}
		})
	}
}

func sameFloat(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }

func TestASCIIErrorsShowTheReply(t *testing.T) {
	for _, c := range []struct{ reply, want string }{
		{"HELLO\r\n", `reply "HELLO\r\n" does not match`},
		{"v=1.0E-3;s=weird\r\n", `status code "weird" is not in the status map`},
		{"\x15\r\n", "refused the command (NAK)"},
		{"v=0x1p-3;s=fine\r\n", `"0x1p-3" is not a number`},
	} {
		_, err := newASCII(t, driverstest.Lines(c.reply), simpleExchange).Read(context.Background())
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "foreline") {
			t.Errorf("reply %q: err = %v, want it to name the gauge and say %q", c.reply, err, c.want)
		}
	}
}

// A value field that prints a word instead of a number maps through status.
func TestASCIIWordInPlaceOfNumber(t *testing.T) {
	o := drivers.ASCIIOptions{
		Steps:  []drivers.Step{{Send: "SHOW\r", Expect: `^(?P<value>\S+)$`}},
		Status: map[string]drivers.Status{"asleep": drivers.StatusOff},
	}
	r, err := newASCII(t, driverstest.Lines("asleep\r\n"), o).Read(context.Background())
	if err != nil || r.Status != drivers.StatusOff || !math.IsNaN(r.Raw) {
		t.Fatalf("Read = %+v, %v; want off with no number", r, err)
	}
}

// An invented handshake instrument: "SNAP.<addr>" is acknowledged with
// ACK, and the reading, "<value>|<state letter>", follows the host's ENQ.
func TestASCIIHandshake(t *testing.T) {
	o := drivers.ASCIIOptions{
		Steps: []drivers.Step{
			{Send: `SNAP.{addr}\r\n`, Expect: `^\x06$`},
			{Send: `\x05`, Expect: `^(?P<value>[^|]+)\|(?P<status>[a-z])$`},
		},
		Address: "2",
		Status:  map[string]drivers.Status{"v": drivers.StatusOK},
	}
	link := driverstest.Lines("\x06\r\n", "6.5E-02|v\r\n")
	r, err := newASCII(t, link, o).Read(context.Background())
	if err != nil || r.Raw != 6.5e-2 || r.Status != drivers.StatusOK {
		t.Fatalf("Read = %+v, %v; want 6.5E-02 ok", r, err)
	}
	sent := link.Sent()
	if len(sent) != 2 || string(sent[0]) != "SNAP.2\r\n" || string(sent[1]) != "\x05" {
		t.Errorf("sent %q, want SNAP.2\\r\\n then ENQ", sent)
	}
}

func TestASCIISeveralGaugesInOneReply(t *testing.T) {
	o := drivers.ASCIIOptions{Steps: []drivers.Step{{Send: "EACH\r", Expect: `(?P<gauge>[a-z]):(?P<value>\S+)`}}, Channel: "b"}
	d := newASCII(t, driverstest.Lines("a:1.2E-3 b:4.0E-6 c:9.9E+2\r\n"), o)
	all, err := d.ReadAll(context.Background())
	if err != nil {
		t.Fatalf("ReadAll: %v", err)
	}
	want := map[string]float64{"a": 1.2e-3, "b": 4.0e-6, "c": 990}
	if len(all) != len(want) {
		t.Fatalf("ReadAll gave %d readings, want %d: %v", len(all), len(want), all)
	}
	for k, v := range want {
		if all[k].Raw != v {
			t.Errorf("channel %s = %v, want %v", k, all[k].Raw, v)
		}
	}
	r, err := d.Read(context.Background())
	if err != nil || r.Raw != 4.0e-6 {
		t.Errorf("Read (channel b) = %v, %v; want 4.0E-6", r.Raw, err)
	}
}

func TestASCIIPositionalKeys(t *testing.T) {
	o := drivers.ASCIIOptions{Steps: []drivers.Step{
		{Send: "FIRST\r", Expect: `^(?P<value>\S+)$`},
		{Send: "SECOND\r", Expect: `^(?P<value>\S+)$`, Gauge: "ion"},
	}}
	all, err := newASCII(t, driverstest.Lines("1E-3\r\n", "2E-7\r\n"), o).ReadAll(context.Background())
	if err != nil || all["1"].Raw != 1e-3 || all["ion"].Raw != 2e-7 {
		t.Fatalf("ReadAll = %v, %v; want keys 1 and ion", all, err)
	}
}
