//go:build linux

package sim

import (
	"context"
	"errors"
	"log/slog"
	"math"
	"strings"
	"testing"
	"time"

	"holdfast/drivers"
)

// servePTY serves s on a fresh pseudo-terminal until the test ends and
// returns the port to open.
func servePTY(t *testing.T, serve func(p *PTY) error) string {
	t.Helper()
	p, err := OpenPTY()
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- serve(p) }()
	t.Cleanup(func() {
		p.Close()
		if err := <-done; err == nil {
			t.Error("serving returned nil after the pty closed; want the read error")
		}
	})
	return p.Name()
}

func ptyLink(t *testing.T, device string) *drivers.StreamLink {
	t.Helper()
	l, err := drivers.OpenSerial(drivers.SerialConfig{Name: "sim", Device: device, Baud: 9600, Timeout: 300 * time.Millisecond},
		slog.New(slog.NewTextHandler(t.Output(), nil)))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { l.Close() })
	return l
}

// asciiStatusMap is the status: map of deploy/examples/pty-demo.yaml.
var asciiStatusMap = map[string]drivers.Status{
	"GOOD": drivers.StatusOK, "BELOW": drivers.StatusUnderRange, "ABOVE": drivers.StatusOverRange,
	"FAULT": drivers.StatusSensorFault, "IDLE": drivers.StatusOff,
}

// The daemon's ascii driver, configured as deploy/examples/pty-demo.yaml
// configures it, reads what the server prints.
func TestASCIIThroughPty(t *testing.T) {
	s, ins := newTestServer(t, ServeOptions{Unit: unit(t, "mbar")})
	l := ptyLink(t, servePTY(t, func(p *PTY) error { return s.ServeASCII(p.Master) }))
	one, err := drivers.NewASCII(l, drivers.Options{Gauge: "chamber-cdg", ASCII: drivers.ASCIIOptions{
		Steps:  []drivers.Step{{Send: `READ 1\r`, Expect: `^CH1 (?P<value>\S+) \S+ (?P<status>[A-Z]+)$`}},
		Status: asciiStatusMap,
	}})
	if err != nil {
		t.Fatal(err)
	}
	if r, err := one.Read(context.Background()); err != nil || r.Raw != 10 || r.Status != drivers.StatusOK {
		t.Errorf("READ 1 = %+v, %v; want 10 mbar ok", r, err)
	}
	all, err := drivers.NewASCII(l, drivers.Options{Gauge: "all", ASCII: drivers.ASCIIOptions{
		Steps:   []drivers.Step{{Send: `READ ALL\r`, Expect: `CH(?P<gauge>\d+) (?P<value>\S+) \S+ (?P<status>[A-Z]+)`}},
		Status:  asciiStatusMap,
		Channel: "1",
	}})
	if err != nil {
		t.Fatal(err)
	}
	rs, err := all.ReadAll(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(rs) != 4 || rs["1"].Raw != 10 || rs["2"].Raw != 22 || rs["3"].Status != drivers.StatusOff || !math.IsNaN(rs["3"].Raw) {
		t.Errorf("READ ALL = %+v; want 4 channels, 3 off", rs)
	}
	// A silent instrument: the daemon sees no reply, and the next
	// exchange after recovery reads again.
	if err := ins[0].Fail(ModeSilent); err != nil {
		t.Fatal(err)
	}
	if _, err := one.Read(context.Background()); !errors.Is(err, drivers.ErrNoReply) {
		t.Errorf("silent channel: err = %v, want no reply", err)
	}
	ins[0].Recover()
	if r, err := one.Read(context.Background()); err != nil || r.Raw != 10 {
		t.Errorf("after recovery: %+v, %v", r, err)
	}
}

// Address and checksum, checked by the daemon's own checksum code.
func TestASCIIAddressChecksumThroughPty(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{Unit: unit(t, "mbar"), Address: "07", Checksum: true})
	l := ptyLink(t, servePTY(t, func(p *PTY) error { return s.ServeASCII(p.Master) }))
	opts := drivers.ASCIIOptions{
		Steps: []drivers.Step{{Send: `TO {addr} READ 2 ~{cs}\r`,
			Expect: `^FROM {addr} CH2 (?P<value>\S+) \S+ (?P<status>[A-Z]+) ~(?P<cs>[0-9A-F]{2})$`}},
		Status:   asciiStatusMap,
		Address:  "07",
		Checksum: &drivers.Checksum{Kind: "xor8"},
	}
	d, err := drivers.NewASCII(l, drivers.Options{Gauge: "room-tc", ASCII: opts})
	if err != nil {
		t.Fatal(err)
	}
	if r, err := d.Read(context.Background()); err != nil || r.Raw != 22 {
		t.Errorf("read = %+v, %v; want 22 °C", r, err)
	}
	opts.Address = "08" // another device on the bus: nobody answers
	other, err := drivers.NewASCII(l, drivers.Options{Gauge: "other", ASCII: opts})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := other.Read(context.Background()); !errors.Is(err, drivers.ErrNoReply) {
		t.Errorf("address 08: err = %v, want no reply", err)
	}
	opts.Address, opts.Steps[0].Send = "07", `TO {addr} HELLO ~{cs}\r` // refused: the driver shows the refusal
	bad, err := drivers.NewASCII(l, drivers.Options{Gauge: "bad", ASCII: opts})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := bad.Read(context.Background()); err == nil || !strings.Contains(err.Error(), "REFUSED unknown-command") {
		t.Errorf("unknown command: err = %v, want the refusal", err)
	}
}

// The daemon's modbus driver reads the register map over RTU.
func TestModbusThroughPty(t *testing.T) {
	s, ins := newTestServer(t, ServeOptions{Unit: unit(t, "mbar")})
	dev := servePTY(t, func(p *PTY) error { return s.ServeRTU(p.Master, 5) })
	ml, err := drivers.OpenModbus(drivers.ModbusConfig{Name: "sim-rtu", RTU: &drivers.SerialConfig{Device: dev, Baud: 19200,
		Parity: "even", Timeout: 300 * time.Millisecond}}, slog.New(slog.NewTextHandler(t.Output(), nil)))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ml.Close() })
	read := func(mo drivers.ModbusOptions) (drivers.Reading, error) {
		d, err := drivers.NewModbus(ml, drivers.Options{Gauge: "g", Modbus: mo})
		if err != nil {
			t.Fatal(err)
		}
		return d.Read(context.Background())
	}
	if r, err := read(drivers.ModbusOptions{Unit: 5, Table: "input", Address: 2, Type: "float32"}); err != nil || relErr(r.Raw, 22) > 1e-6 {
		t.Errorf("channel 2 value = %v, %v; want 22 °C", r.Raw, err)
	}
	if r, err := read(drivers.ModbusOptions{Unit: 5, Table: "input", Address: StatusBase + 2, Type: "uint16"}); err != nil || r.Raw != 16 {
		t.Errorf("channel 3 status = %v, %v; want 16 (bit 4, off)", r.Raw, err)
	}
	// The status register decoded as deploy/examples/pty-modbus.yaml does.
	reg := uint16(StatusBase + 2)
	flags := map[string]drivers.Status{"1": drivers.StatusOK, "2": drivers.StatusUnderRange, "4": drivers.StatusOverRange,
		"8": drivers.StatusSensorFault, "16": drivers.StatusOff}
	if r, err := read(drivers.ModbusOptions{Unit: 5, Table: "input", Address: 4, Type: "float32", StatusRegister: &reg, Status: flags}); err != nil ||
		r.Status != drivers.StatusOff || !math.IsNaN(r.Raw) {
		t.Errorf("channel 3 with its status register = %+v, %v; want off with no number", r, err)
	}
	if err := ins[1].Fail(ModeSilent); err != nil {
		t.Fatal(err)
	}
	if _, err := read(drivers.ModbusOptions{Unit: 5, Table: "input", Address: 2, Type: "float32"}); err == nil || !strings.Contains(err.Error(), "device failure") {
		t.Errorf("silent channel: err = %v, want the server device failure exception", err)
	}
}
