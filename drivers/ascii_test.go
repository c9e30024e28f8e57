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

var simpleExchange = drivers.ASCIIOptions{
	Steps:  []drivers.Step{{Send: `?P\r`, Expect: `^P=(?P<value>[^,]+),(?P<status>\d)$`}},
	Status: map[string]drivers.Status{"0": drivers.StatusOK, "1": drivers.StatusUnderRange, "2": drivers.StatusOverRange, "3": drivers.StatusSensorFault},
}

func TestASCIIConformance(t *testing.T) {
	driverstest.Conformance(t, func(l drivers.Link) (drivers.Driver, error) {
		return drivers.NewASCII(l, drivers.Options{Gauge: "foreline", ASCII: simpleExchange})
	}, []byte("P=1.0E-3,0\r\n"), []byte("P=garbage,0\r\n"))
}

func TestASCIIValuesAndStatuses(t *testing.T) {
	for _, c := range []struct {
		reply  string
		raw    float64
		status drivers.Status
	}{
		{"P=1.23E-04,0\r\n", 1.23e-4, drivers.StatusOK},
		{"P= 7.5E+02,2\r\n", 750, drivers.StatusOverRange},
		{"P=5.0-4,0\r\n", 5e-4, drivers.StatusOK},
		{"P=----,3\r\n", math.NaN(), drivers.StatusSensorFault},
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
			if got := string(link.Sent()[0]); got != "?P\r" {
				t.Errorf("sent %q, want %q", got, "?P\r")
			}
		})
	}
}

func sameFloat(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }

func TestASCIIErrorsShowTheReply(t *testing.T) {
	for _, c := range []struct{ reply, want string }{
		{"HELLO\r\n", `reply "HELLO\r\n" does not match`},
		{"P=1.0E-3,7\r\n", `status code "7" is not in the status map`},
		{"\x15\r\n", "refused the command (NAK)"},
		{"P=0x1p-3,0\r\n", `"0x1p-3" is not a number`},
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
		Steps:  []drivers.Step{{Send: "R\r", Expect: `^(?P<value>\S+)$`}},
		Status: map[string]drivers.Status{"OFF": drivers.StatusOff},
	}
	r, err := newASCII(t, driverstest.Lines("OFF\r\n"), o).Read(context.Background())
	if err != nil || r.Status != drivers.StatusOff || !math.IsNaN(r.Raw) {
		t.Fatalf("Read = %+v, %v; want off with no number", r, err)
	}
}

func TestASCIIHandshake(t *testing.T) {
	o := drivers.ASCIIOptions{
		Steps: []drivers.Step{
			{Send: `PV{addr}\r\n`, Expect: `^\x06$`},
			{Send: `\x05`, Expect: `^(?P<status>\d),(?P<value>\S+)$`},
		},
		Address: "2",
		Status:  map[string]drivers.Status{"0": drivers.StatusOK},
	}
	link := driverstest.Lines("\x06\r\n", "0,8.1E-02\r\n")
	r, err := newASCII(t, link, o).Read(context.Background())
	if err != nil || r.Raw != 8.1e-2 {
		t.Fatalf("Read = %+v, %v; want 8.1E-02", r, err)
	}
	sent := link.Sent()
	if len(sent) != 2 || string(sent[0]) != "PV2\r\n" || string(sent[1]) != "\x05" {
		t.Errorf("sent %q, want PV2\\r\\n then ENQ", sent)
	}
}

func TestASCIISeveralGaugesInOneReply(t *testing.T) {
	o := drivers.ASCIIOptions{Steps: []drivers.Step{{Send: "ALL\r", Expect: `(?P<gauge>\d)=(?P<value>[^,]+)`}}, Channel: "2"}
	d := newASCII(t, driverstest.Lines("1=1.2E-3,2=4.0E-6,3=9.9E+2\r\n"), o)
	all, err := d.ReadAll(context.Background())
	if err != nil {
		t.Fatalf("ReadAll: %v", err)
	}
	want := map[string]float64{"1": 1.2e-3, "2": 4.0e-6, "3": 990}
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
		t.Errorf("Read (channel 2) = %v, %v; want 4.0E-6", r.Raw, err)
	}
}

func TestASCIIPositionalKeys(t *testing.T) {
	o := drivers.ASCIIOptions{Steps: []drivers.Step{
		{Send: "A\r", Expect: `^(?P<value>\S+)$`},
		{Send: "B\r", Expect: `^(?P<value>\S+)$`, Gauge: "ion"},
	}}
	all, err := newASCII(t, driverstest.Lines("1E-3\r\n", "2E-7\r\n"), o).ReadAll(context.Background())
	if err != nil || all["1"].Raw != 1e-3 || all["ion"].Raw != 2e-7 {
		t.Fatalf("ReadAll = %v, %v; want keys 1 and ion", all, err)
	}
}
