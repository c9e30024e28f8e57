package config

import (
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// The shipped example parses, and its reference liquid gives a column
// pressure by p = ρ(t)·g·h.
func TestCalibrationExampleConfig(t *testing.T) {
	cfg, err := LoadConfig(filepath.Join("..", "..", "deploy", "examples", "calibration.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	fore := cfg.Gauges["foreline"]
	if fore.Calibration == nil || fore.Calibration.Use != "active" || fore.Calibration.Fluid == nil {
		t.Fatalf("foreline calibration = %+v; want active with a reference fluid", fore.Calibration)
	}
	if !CalibrationOn(fore) || CalibrationOn(cfg.Gauges["chamber-ion"]) {
		t.Error("calibration: active/none not read as written")
	}
	// 870 kg/m3 oil at its quoting temperature under standard gravity:
	// 85.318 Pa per cm (REFERENCES.md §2b).
	f := ReferenceFluid{Density: 870}
	col, _, err := f.Column(0.01)
	if err != nil {
		t.Fatal(err)
	}
	if p, _ := col.Pressure(); math.Abs(p-85.318) > 0.01 {
		t.Errorf("1 cm of 870 kg/m3 oil = %g Pa; want 85.318 Pa (REFERENCES.md §2b)", p)
	}
	if g := cfg.Gauges["chamber"]; g.Interval.D() <= 0 || g.Unit != "mbar" {
		t.Errorf("combined gauge interval %s, unit %q; want the members' interval and mbar", g.Interval.D(), g.Unit)
	}
}

// Every problem with the calibration and combine keys is reported, each
// naming its place.
func TestCalibrationConfigProblems(t *testing.T) {
	text := `
chamber: {name: x, volume: 10 L}
store: {dir: /tmp/x}
links:
  s: {simulator: {rough_pump: {speed: 5 m3/h}}}
gauges:
  a: {link: s, driver: sim, instrument: pirani, kind: pressure, calibration: sometimes}
  b:
    link: s
    driver: sim
    instrument: cdg
    full_scale: 1000 Pa
    kind: pressure
    calibration: {use: active, reference_fluid: {density: 870 kg/m3, colour: red}}
  t: {link: s, driver: sim, instrument: thermocouple, kind: temperature, calibration: active}
  c:
    combine: [a, b, nowhere]
    ranges: {a: [0.1 Pa, 10 Pa], b: [100 Pa, 1 kPa], z: [1 Pa, 2 Pa]}
  d: {combine: [a, t], ranges: {a: [1 Pa, 0.5 Pa], t: [1 Pa, 2 Pa]}}
`
	_, err := ParseConfig("cal.yaml", []byte(text))
	if err == nil {
		t.Fatal("ParseConfig succeeded; want problems")
	}
	got := err.Error()
	for _, want := range []string{
		`gauges.a.calibration: want active`,
		`unknown key "colour"`,
		`gauges.t.calibration: only pressure gauges`,
		`gauges.c.combine[2]: unknown gauge "nowhere"`,
		`gauges.c.ranges.z: "z" is not a member`,
		`gauges.c.ranges: no member is trusted between 10 Pa and 100 Pa`,
		`gauges.d.combine[1]: "t" measures temperature`,
		`gauges.d.ranges.a: range 1…0.5 Pa`,
	} {
		if !strings.Contains(got, want) {
			t.Errorf("problems lack %q; got:\n%s", want, got)
		}
	}
	for _, line := range strings.Split(got, "\n") {
		if !strings.HasPrefix(line, "cal.yaml:") || strings.HasPrefix(line, "cal.yaml:1:") {
			t.Errorf("problem without its own line: %q", line)
		}
	}
}
