package daemon

import (
	"path/filepath"
	"testing"

	"holdfast/daemon/config"
)

// The shipped alarm example loads without a problem and shows every rule kind.
func TestAlarmExampleHasEveryKind(t *testing.T) {
	cfg, err := config.LoadConfig(filepath.Join("..", "deploy", "examples", "alarms.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	seen := map[string]bool{}
	for _, a := range cfg.Alarms {
		seen[a.Resolved.Kind] = true
	}
	for _, k := range config.AlarmKinds {
		if !seen[k] {
			t.Errorf("alarms.yaml shows no %s alarm", k)
		}
	}
	d := newTestDaemon(cfg)
	if n := len(d.limits()); n != len(cfg.Alarms) {
		t.Errorf("built %d alarms from %d", n, len(cfg.Alarms))
	}
}

// Alarm config mistakes are reported with their place.
func TestAlarmConfigProblems(t *testing.T) {
	_, err := config.ParseConfig("bad.yaml", []byte(`
chamber: {name: c, volume: 30 L}
store: {dir: /tmp/x}
links: {bench: {simulator: {rough_pump: {speed: 5 m3/h}}}}
gauges:
  p: {link: bench, driver: sim, instrument: pirani, kind: pressure}
  w: {link: bench, driver: sim, instrument: thermocouple, kind: temperature}
alarms:
  - {name: two, gauge: p, above: 1 Pa, stale: 1 min}
  - {name: ramp, gauge: w, rate: {above: 5 C}}
  - {name: rw, gauge: w, rise_watch: {max_leak: 1e-5 mbar*L/s}}
  - {name: disk, health: disk_free, below: 200%}
`))
	if err == nil {
		t.Fatal("bad alarms accepted")
	}
	for _, want := range []string{":9: alarms[0]: want exactly one rule kind", ":10: alarms[1].rate.above: want a rate",
		":11: alarms[2].gauge: a rise watch needs a pressure gauge", ":12: alarms[3].below: want the free share"} {
		if !containsLine(err.Error(), want) {
			t.Errorf("problems lack %q:\n%v", want, err)
		}
	}
}

func containsLine(s, sub string) bool {
	for i := 0; i+len(sub) <= len(s); i++ {
		if s[i:i+len(sub)] == sub {
			return true
		}
	}
	return false
}
