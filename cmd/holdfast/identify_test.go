//go:build linux

package main

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
)

// syncBuffer is a log sink several goroutines write.
type syncBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (b *syncBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.Write(p)
}

func (b *syncBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

// serveSim runs holdfast simulate at dev until the returned stop is called
// (or the test ends), so a test can take one instrument off the line and
// put another on it.
func serveSim(t *testing.T, dev string, args ...string) (stop func()) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	out, errOut := newBannerWriter("Ctrl-C stops"), &syncBuffer{}
	done := make(chan error, 1)
	go func() { done <- run(ctx, append([]string{"simulate", "--pty", dev}, args...), out, errOut) }()
	select {
	case <-out.ready:
	case err := <-done:
		t.Fatalf("simulate returned before serving: %v\n%s\n%s", err, out, errOut)
	case <-time.After(10 * time.Second):
		t.Fatalf("no banner within 10 s; stdout:\n%s", out)
	}
	var once sync.Once
	stop = func() {
		once.Do(func() {
			cancel()
			select {
			case err := <-done:
				if err != nil {
					t.Errorf("simulate: %v\n%s", err, errOut)
				}
			case <-time.After(10 * time.Second): // a bound on a hang, not a timing check
				t.Error("simulate did not return within 10 s of its context ending")
			}
		})
	}
	t.Cleanup(stop)
	return stop
}

type apiGauge struct {
	Gauge  string `json:"gauge"`
	Up     bool   `json:"up"`
	Reason string `json:"reason"`
}

func gaugeState(t *testing.T, addr, name string) apiGauge {
	t.Helper()
	resp, err := http.Get("http://" + addr + "/api/v1/gauges")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var gs []apiGauge
	if err := json.NewDecoder(resp.Body).Decode(&gs); err != nil {
		t.Fatal(err)
	}
	for _, g := range gs {
		if g.Gauge == name {
			return g
		}
	}
	t.Fatalf("/api/v1/gauges has no %s", name)
	return apiGauge{}
}

func waitState(t *testing.T, addr, name, what string, cond func(apiGauge) bool) apiGauge {
	t.Helper()
	var g apiGauge
	for end := time.Now().Add(15 * time.Second); time.Now().Before(end); time.Sleep(50 * time.Millisecond) {
		if g = gaugeState(t, addr, name); cond(g) {
			return g
		}
	}
	t.Fatalf("after 15 s, %s: %+v", what, g)
	return g
}

// The identify: step of pty-demo.yaml keeps the link down while the port
// reaches another instrument. The other one is a second simulated chamber
// in which lock-pirani is named spare-pirani, so it sorts last and channel 3
// is the wall thermocouple: "READ 3" there answers "CH3 21.0 C GOOD", which
// lock-pirani's exchange pattern would accept and store as a pressure, the
// wrong-instrument hazard itself. Its "INFO 3" answer, "CH3 lock-wall
// thermocouple C", does not match the identity pattern, so no sample is
// stored while it is on the line; once the right instrument is back the link
// comes up on its reconnect backoff without a restart.
func TestIdentifyKeepsWrongInstrumentOff(t *testing.T) {
	dir := t.TempDir()
	dev := filepath.Join(dir, "holdfast-sim")
	src, err := os.ReadFile(example("pty-sim.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	other := filepath.Join(dir, "other-sim.yaml")
	if err := os.WriteFile(other, bytes.ReplaceAll(src, []byte("lock-pirani"), []byte("spare-pirani")), 0o644); err != nil {
		t.Fatal(err)
	}

	stop := serveSim(t, dev, "--config", example("pty-sim.yaml"))
	cfg, err := config.LoadConfig(example("pty-demo.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Links["sim-port"].Identify == nil {
		t.Fatal("pty-demo.yaml's sim-port has no identify: step")
	}
	cfg.Links["sim-port"].Serial.Device = dev
	cfg.Store.Dir, cfg.HTTP.Listen = dir, "127.0.0.1:0"
	logs := &syncBuffer{}
	d, err := daemon.New(cfg, daemon.Options{Log: slog.New(slog.NewTextHandler(logs, nil))})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	running := true
	stopDaemon := func() {
		if running {
			running = false
			cancel()
			if err := <-done; err != nil {
				t.Errorf("Run: %v", err)
			}
		}
	}
	defer func() {
		stopDaemon()
		if t.Failed() {
			t.Logf("daemon log:\n%s", logs)
		}
	}()

	waitState(t, d.Addr(), "lock-pirani", "lock-pirani up on the right instrument", func(g apiGauge) bool { return g.Up })
	if !strings.Contains(logs.String(), `msg="instrument identified" link=sim-port device=`+dev+` reply="CH3 lock-pirani pirani mbar"`) {
		t.Errorf("no INFO line with the identity reply that matched")
	}

	stop()
	swapped := time.Now()
	stop = serveSim(t, dev, "--config", other)
	g := waitState(t, d.Addr(), "lock-pirani", "lock-pirani down with the identity reason", func(g apiGauge) bool {
		return !g.Up && strings.Contains(g.Reason, "identity check failed")
	})
	if !strings.Contains(g.Reason, `"CH3 lock-wall thermocouple C"`) || !strings.Contains(g.Reason, "link sim-port down") {
		t.Errorf("reason %q: want the link, and the reply that did not match", g.Reason)
	}
	if w := gaugeState(t, d.Addr(), "lock-wall"); w.Up || w.Reason != g.Reason {
		t.Errorf("lock-wall, fed by the same link: %+v, want down with %q", w, g.Reason)
	}
	time.Sleep(2500 * time.Millisecond) // a few reopen attempts on the 200 ms..2 s backoff
	n := 0
	for _, line := range strings.Split(logs.String(), "\n") {
		if strings.Contains(line, `msg="cannot open link"`) && strings.Contains(line, "identity check failed") {
			n++
		}
	}
	if n != 1 {
		t.Errorf("the failed identity is logged %d times while it stays the same, want once (per state change)", n)
	}
	// The failed polls are counted as a wrong instrument, not as a link fault.
	resp, err := http.Get("http://" + d.Addr() + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	scrape, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	var wrong float64
	for _, line := range strings.Split(string(scrape), "\n") {
		if v, ok := strings.CutPrefix(line, `holdfast_poll_errors_total{gauge="lock-pirani",reason="wrong-instrument"} `); ok {
			wrong, _ = strconv.ParseFloat(v, 64)
		}
	}
	if wrong < 1 {
		t.Errorf("holdfast_poll_errors_total{reason=\"wrong-instrument\"} = %g while the identity check fails, want ≥ 1", wrong)
	}

	stop()
	back := time.Now()
	serveSim(t, dev, "--config", example("pty-sim.yaml"))
	waitState(t, d.Addr(), "lock-pirani", "lock-pirani up again after the swap back", func(g apiGauge) bool { return g.Up && g.Reason == "" })
	if !strings.Contains(logs.String(), `msg="link up again" link=sim-port`) {
		t.Error(`no "link up again" after the right instrument came back`)
	}
	stopDaemon()

	db, err := store.Open(daemon.StorePath(dir), store.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	// lock-pirani reads over-range at the simulated start (1 atm is above a
	// Pirani's top), so the thermocouple on the same link shows ok samples.
	var during, after int
	for _, gauge := range []string{"lock-pirani", "lock-wall"} {
		if err := db.Range(gauge, swapped, back, func(p store.Point) bool { during++; return true }); err != nil {
			t.Fatal(err)
		}
	}
	if err := db.Range("lock-wall", back, time.Now(), func(p store.Point) bool {
		if p.Quality == 0 {
			after++
		}
		return true
	}); err != nil {
		t.Fatal(err)
	}
	if during != 0 || after == 0 {
		t.Errorf("stored samples: %d while the other instrument was on the line (want 0), %d ok of lock-wall after the swap back (want some)", during, after)
	}
}
