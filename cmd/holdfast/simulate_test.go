//go:build linux

package main

import (
	"bytes"
	"context"
	"io"
	"log/slog"
	"math"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers"
)

// bannerWriter collects a command's output and closes ready once want has
// been printed.
type bannerWriter struct {
	mu    sync.Mutex
	buf   bytes.Buffer
	want  string
	ready chan struct{}
	once  sync.Once
}

func newBannerWriter(want string) *bannerWriter {
	return &bannerWriter{want: want, ready: make(chan struct{})}
}

func (w *bannerWriter) Write(p []byte) (int, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	w.buf.Write(p)
	if strings.Contains(w.buf.String(), w.want) {
		w.once.Do(func() { close(w.ready) })
	}
	return len(p), nil
}

func (w *bannerWriter) String() string {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.buf.String()
}

func example(name string) string { return filepath.Join("..", "..", "deploy", "examples", name) }

// startSimulate runs holdfast simulate with args, serving at dev, until
// the test ends, and returns its output once the banner is printed. At the
// end it checks that the command stopped cleanly and removed dev.
func startSimulate(t *testing.T, dev string, args ...string) *bannerWriter {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	out, errOut := newBannerWriter("Ctrl-C stops"), &bytes.Buffer{}
	done := make(chan error, 1)
	go func() { done <- run(ctx, append([]string{"simulate", "--pty", dev}, args...), out, errOut) }()
	stop := func() error {
		cancel()
		select {
		case err := <-done:
			return err
		case <-time.After(10 * time.Second): // a bound on a hang, not a timing check
			t.Fatal("simulate did not return within 10 s of its context ending")
		}
		return nil
	}
	select {
	case <-out.ready:
	case err := <-done:
		t.Fatalf("simulate returned before serving: %v\nstdout:\n%s\nstderr:\n%s", err, out, errOut)
	case <-time.After(10 * time.Second):
		t.Fatalf("no banner within 10 s; stdout:\n%s", out)
	}
	t.Cleanup(func() {
		if err := stop(); err != nil {
			t.Errorf("simulate: %v\nstderr:\n%s", err, errOut)
		}
		if _, err := os.Lstat(dev); !os.IsNotExist(err) || !strings.Contains(out.String(), "stopped; "+dev+" removed") {
			t.Errorf("after stopping, %s: %v; output:\n%s", dev, err, out)
		}
	})
	return out
}

// probeExample loads an example daemon config with its device moved to
// dev and probes one gauge through it.
func probeExample(t *testing.T, file, dev, gauge string) daemon.ProbeResult {
	t.Helper()
	cfg, err := config.LoadConfig(example(file))
	if err != nil {
		t.Fatal(err)
	}
	for _, l := range cfg.Links {
		for _, s := range []*config.SerialLinkConfig{l.Serial, l.ModbusRTU} {
			if s != nil {
				s.Device = dev
			}
		}
	}
	p, err := daemon.OpenProbe(cfg, gauge, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	return p.Read(context.Background())
}

// The example pair: simulate serves pty-sim.yaml and the daemon's view,
// pty-demo.yaml, reads every gauge, the READ ALL reply feeding three of them.
func TestSimulateServesPtyDemo(t *testing.T) {
	dev := filepath.Join(t.TempDir(), "holdfast-sim")
	out := startSimulate(t, dev, "--config", example("pty-sim.yaml"))
	for _, want := range []string{"1  lock-cdg", "4  lock-wall", `"READ 1\r" -> "CH1 1.467E+01 mbar ABOVE\r\n"`, `"READ ALL\r" -> "CH1 `} {
		if !strings.Contains(strings.Join(strings.Fields(out.String()), "  "), strings.Join(strings.Fields(want), "  ")) {
			t.Errorf("banner lacks %q:\n%s", want, out)
		}
	}
	// A second of wall time after the start the lock is still near
	// atmosphere: the CDG (10 Torr) and the Pirani are over-range and the
	// ionisation gauge is off; the wall is at the room's 21 °C.
	for _, c := range []struct {
		gauge  string
		status drivers.Status
	}{{"lock-cdg", drivers.StatusOverRange}, {"lock-pirani", drivers.StatusOverRange},
		{"lock-ion", drivers.StatusOff}, {"lock-wall", drivers.StatusOK}} {
		res := probeExample(t, "pty-demo.yaml", dev, c.gauge)
		if res.Err != nil || res.Reading.Status != c.status {
			t.Errorf("%s: reading %+v, err %v; want status %v", c.gauge, res.Reading, res.Err, c.status)
		}
	}
	if res := probeExample(t, "pty-demo.yaml", dev, "lock-wall"); math.Abs(res.Sample.Value-21) > 1.5 {
		t.Errorf("lock-wall = %v °C, want about 21", res.Sample.Value)
	}
}

func TestSimulateServesModbus(t *testing.T) {
	dev := filepath.Join(t.TempDir(), "holdfast-sim")
	out := startSimulate(t, dev, "--config", example("pty-sim.yaml"), "--protocol", "modbus", "--unit", "1")
	if !strings.Contains(out.String(), "input 6-7, C") {
		t.Errorf("banner lacks the register map:\n%s", out)
	}
	res := probeExample(t, "pty-modbus.yaml", dev, "lock-wall")
	if res.Err != nil || math.Abs(res.Sample.Value-21) > 1.5 {
		t.Errorf("lock-wall over Modbus: %+v, %v; want about 21 °C", res.Sample, res.Err)
	}
	// Near atmosphere the CDG's output is clipped at 1.1 full scale:
	// 11 Torr is 14.67 mbar (1 Torr = 101325/760 Pa, REFERENCES.md §1b).
	res = probeExample(t, "pty-modbus.yaml", dev, "lock-cdg")
	if res.Err != nil || math.Abs(res.Reading.Raw-11.0*101325/760/100) > 1e-3 {
		t.Errorf("lock-cdg over Modbus: raw %v, %v; want 14.67 mbar", res.Reading.Raw, res.Err)
	}
}

// Ending simulate removes its link; a dangling link is replaced; a real
// file, or a link to something that exists, is left alone.
func TestSimulatePortLink(t *testing.T) {
	dir := t.TempDir()
	dev := filepath.Join(dir, "port")
	if err := os.Symlink(filepath.Join(dir, "gone"), dev); err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	unlink, err := linkPort(dev, "/dev/null", &out)
	if err != nil || !strings.Contains(out.String(), "stale link") {
		t.Fatalf("replacing a dangling link: %v, output %q", err, out.String())
	}
	if target, _ := os.Readlink(dev); target != "/dev/null" {
		t.Errorf("link points at %q, want /dev/null", target)
	}
	if _, err := linkPort(dev, "/dev/zero", &out); err == nil || !strings.Contains(err.Error(), "another holdfast simulate") {
		t.Errorf("a live link: err = %v, want a refusal", err)
	}
	if err := unlink(); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink("/dev/null", dev); err != nil {
		t.Fatal(err)
	}
	if _, err := linkPort(dev, "/dev/zero", &out); err == nil || !strings.Contains(err.Error(), "no holdfast simulate made it") {
		t.Errorf("someone's own link to a device: err = %v, want a refusal", err)
	}
	os.Remove(dev)
	if _, err := os.Lstat(dev); !os.IsNotExist(err) {
		t.Errorf("link still there after unlink: %v", err)
	}
	if err := os.WriteFile(dev, []byte("notes"), 0o600); err != nil {
		t.Fatal(err)
	}
	if _, err := linkPort(dev, "/dev/null", &out); err == nil || !strings.Contains(err.Error(), "regular file") {
		t.Errorf("a regular file: err = %v, want a refusal", err)
	}
	if b, _ := os.ReadFile(dev); string(b) != "notes" {
		t.Errorf("the file now holds %q; it must be untouched", b)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("directory holds %d entries, want only the file (no temporary link left)", len(entries))
	}
}

func TestSimulateUsageErrors(t *testing.T) {
	dev := filepath.Join(t.TempDir(), "port")
	for _, c := range []struct {
		args []string
		want string
	}{
		{nil, "needs --config FILE and --pty PATH"},
		{[]string{"--config", "x.yaml", "--pty", dev, "--protocol", "serial"}, "--protocol must be ascii or modbus"},
		{[]string{"--config", "x.yaml", "--pty", dev, "--speed", "0"}, "--speed must be above 0"},
		{[]string{"--config", "x.yaml", "--pty", dev, "--unit", "248"}, "--unit must be 1 to 247"},
		{[]string{"--config", "x.yaml", "--pty", dev, "--pressure-unit", "L"}, "--pressure-unit"},
		{[]string{"--config", "x.yaml", "--pty", dev, "--protocol", "modbus", "--checksum"}, "belong to the ascii protocol"},
		{[]string{"--config", "x.yaml", "--pty", dev, "extra"}, "takes no arguments"},
		{[]string{"--config", example("pty-sim.yaml"), "--pty", dev, "--link", "nope"}, `no simulator link "nope" (simulator links: bench)`},
		{[]string{"--config", example("pty-demo.yaml"), "--pty", dev}, "has no simulator link"},
		{[]string{"--config", example("pty-sim.yaml"), "--pty", dev, "--address", "a b"}, "address: letters and digits only"},
	} {
		var out, errOut bytes.Buffer
		err := run(context.Background(), append([]string{"simulate"}, c.args...), &out, &errOut)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("simulate %q: err = %v, want %q", c.args, err, c.want)
		}
	}
	if _, err := os.Lstat(dev); !os.IsNotExist(err) {
		t.Errorf("a failed simulate left %s behind", dev)
	}
}

// The README's two terminals: the daemon runs pty-demo.yaml against
// simulate and every gauge, the three fed by one READ ALL reply included,
// reaches /metrics once the lock has pumped below the gauges' tops (at
// speed 60 the roughing pump's 14 s time constant takes about 2 s of wall
// time).
func TestSimulateFeedsTheDaemon(t *testing.T) {
	dir := t.TempDir()
	dev := filepath.Join(dir, "holdfast-sim")
	startSimulate(t, dev, "--config", example("pty-sim.yaml"), "--speed", "60")
	cfg, err := config.LoadConfig(example("pty-demo.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	cfg.Links["sim-port"].Serial.Device = dev
	cfg.Store.Dir, cfg.HTTP.Listen = dir, "127.0.0.1:0"
	d, err := daemon.New(cfg, daemon.Options{Log: slog.New(slog.NewTextHandler(t.Output(), &slog.HandlerOptions{Level: slog.LevelWarn}))})
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
	want := []string{`holdfast_pressure_pascals{gauge="lock-cdg"}`, `holdfast_pressure_pascals{gauge="lock-pirani"}`,
		`holdfast_temperature_celsius{gauge="lock-wall"}`, `holdfast_sensor_up{gauge="lock-ion"} 1`}
	tick := time.NewTicker(50 * time.Millisecond)
	defer tick.Stop()
	var page string
	for end := time.Now().Add(15 * time.Second); time.Now().Before(end); <-tick.C {
		if page = metricsPage(t, d.Addr()); containsAll(page, want) {
			return
		}
	}
	t.Errorf("after 15 s /metrics lacks some of %q:\n%s", want, page)
}

func metricsPage(t *testing.T, addr string) string {
	t.Helper()
	resp, err := http.Get("http://" + addr + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func containsAll(s string, subs []string) bool {
	for _, sub := range subs {
		if !strings.Contains(s, sub) {
			return false
		}
	}
	return true
}

// The RS-485 example: simulate with --address 07 --checksum serves
// pty-sim.yaml and rs485-sim.yaml reads it, address and checksum both ways.
func TestSimulateServesRS485Example(t *testing.T) {
	dev := filepath.Join(t.TempDir(), "holdfast-sim")
	out := startSimulate(t, dev, "--config", example("pty-sim.yaml"), "--address", "07", "--checksum")
	// The xor8 of the bytes "TO 07 READ 1 ~" is 0x41, by hand: 54^4F=1B,
	// ^20=3B, ^30=0B, ^37=3C, ^20=1C, ^52=4E, ^45=0B, ^41=4A, ^44=0E,
	// ^20=2E, ^31=1F, ^20=3F, ^7E=41 (checked with Python's functools.reduce).
	if !strings.Contains(out.String(), `"TO 07 READ 1 ~41\r" -> "FROM 07 CH1 `) {
		t.Errorf("banner lacks the addressed, checksummed exchange:\n%s", out)
	}
	// Near atmosphere the CDG (10 Torr) is over-range; the wall is at 21 °C.
	if res := probeExample(t, "rs485-sim.yaml", dev, "lock-cdg"); res.Err != nil || res.Reading.Status != drivers.StatusOverRange {
		t.Errorf("lock-cdg: reading %+v, err %v; want over-range", res.Reading, res.Err)
	}
	if res := probeExample(t, "rs485-sim.yaml", dev, "lock-wall"); res.Err != nil || math.Abs(res.Sample.Value-21) > 1.5 {
		t.Errorf("lock-wall: %+v, err %v; want about 21 °C", res.Sample, res.Err)
	}
}
