package config

import (
	"strings"
	"testing"
)

const bakeBase = `
chamber: {name: b, volume: 30 L}
store: {dir: /tmp/x}
links: {bench: {simulator: {rough_pump: {speed: 5 m3/h}}}}
gauges:
  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature}
  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure}
`

// Every problem of a bad bake plan is reported at once, each at its line.
func TestBakeConfigProblems(t *testing.T) {
	cfg := bakeBase + `bake:
  temperatures: [cdg, nope]
  start: whenever
  ramp_up: 2 C
  hold: 150 C
  hold_for: 0s
  cool_down: -1 C/min
  cool_to: 148 C
  max_temperature: 150 C
  max_pressure: 1e-3 Pa
  rate_window: 10s
  colour: red
`
	_, err := ParseConfig("bake.yaml", []byte(cfg))
	if err == nil {
		t.Fatal("bad bake plan accepted")
	}
	for _, want := range []string{
		"bake.yaml:9: bake.temperatures[0]: \"cdg\" is not a temperature gauge",
		"bake.yaml:9: bake.temperatures[1]: \"nope\" is not a temperature gauge",
		"bake.yaml:10: bake.start: want on_ramp",
		"bake.yaml:11: bake.ramp_up: want a rate such as 2 C/min",
		"bake.yaml:13: bake.hold_for: want the time at temperature",
		"bake.yaml:14: bake.cool_down: want the largest cooling rate",
		"bake.yaml:15: bake.cool_to: must be below",
		"bake.yaml:16: bake.max_temperature: want a maximum above",
		"bake.yaml:17: bake.max_pressure: a pressure limit needs bake.pressure",
		"bake.yaml:18: bake.rate_window: want at least 1 min",
		"bake.yaml:19: bake.colour: unknown key",
	} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("problems lack %q:\n%s", want, err)
		}
	}
}

func TestBakeConfigDefaults(t *testing.T) {
	cfg, err := ParseConfig("bake.yaml", []byte(bakeBase+`bake: {temperatures: [wall], pressure: cdg, ramp_up: 2 C/min, hold: 150 C, hold_for: 1h, cool_down: 60 C/h, max_temperature: 160 C}
`))
	if err != nil {
		t.Fatal(err)
	}
	b := cfg.Bake
	// 2 C/min = 2/60 C/s; 60 C/h = 1/60 C/s (hand arithmetic).
	if b.Start != "on_ramp" || b.Resolved.StartRise != 10 || b.Resolved.Tolerance != 5 || float64(b.CoolTo) != 50 ||
		b.Resolved.RampUp != 2.0/60 || b.Resolved.CoolDown != 1.0/60 || b.Severity != "high" {
		t.Errorf("defaults %+v %+v", b, b.Resolved)
	}
}
