package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

const bakeCfg = `
chamber: {name: bake-cli, volume: 30 L}
http: {listen: "127.0.0.1:0", token_file: TOKEN}
store: {dir: DIR}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      seed: 2
gauges:
  wall: {link: bench, driver: sim, instrument: thermocouple, where: wall, kind: temperature, interval: 5s}
  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure}
bake: {temperatures: [wall], pressure: cdg, start: api, ramp_up: 2 C/min, hold: 150 C, hold_for: 1h, cool_down: 1 C/min, max_temperature: 160 C}
`

// A bake started through the API (start: api) is listed as running, with
// its phase, by holdfast bake list and show; a second start is refused.
func TestBakeCommandsAgainstDaemon(t *testing.T) {
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	if err := os.WriteFile(tok, []byte("test-token-0123456789abcdef\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	text := strings.NewReplacer("DIR", dir, "TOKEN", tok).Replace(bakeCfg)
	cfg, err := config.ParseConfig("bake.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	d, err := daemon.New(cfg, daemon.Options{Clock: sim.NewClock(time.Now(), 50)})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	defer func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("Run: %v", err)
		}
	}()
	url := "http://" + d.Addr()
	run := func(args ...string) (string, error) {
		var out, errb bytes.Buffer
		err := cmdBake(context.Background(), append(args, "--daemon", url, "--token-file", tok), &out, &errb)
		return out.String() + errb.String(), err
	}
	if out, err := run("list"); err != nil || !strings.Contains(out, "no bakes recorded") {
		t.Fatalf("list before any bake: %q, %v", out, err)
	}
	if out, err := run("start"); err != nil || !strings.Contains(out, "bake 000001 started") {
		t.Fatalf("start: %q, %v", out, err)
	}
	if out, err := run("start"); err == nil || !strings.Contains(err.Error(), "already running") {
		t.Errorf("second start: %q, %v; want refused", out, err)
	}
	out, err := run("list", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var bs []daemon.BakeJSON
	if err := json.Unmarshal([]byte(out), &bs); err != nil || len(bs) != 1 || bs[0].Phase != "ramp" || bs[0].StartedBy != "request" {
		t.Fatalf("list --json: %q (%v)", out, err)
	}
	if out, err := run("show", "000001"); err != nil || !strings.Contains(out, "bake 000001 on bake-cli: ramp") || !strings.Contains(out, "hold 150 C") {
		t.Errorf("show: %q, %v", out, err)
	}
	if _, err := run("show", "000009"); err == nil || !strings.Contains(err.Error(), "no such bake") {
		t.Errorf("show of an unknown bake: %v; want no such bake", err)
	}
}
