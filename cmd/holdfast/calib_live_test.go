package main

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

// An invented bench: an isolated vessel vented in steps to pressures that
// hold, watched by the simulator's Pirani (its curve is an invented example,
// demo data and not a reference; REFERENCES.md §5b).
const cmdLiveConfig = `
chamber: {name: cli-bench, volume: 30 L}
http: {listen: "127.0.0.1:0", token_file: TOKEN}
store: {dir: DIR}
links:
  bench:
    simulator:
      start_pressure: 1 Pa
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      timeline:
        - {after: 0s, pump: "off"}
        - {after: 0s, valve: closed}
        - {after: 5m, vent: 30 Pa}
        - {after: 10m, vent: 400 Pa}
gauges:
  fore:
    link: bench
    driver: sim
    instrument: pirani
    kind: pressure
    digits: 6
    # A quiet sensor, so that no point is refused as drifting by chance.
    # Its pressure noise is noise·(1 + p/p_t) relative (p_t = 100 Pa):
    # 0.025 % at 400 Pa, and its floor 0.05 % at 1 Pa; the drift's standard
    # error over n samples is σ·√(12/n), under 0.06 % for n ≥ 10, so the
    # 0.5 % limit lies 9 standard errors out (drift check: 3).
    noise: 5e-5
    calibration: {use: active, reference_fluid: {name: bench oil, density: 870 kg/m3}}
`

// The stored workflow through the commands, against a daemon on 127.0.0.1.
func TestCalibLiveCommands(t *testing.T) {
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	os.WriteFile(tok, []byte("cli-bench-token-0123456789"), 0o600)
	cfg, err := config.ParseConfig("bench.yaml", []byte(strings.NewReplacer("DIR", dir, "TOKEN", tok).Replace(cmdLiveConfig)))
	if err != nil {
		t.Fatal(err)
	}
	start := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	clk := sim.NewClock(start, 600)
	d, err := daemon.New(cfg, daemon.Options{Clock: clk})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	defer func() { cancel(); <-done }()
	for deadline := time.Now().Add(20 * time.Second); clk.Now().Before(start.Add(15 * time.Minute)); {
		if time.Now().After(deadline) {
			t.Fatal("simulated clock stuck")
		}
		time.Sleep(10 * time.Millisecond) // waiting for the simulated bench, not timing logic
	}
	api := []string{"--daemon", "http://" + d.Addr(), "--token-file", tok}
	at := func(m int) string {
		return start.Add(time.Duration(m)*time.Minute - 20*time.Second).Format(time.RFC3339)
	}
	for _, args := range [][]string{
		{"--reference", "1Pa", "--at", at(5)},
		{"--reference", "0.225Torr", "--at", at(10)},   // 30.0 Pa
		{"--column-height", "4.688cm", "--at", at(15)}, // invented oil: 870 kg/m3 × 9.80665 × 0.04688 m = 399.97 Pa
	} {
		out, errOut, err := runCmd(t, append(append([]string{"calib", "point", "--gauge", "fore"}, args...), api...)...)
		if err != nil {
			t.Fatalf("calib point %v: %v\n%s", args, err, errOut)
		}
		if !strings.Contains(out, "point ") || !strings.Contains(out, "drift") {
			t.Errorf("calib point output: %q", out)
		}
	}
	if _, _, err := runCmd(t, append([]string{"calib", "point", "--gauge", "fore", "--reference", "5Pa"}, "--daemon", "http://"+d.Addr())...); err == nil || !strings.Contains(err.Error(), "token") {
		t.Errorf("calib point without a token: %v; want refused for want of a token", err)
	}
	out, errOut, err := runCmd(t, append([]string{"calib", "fit", "--gauge", "fore", "--model", "pirani", "--note", "bench, March"}, api...)...)
	if err != nil || !strings.Contains(out, "stored as calibration 1") {
		t.Fatalf("calib fit --gauge: %v\n%s%s", err, out, errOut)
	}
	if out, _, err = runCmd(t, append([]string{"calib", "activate", "1"}, api...)...); err != nil || !strings.Contains(out, "active for fore") {
		t.Fatalf("calib activate: %v %q", err, out)
	}
	// Activation says what the version covers and what happens outside it.
	for _, w := range []string{"fitted over raw ", " Pa; outside that the gauge reads on the heat-loss model extended", "quality extrapolated"} {
		if !strings.Contains(out, w) {
			t.Errorf("calib activate printed %q; want it to say %q", out, w)
		}
	}
	out, _, err = runCmd(t, append([]string{"calib", "list", "--json"}, api...)...)
	var recs []liveCal
	if err != nil || json.Unmarshal([]byte(out), &recs) != nil || len(recs) != 1 || recs[0].State != "active" || recs[0].Calibration.Fit.Points != 3 {
		t.Fatalf("calib list: %v %q", err, out)
	}
	svg := filepath.Join(dir, "fore-1.svg")
	if _, errOut, err := runCmd(t, append([]string{"calib", "plot", "1", "-o", svg}, api...)...); err != nil {
		t.Fatalf("calib plot 1: %v %s", err, errOut)
	}
	b, err := os.ReadFile(svg)
	if err != nil {
		t.Fatalf("calib plot wrote no SVG: %v", err)
	}
	// The stored version's three points, the legend's marker, and a curve.
	texts, paths := readSVG(t, b)
	if n := countStroke(paths, pointColor); n != 4 || !slices.Contains(texts, "fitted curve") {
		t.Errorf("calib plot 1: %d point markers (want 3 and the legend's), texts %q", n, texts)
	}
	out, _, err = runCmd(t, append([]string{"reprocess", "--gauge", "fore", "--calibration", "1", "--from", start.Format(time.RFC3339), "--to", start.Add(15 * time.Minute).Format(time.RFC3339)}, api...)...)
	if err != nil || !strings.Contains(out, "recomputed with calibration 1") {
		t.Fatalf("reprocess: %v %q", err, out)
	}
	out, _, err = runCmd(t, append([]string{"calib", "audit", "--gauge", "fore"}, api...)...)
	if err != nil || !strings.Contains(out, "reprocess") || !strings.Contains(out, "before: the instrument's own curve") {
		t.Errorf("calib audit: %v %q", err, out)
	}
	help, _, _ := runCmd(t, "calib", "--help")
	for _, want := range []string{"calib point --gauge", "calib activate", "holdfast reprocess", "local codes"} {
		if !strings.Contains(help, want) {
			t.Errorf("calib help lacks %q", want)
		}
	}
}
