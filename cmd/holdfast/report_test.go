package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

func TestReportTime(t *testing.T) {
	now := time.Date(2026, 3, 2, 7, 0, 0, 0, time.UTC)
	for _, c := range []struct {
		in   string
		want time.Time
	}{
		{"now", now},
		{"-8h", now.Add(-8 * time.Hour)},
		{"-90m", now.Add(-90 * time.Minute)},
		{"1772400000", time.Date(2026, 3, 1, 21, 20, 0, 0, time.UTC)}, // Unix seconds; by Python's datetime.fromtimestamp
		{"2026-03-01T19:00:00Z", time.Date(2026, 3, 1, 19, 0, 0, 0, time.UTC)},
	} {
		got, err := reportTime("from", c.in, now)
		if err != nil || !got.Equal(c.want) {
			t.Errorf("reportTime(%q) = %v, %v; want %v", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"-", "-soon", "yesterday", "2026-13-01T00:00:00Z"} {
		if _, err := reportTime("from", bad, now); err == nil || !strings.Contains(err.Error(), "--from") {
			t.Errorf("reportTime(%q): error %v, want one naming --from", bad, err)
		}
	}
	if _, _, err := reportPeriod("-2h", "now", "12h", now); err == nil {
		t.Error("--from with --last accepted")
	}
	if from, to, err := reportPeriod("", "now", "", now); err != nil || to.Sub(from) != 12*time.Hour {
		t.Errorf("default period %v to %v (%v), want the last 12 h", from, to, err)
	}
}

// The demo writes the report of its run and prints its path; holdfast
// report then reads the stopped demo's directory directly, and asks a
// daemon that holds the directory through its API.
func TestReportFromDemoDirectoryAndDaemon(t *testing.T) {
	dir := t.TempDir()
	var out, errOut bytes.Buffer
	if err := run(context.Background(), []string{"demo", "--for", "1500ms", "--speed", "3000",
		"--listen", "127.0.0.1:0", "--data", dir}, &out, &errOut); err != nil {
		t.Fatalf("demo: %v\n%s", err, errOut.String())
	}
	m := regexp.MustCompile(`report of the run: (\S+\.html)`).FindStringSubmatch(out.String())
	if m == nil {
		t.Fatalf("demo printed no report path:\n%s", out.String())
	}
	if b, err := os.ReadFile(m[1]); err != nil || !bytes.Contains(b, []byte("demo-bake")) || filepath.Dir(m[1]) != dir {
		t.Fatalf("report %s: %v (want it in the data directory, naming the chamber)", m[1], err)
	}

	cfgPath := filepath.Join("..", "..", "deploy", "examples", "demo.yaml")
	png := filepath.Join(t.TempDir(), "night.png")
	errOut.Reset()
	if err := run(context.Background(), []string{"report", "--config", cfgPath, "--data", dir, "--from", "-1h", "--to", "-1s",
		"--last", "", "-o", png}, &out, &errOut); err != nil {
		t.Fatalf("report from the directory: %v\n%s", err, errOut.String())
	}
	if !strings.Contains(errOut.String(), "read "+dir+" directly") {
		t.Errorf("stderr %q does not say the directory was read", errOut.String())
	}
	if b, err := os.ReadFile(png); err != nil || !bytes.HasPrefix(b, []byte("\x89PNG")) {
		t.Errorf("no PNG written: %v", err)
	}

	cfg, err := config.LoadConfig(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	cfg.Store.Dir, cfg.HTTP.Listen, cfg.HTTP.TokenFile = dir, "127.0.0.1:0", ""
	d, err := daemon.New(cfg, daemon.Options{Clock: sim.NewClock(time.Now(), 600)})
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
	svg := filepath.Join(t.TempDir(), "night.svg")
	errOut.Reset()
	if err := run(context.Background(), []string{"report", "--config", cfgPath, "--data", dir, "--daemon", "http://" + d.Addr(),
		"--last", "2h", "--to", "+0s", "-o", svg}, &out, &errOut); err == nil {
		t.Error("--to +0s accepted")
	}
	errOut.Reset()
	if err := run(context.Background(), []string{"report", "--config", cfgPath, "--data", dir, "--daemon", "http://" + d.Addr(),
		"--last", "2h", "-o", svg}, &out, &errOut); err != nil {
		t.Fatalf("report through the daemon: %v\n%s", err, errOut.String())
	}
	if !strings.Contains(errOut.String(), "a daemon holds "+dir+"; asking it at http://"+d.Addr()) {
		t.Errorf("stderr %q does not say the daemon was asked", errOut.String())
	}
	if b, err := os.ReadFile(svg); err != nil || !bytes.Contains(b, []byte("<svg")) {
		t.Errorf("no SVG written: %v", err)
	}
}
