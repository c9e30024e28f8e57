package daemon

import (
	"context"
	"net/http"
	"os"
	"path/filepath"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

// The calibration example's first steady step comes within a minute: a
// point over the first minute is accepted (the example used to pump down
// from atmosphere for 25 minutes first, so a person following it at the
// README's speed waited for nothing). The vessel starts sealed at 5 Pa;
// its outgassing, 1e-8 Pa·m³/s in 45 L, raises it by 1e-8/0.045 Pa/s, about
// 0.013 mPa over a minute (from the hour's rate, even tens of times higher
// just after the start, far below the 0.5 % drift limit of 25 mPa).
func TestCalibrationExampleFirstStepWithinAMinute(t *testing.T) {
	cfg, err := config.LoadConfig(filepath.Join("..", "deploy", "examples", "calibration.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	if err := os.WriteFile(tok, []byte(tok+"-0123456789abcdef\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg.Store.Dir, cfg.HTTP.TokenFile, cfg.HTTP.Listen = dir, tok, "127.0.0.1:0"
	start := time.Now()
	clock := sim.NewClock(start, 300)
	d, err := New(cfg, Options{Clock: clock})
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
	b := &liveBench{t: t, d: d, clock: clock, start: start, token: tok + "-0123456789abcdef"}
	b.waitUntil(start.Add(65 * time.Second))
	var e apiErr
	req := pointRequest{Gauge: "foreline", Reference: ptr(5.0), At: start.Add(time.Minute)}
	if code := b.call("POST", "/api/v1/calibrations/points", req, &e); code != http.StatusCreated {
		t.Errorf("point over the example's first minute: status %d (%s); want 201, the first step steady", code, e.Error)
	}
}
