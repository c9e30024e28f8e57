package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// The built-in scenario is the shipped example, byte for byte, so users who
// copy deploy/examples/demo.yaml get what the demo runs.
func TestDemoConfigMatchesExample(t *testing.T) {
	want, err := os.ReadFile(filepath.Join("..", "..", "deploy", "examples", "demo.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(demoConfig, want) {
		t.Fatal("cmd/holdfast/demo.yaml differs from deploy/examples/demo.yaml; copy the example over it")
	}
}

// The demo runs end to end and exits cleanly when its time is up, printing
// events and a summary with stored samples.
func TestDemoRunsAndSummarises(t *testing.T) {
	var out, errOut bytes.Buffer
	dir := filepath.Join(t.TempDir(), "not", "yet") // a new user's --data need not exist
	err := run(context.Background(), []string{"demo", "--for", "1500ms", "--speed", "3000",
		"--listen", "127.0.0.1:0", "--data", dir}, &out, &errOut)
	if err != nil {
		t.Fatalf("demo: %v\nstderr:\n%s", err, errOut.String())
	}
	got := out.String()
	for _, want := range []string{"gauge-up", "rough-pirani", "summary after", "samples stored", "all gauges"} {
		if !strings.Contains(got, want) {
			t.Errorf("demo output lacks %q:\n%s", want, got)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "holdfast.db")); err != nil {
		t.Errorf("--data directory has no store: %v", err)
	}
}

func TestCheckCommand(t *testing.T) {
	var out, errOut bytes.Buffer
	err := run(context.Background(), []string{"check", "--config", filepath.Join("..", "..", "deploy", "examples", "demo.yaml")}, &out, &errOut)
	if err != nil || !strings.Contains(out.String(), ": ok: chamber demo-bake") {
		t.Errorf("check of the demo: err %v, out %q, stderr %q", err, out.String(), errOut.String())
	}
	out.Reset()
	errOut.Reset()
	err = run(context.Background(), []string{"check", "--config", filepath.Join("..", "..", "testdata", "config", "several-mistakes.yaml")}, &out, &errOut)
	if code, ok := err.(exitError); !ok || code != 1 {
		t.Errorf("check of a bad file: err %v, want exit status 1", err)
	}
	if n := strings.Count(errOut.String(), "several-mistakes.yaml:"); n < 10 {
		t.Errorf("check named %d problems, want every one:\n%s", n, errOut.String())
	}
}

// Each alarm prints once: the demo's event lines show it, so the log on
// stderr does not repeat it (a high alarm's raise is logged as WARN by
// `holdfast run`, and the demo shows WARN lines).
func TestDemoPrintsEachAlarmOnce(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "once.yaml")
	if err := os.WriteFile(cfg, []byte(`chamber: {name: once-bench, volume: 30 L}
store: {dir: /unused}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      seed: 3
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, unit: mbar, interval: 1s}
alarms:
  - {name: roughed-out, gauge: pirani, below: 10 mbar, deadband: 20%, severity: high}
`), 0o644); err != nil {
		t.Fatal(err)
	}
	var out, errOut bytes.Buffer
	// 5 m³/h on 30 L: p falls as e^(-S·t/V), from 1000 to 10 mbar in
	// t = (V/S)·ln 100 = (0.03 m³ / 1.39e-3 m³/s)·4.61 = 100 s simulated,
	// well within the 600 s the demo runs.
	err := run(context.Background(), []string{"demo", "--config", cfg, "--for", "1s", "--speed", "600", "--listen", "127.0.0.1:0"}, &out, &errOut)
	if err != nil {
		t.Fatalf("demo: %v\n%s", err, errOut.String())
	}
	// The Pirani's noise near 10 mbar is 0.2 % × (1 + p/p_t) = 2.2 % (p_t =
	// 100 Pa): the 20 % deadband is 9 σ, so the alarm is raised once, and
	// each raise prints one line whatever the noise does.
	raised := regexp.MustCompile(`alarm roughed-out \[high\] raised (\d+) time`).FindStringSubmatch(out.String())
	if n := strings.Count(out.String(), "alarm-raised   roughed-out"); raised == nil || strconv.Itoa(n) != raised[1] || n != 1 {
		t.Errorf("the raise printed %d times on stdout (summary: %v), want once:\n%s", n, raised, out.String())
	}
	if strings.Contains(errOut.String(), "roughed-out") {
		t.Errorf("the alarm is printed again by the log:\n%s", errOut.String())
	}
}
