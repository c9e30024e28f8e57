package daemon

import (
	"io"
	"log"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/simonvetter/modbus"

	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

// plc is a fake controller on 127.0.0.1: coil 12 drives the chamber's
// isolation valve (closed when on), and discrete input 3 is the valve's
// closed-position switch. A stuck valve takes the writes but never moves.
type plc struct {
	mu      sync.Mutex
	coil    bool
	closed  bool
	stuck   bool
	writes  []string
	chamber *sim.Chamber
}

func (p *plc) HandleCoils(r *modbus.CoilsRequest) ([]bool, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if r.Addr != 12 || r.Quantity != 1 {
		return nil, modbus.ErrIllegalDataAddress
	}
	if r.IsWrite {
		p.coil = r.Args[0]
		p.writes = append(p.writes, map[bool]string{true: "on", false: "off"}[p.coil])
		if !p.stuck {
			p.closed = p.coil
			p.chamber.Isolate(p.coil)
		}
	}
	return []bool{p.coil}, nil
}

func (p *plc) HandleDiscreteInputs(r *modbus.DiscreteInputsRequest) ([]bool, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if r.Addr != 3 || r.Quantity != 1 {
		return nil, modbus.ErrIllegalDataAddress
	}
	return []bool{p.closed}, nil
}

func (p *plc) HandleHoldingRegisters(*modbus.HoldingRegistersRequest) ([]uint16, error) {
	return nil, modbus.ErrIllegalFunction
}

func (p *plc) HandleInputRegisters(*modbus.InputRegistersRequest) ([]uint16, error) {
	return nil, modbus.ErrIllegalFunction
}

func (p *plc) log() []string {
	p.mu.Lock()
	defer p.mu.Unlock()
	return slices.Clone(p.writes)
}

const valveConfig = `
chamber: {name: valve-bench, volume: 30 L}
http: {listen: "127.0.0.1:0", token_file: TOKEN}
store: {dir: DIR}
links:
  bench:
    simulator:
      start_pressure: 1e-3 Pa
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-7 Pa}
      crossover: 10 Pa
      leak: 2e-9 Pa*m3/s
      outgassing: 1e-9 Pa*m3/s
      seed: 5
  plc: {modbus_tcp: {address: "ADDR", timeout: 300ms}}
gauges:
  ion: {link: bench, driver: sim, instrument: ion, kind: pressure, unit: mbar, digits: 4, interval: 2s}
  valve-closed: {link: plc, driver: modbus, kind: state, interval: 2s, modbus: {unit: 1, table: discrete, address: 3}}
alarms:
  - name: chamber-leak-test
    gauge: ion
    hold_test:
      allowed_leak: 1e-6 mbar*L/s
      settle: 30s
      duration: 5 min
      confirm: valve-closed
VALVE
SCHEDULE
  - name: leak-watch
    gauge: ion
    rise_watch: {window: 2 min, max_leak: 1e-5 mbar*L/s, while: {gauge: valve-closed}}
`

// startValveDaemon runs a daemon whose hold tests close a valve through the
// fake controller, at 1200 simulated seconds per wall second.
func startValveDaemon(t *testing.T, p *plc, schedule string) (*Daemon, *sim.Clock, func()) {
	return startIsolationDaemon(t, p, `      valve: {link: plc, coil: 12, closed_is: "on", travel: 2 min}`, schedule)
}

// startIsolationDaemon is startValveDaemon with the hold test's valve line given.
func startIsolationDaemon(t *testing.T, p *plc, valve, schedule string) (*Daemon, *sim.Clock, func()) {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	addr := ln.Addr().String()
	ln.Close()
	srv, err := modbus.NewServer(&modbus.ServerConfiguration{URL: "tcp://" + addr, Timeout: 5 * time.Second, MaxClients: 4,
		Logger: log.New(io.Discard, "", 0)}, p)
	if err != nil {
		t.Fatal(err)
	}
	if err := srv.Start(); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	if err := os.WriteFile(tok, []byte("a-test-token-of-some-length\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	text := strings.NewReplacer("DIR", dir, "TOKEN", tok, "ADDR", addr, "SCHEDULE", schedule, "VALVE", valve).Replace(valveConfig)
	cfg, err := config.ParseConfig("valve.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	clock := sim.NewClock(time.Now(), 400)
	d, err := New(cfg, Options{Clock: clock})
	if err != nil {
		t.Fatal(err)
	}
	for _, l := range d.links {
		if l.sim != nil {
			p.mu.Lock()
			p.chamber = l.sim
			p.mu.Unlock()
		}
	}
	done := make(chan error, 1)
	stop := make(chan struct{})
	go func() {
		ctx, cancel := contextUntil(stop)
		defer cancel()
		done <- d.Run(ctx)
	}()
	return d, clock, func() {
		close(stop)
		if err := <-done; err != nil {
			t.Errorf("Run: %v", err)
		}
		srv.Stop()
	}
}

// waitSwitch waits (at most one simulated hour) until the valve-closed
// switch has been read as want. A fixed simulated wait is not enough: the
// fast clock runs on wall time, and on a loaded machine 10 s of it (8 ms)
// can pass before the first Modbus exchange is done.
func waitSwitch(t *testing.T, d *Daemon, clock *sim.Clock, want int) {
	t.Helper()
	st, why := d.switchState("valve-closed")
	for end := clock.Now().Add(time.Hour); st != want && clock.Now().Before(end); st, why = d.switchState("valve-closed") {
		<-clock.After(2 * time.Second)
	}
	if st != want {
		t.Fatalf("valve-closed after a simulated hour: %d (%s), want %d", st, why, want)
	}
}

// waitHoldTest follows hold test id on the daemon's own clock (at most two
// simulated hours) until it is done or failed.
func waitHoldTest(t *testing.T, d *Daemon, clock *sim.Clock, id string) HoldTestJSON {
	t.Helper()
	var h HoldTestJSON
	for end := clock.Now().Add(2 * time.Hour); clock.Now().Before(end); <-clock.After(10 * time.Second) {
		apiCall(t, d, "GET", "/api/v1/holdtests/"+id, "", nil, &h)
		if h.State == holdDone || h.State == holdFailed {
			return h
		}
	}
	t.Fatalf("hold test %s still %s after two simulated hours", id, h.State)
	return h
}

const tok = "a-test-token-of-some-length"

// A hold test closes the valve through coil 12, waits for the closed
// switch, records, passes on the tight simulated chamber, and puts the coil
// back; a second test is refused while it runs; the rise watch that follows
// the switch analyses only while the valve is closed.
func TestHoldTestClosesTheValve(t *testing.T) {
	p := &plc{}
	d, clock, stop := startValveDaemon(t, p, "")
	defer stop()
	waitSwitch(t, d, clock, switchOpen)
	var h HoldTestJSON
	if code := apiCall(t, d, "POST", "/api/v1/holdtests", tok, HoldTestStartJSON{Gauge: "ion"}, &h); code != http.StatusCreated {
		t.Fatalf("start: status %d", code)
	}
	if h.Valve != "modbus" || h.Coil == nil || h.Coil.Before || h.State != holdClosing {
		t.Errorf("started %+v; want the modbus valve, found off, waiting for the switch", h)
	}
	if code := apiCall(t, d, "POST", "/api/v1/holdtests", tok, HoldTestStartJSON{Gauge: "ion"}, nil); code != http.StatusConflict {
		t.Errorf("second start while one runs: status %d, want 409", code)
	}
	h = waitHoldTest(t, d, clock, h.ID)
	if h.State != holdDone || h.Verdict != "pass" {
		t.Fatalf("hold test %s: %s, verdict %q, error %q", h.ID, h.State, h.Verdict, h.Error)
	}
	if h.Coil == nil || !h.Coil.Restored {
		t.Errorf("coil after the test: %+v, want put back", h.Coil)
	}
	if w := p.log(); !slices.Equal(w, []string{"on", "off"}) {
		t.Errorf("controller saw writes %v, want on then off", w)
	}
	if r, ok := d.alarms.RiseResults()["leak-watch"]; !ok || r.Classification == "" {
		t.Errorf("rise watch did not analyse while the switch said closed: %+v", r)
	}
}

// A valve that never reaches its closed switch fails the test within its
// travel time, with the reason, and the coil is put back.
func TestHoldTestValveStuck(t *testing.T) {
	p := &plc{stuck: true}
	d, clock, stop := startValveDaemon(t, p, "")
	defer stop()
	waitSwitch(t, d, clock, switchOpen) // so the failure names what it reads
	var h HoldTestJSON
	if code := apiCall(t, d, "POST", "/api/v1/holdtests", tok, HoldTestStartJSON{Gauge: "ion"}, &h); code != http.StatusCreated {
		t.Fatalf("start: status %d", code)
	}
	h = waitHoldTest(t, d, clock, h.ID)
	if h.State != holdFailed || !strings.Contains(h.Error, "valve not closed") || !strings.Contains(h.Error, "valve-closed reads open") {
		t.Errorf("stuck valve: %s, error %q; want failed, naming the switch", h.State, h.Error)
	}
	if w := p.log(); !slices.Equal(w, []string{"on", "off"}) {
		t.Errorf("controller saw writes %v, want on then off", w)
	}
}

// A scheduled test starts by itself; the daemon stopping during it puts the
// coil back before Run returns.
func TestScheduledHoldTestAndShutdown(t *testing.T) {
	p := &plc{}
	d, clock, stop := startValveDaemon(t, p, "      schedule: {every: 10 min}")
	// Wait for the stored test, not for the coil: the coil is written
	// before the test's report is stored, so a listing made as soon as
	// the coil moves can come back empty.
	var hs []HoldTestJSON
	for end := clock.Now().Add(time.Hour); clock.Now().Before(end); <-clock.After(10 * time.Second) {
		if apiCall(t, d, "GET", "/api/v1/holdtests", "", nil, &hs); len(hs) > 0 {
			break
		}
	}
	if len(hs) != 1 || !hs[0].Scheduled || hs[0].Valve != "modbus" {
		t.Fatalf("after the first scheduled time: %+v, want one scheduled test on the valve", hs)
	}
	stop()
	if w := p.log(); !slices.Equal(w, []string{"on", "off"}) {
		t.Errorf("controller saw writes %v after the stop, want on then off", w)
	}
	db, err := store.Open(StorePath(d.conf().Store.Dir), store.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	b, err := alarmstore.Wrap(db.Bolt()).HoldTest(hs[0].ID, "report.json")
	if err != nil {
		t.Fatal(err)
	}
	if s := string(b); !strings.Contains(s, `"state": "failed"`) || !strings.Contains(s, "daemon was stopped") ||
		!strings.Contains(s, `"restored": true`) {
		t.Errorf("stored report after the stop:\n%s\nwant failed because the daemon stopped, coil restored", s)
	}
}

// With manual isolation and a confirm switch, a test does not start while
// the switch reads open, and says why; once someone closes the valve it does.
func TestManualHoldTestNeedsTheSwitchClosed(t *testing.T) {
	p := &plc{}
	d, clock, stop := startIsolationDaemon(t, p, "", "")
	defer stop()
	waitSwitch(t, d, clock, switchOpen)
	if code := apiCall(t, d, "POST", "/api/v1/holdtests", tok, HoldTestStartJSON{Gauge: "ion"}, nil); code != http.StatusConflict {
		t.Fatalf("start with the valve open: status %d, want 409", code)
	}
	if st, why := d.switchState("valve-closed"); st != switchOpen || why != "valve-closed reads open" {
		t.Errorf("switch: %d %q, want open", st, why)
	}
	p.mu.Lock()
	p.closed = true // someone closed the valve by hand
	p.chamber.Isolate(true)
	p.mu.Unlock()
	waitSwitch(t, d, clock, switchClosed)
	var h HoldTestJSON
	if code := apiCall(t, d, "POST", "/api/v1/holdtests", tok, HoldTestStartJSON{Gauge: "ion"}, &h); code != http.StatusCreated {
		t.Fatalf("start with the valve closed: status %d", code)
	}
	if h.Valve != "manual" || h.State != holdSettling || len(p.log()) != 0 {
		t.Errorf("manual test %+v, writes %v; want manual, settling, no coil written", h, p.log())
	}
}
