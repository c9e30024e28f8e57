package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"holdfast/calib"
	"holdfast/daemon"
	"holdfast/drivers"
)

// probe on a simulated gauge runs its exchanges and prints each value.
func TestProbeSimulatedGauge(t *testing.T) {
	cfg := filepath.Join(t.TempDir(), "p.yaml")
	os.WriteFile(cfg, []byte(`
chamber: {name: probe, volume: 10 L}
store: {dir: /nonexistent-not-opened}
links: {s: {simulator: {rough_pump: {speed: 2 m3/h}}}}
gauges:
  wall: {link: s, driver: sim, instrument: thermocouple, kind: temperature}
`), 0o644)
	var out, errOut bytes.Buffer
	err := run(context.Background(), []string{"probe", "--config", cfg, "--gauge", "wall", "--count", "2", "--every", "1ms"}, &out, &errOut)
	if err != nil {
		t.Fatalf("probe: %v\n%s", err, errOut.String())
	}
	if n := strings.Count(out.String(), "status ok ->"); n != 2 {
		t.Errorf("want 2 good exchanges, got %d:\n%s", n, out.String())
	}
	err = run(context.Background(), []string{"probe", "--config", cfg, "--gauge", "nope"}, &out, &errOut)
	if err == nil || !strings.Contains(err.Error(), `no gauge "nope"`) {
		t.Errorf("unknown gauge: err %v", err)
	}
}

// A state gauge (a digital input) prints its state, not a unit conversion's
// NaN: a discrete input read as 1 is "on", as in the configs' on/off.
func TestPrintResultState(t *testing.T) {
	for v, want := range map[float64]string{1: "-> on (1)", 0: "-> off (0)"} {
		var out bytes.Buffer
		printResult(&out, daemon.ProbeResult{
			Reading: drivers.Reading{Raw: v, Status: drivers.StatusOK},
			Sample:  calib.Sample{Raw: v, Value: v, Quality: calib.QualityOK},
			Kind:    "state",
		})
		if !strings.Contains(out.String(), want) || strings.Contains(out.String(), "NaN") {
			t.Errorf("state %g printed %q, want %q", v, out.String(), want)
		}
	}
}

func TestPrintable(t *testing.T) {
	if got, want := printable([]byte("READ 1\r\n\x06\x05")), `READ 1\r\n\x06\x05`; got != want {
		t.Errorf("printable = %q, want %q", got, want)
	}
}
