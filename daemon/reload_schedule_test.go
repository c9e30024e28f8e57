package daemon

import (
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
)

const scheduleYAML = `chamber: {name: sched-bench, volume: 30 L}
store: {dir: /tmp/unused}
links:
  bench: {simulator: {rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}}}
  plc: {modbus_tcp: {address: "127.0.0.1:1502"}}
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure}
  valve-closed: {link: plc, driver: modbus, kind: state, modbus: {table: discrete, address: 3}}
alarms:
  - name: leak-test
    gauge: pirani
    hold_test:
      allowed_leak: 1e-6 mbar*L/s
      confirm: valve-closed
      valve: {link: plc, coil: 12, closed_is: "on"}
      schedule: {every: 6h}
`

// After a reload a scheduled hold test whose schedule did not change
// keeps its next time, even one due at the moment of the reload (every
// 6 h from the epoch: due at 06:00 UTC, reloaded at 06:00:30 before the
// alarm loop started it); a changed schedule is due afresh (every 4 h:
// 08:00). Times by hand.
func TestReloadKeepsHoldSchedules(t *testing.T) {
	parse := func(text string) *config.Config {
		t.Helper()
		cfg, err := config.ParseConfig("sched.yaml", []byte(text))
		if err != nil {
			t.Fatal(err)
		}
		return cfg
	}
	d := newTestDaemon(parse(scheduleYAML))
	at := func(hms string) time.Time {
		v, err := time.Parse(time.RFC3339, "2031-05-06T"+hms+"Z")
		if err != nil {
			t.Fatal(err)
		}
		return v
	}
	s := d.holdSchedules(at("01:00:00"), nil)
	if len(s) != 1 || !s[0].next.Equal(at("06:00:00")) {
		t.Fatalf("schedules at 01:00: %+v; want one due at 06:00", s)
	}
	d.cfgp.Store(parse(scheduleYAML))
	if k := d.holdSchedules(at("06:00:30"), s); len(k) != 1 || !k[0].next.Equal(at("06:00:00")) {
		t.Errorf("unchanged schedule after a reload at 06:00:30: next %v; want 06:00 kept", k[0].next)
	}
	d.cfgp.Store(parse(strings.Replace(scheduleYAML, "every: 6h", "every: 4h", 1)))
	if k := d.holdSchedules(at("06:00:30"), s); len(k) != 1 || !k[0].next.Equal(at("08:00:00")) {
		t.Errorf("changed schedule after a reload at 06:00:30: next %v; want 08:00", k[0].next)
	}
}
