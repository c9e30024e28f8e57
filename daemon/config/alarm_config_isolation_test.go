package config

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const isolationBase = `chamber: {name: valve-bench, volume: 30 L}
store: {dir: /tmp/unused}
links:
  bench: {simulator: {rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}, high_pump: {speed: 60 L/s, ultimate: 1e-7 Pa}, crossover: 10 Pa}}
  plc: {modbus_tcp: {address: "127.0.0.1:1502"}}
  spare: {modbus_tcp: {address: "127.0.0.1:1503"}}
gauges:
  ion: {link: bench, driver: sim, instrument: ion, kind: pressure}
  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature}
  valve-closed: {link: plc, driver: modbus, kind: state, modbus: {table: discrete, address: 3}}
alarms:
`

// Every isolation mistake is reported at once, each with its line and what
// to write instead. (A mistake inside a one-line {…} mapping is reported on
// that line under the longest path there, so the message names while: itself.)
func TestIsolationConfigProblems(t *testing.T) {
	text := isolationBase + `  - name: watch-a
    gauge: ion
    rise_watch: {max_leak: 1e-5 mbar*L/s, while: {gauge: wall}}
  - name: watch-b
    gauge: ion
    rise_watch: {max_leak: 1e-5 mbar*L/s, while: sometimes}
  - name: test-a
    gauge: ion
    hold_test:
      allowed_leak: 1e-6 mbar*L/s
      valve: {link: bench, closed_is: open, travel: 10s}
      schedule: {every: 30h, at: "3 o'clock"}
  - name: test-b
    gauge: ion
    hold_test:
      allowed_leak: 1e-6 mbar*L/s
      valve: {link: spare, coil: 4, closed_is: "off"}
      schedule: {every: 5 min}
  - name: watch-c
    gauge: ion
    rise_watch: {max_leak: 1e-5 mbar*L/s, while: {gauge: valve-closed, invert: true}}
`
	_, err := ParseConfig("iso.yaml", []byte(text))
	if err == nil {
		t.Fatal("ParseConfig accepted the mistakes")
	}
	for _, want := range []string{
		"iso.yaml:14: alarms[0].rise_watch.while: wall is a temperature gauge; want a gauge with kind: state",
		`iso.yaml:17: alarms[1].rise_watch.while: want always, api or {gauge: NAME}, got "sometimes"`,
		`iso.yaml:22: alarms[2].hold_test.valve.link: want a modbus_rtu or modbus_tcp link (modbus links: plc, spare), got "bench"`,
		"iso.yaml:22: alarms[2].hold_test.valve.coil: missing",
		`alarms[2].hold_test.valve.closed_is: want on or off`,
		"alarms[2].hold_test.valve.travel: travel bounds the wait for confirm",
		`iso.yaml:23: alarms[2].hold_test.schedule.at: want a local time of day such as "03:00"`,
		"iso.yaml:26: alarms[3].hold_test: gauge ion already has a hold_test alarm at alarms[2]",
		"alarms[3].hold_test.valve.link: link spare carries no gauge",
		"alarms[3].hold_test.schedule.every: a hold test here takes 12m",
		"iso.yaml:32: alarms[4].rise_watch", // the path yaml.v3's line points at
		`while: unknown key "invert"`,
	} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("missing problem %q in:\n%s", want, err)
		}
	}
}

// A good isolation setup parses, with the defaults filled in (the daemon's
// TestRiseWatchFollowsSwitch builds its rise watch).
func TestIsolationConfigGood(t *testing.T) {
	text := isolationBase + `  - name: leak-test
    gauge: ion
    hold_test:
      allowed_leak: 1e-6 mbar*L/s
      confirm: valve-closed
      valve: {link: plc, coil: 12, closed_is: "on"}
      schedule: {every: 24h, at: "03:00"}
  - name: leak-watch
    gauge: ion
    rise_watch: {max_leak: 1e-5 mbar*L/s, while: {gauge: valve-closed}}
`
	cfg, err := ParseConfig("iso.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	h := cfg.Alarms[0].HoldTest
	if h.Valve.Unit != 1 || h.Valve.Travel.D().Seconds() != 30 {
		t.Errorf("valve defaults: unit %d, travel %s; want unit 1, travel 30s", h.Valve.Unit, h.Valve.Travel.D())
	}
	if s := h.Schedule.Schedule(); !s.HasAt || s.At.Hours() != 3 || s.Every.Hours() != 24 {
		t.Errorf("schedule %+v, want every 24 h at 03:00", s)
	}
}

// The commented valve example at the end of alarms.yaml, uncommented and
// merged with the simulated chamber above it, is a valid config.
func TestAlarmExampleValveBlock(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "..", "deploy", "examples", "alarms.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(b)
	_, block, ok := strings.Cut(text, "# ---- valve example begin ----\n")
	block, _, ok2 := strings.Cut(block, "# ---- valve example end ----")
	if !ok || !ok2 {
		t.Fatal("alarms.yaml lost its valve example markers")
	}
	var yamlLines []string
	for _, l := range strings.Split(block, "\n") {
		if after, ok := strings.CutPrefix(l, "# "); ok && (strings.HasPrefix(after, " ") || strings.HasSuffix(after, ":")) {
			yamlLines = append(yamlLines, after)
		}
	}
	example := strings.Join(yamlLines, "\n")
	head, _, _ := strings.Cut(text, "\nalarms:\n")
	head = strings.Replace(head, "\nlinks:\n", "\nlinks:\n"+section(example, "links:"), 1)
	head = strings.Replace(head, "\ngauges:\n", "\ngauges:\n"+section(example, "gauges:"), 1)
	cfg, err := ParseConfig("alarms-valve.yaml", []byte(head+"\nalarms:\n"+section(example, "alarms:")))
	if err != nil {
		t.Fatalf("%v\nin:\n%s", err, example)
	}
	h := cfg.Alarms[0].HoldTest
	if h == nil || h.Valve == nil || h.Schedule == nil || cfg.Alarms[1].RiseWatch.While.Gauge != "valve-closed" {
		t.Errorf("the example lost its valve, schedule or switch: %+v", cfg.Alarms)
	}
}

// section returns the indented lines under a top-level key.
func section(text, key string) string {
	_, rest, ok := strings.Cut(text, key+"\n")
	if !ok {
		return ""
	}
	var out []string
	for _, l := range strings.Split(rest, "\n") {
		if !strings.HasPrefix(l, " ") {
			break
		}
		out = append(out, l)
	}
	return strings.Join(out, "\n") + "\n"
}
