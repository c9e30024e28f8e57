package daemon

import (
	"context"
	"encoding/json"
	"errors"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

// reloadBase runs pirani each second and cdg on one simulated chamber.
const reloadBase = `
chamber: {name: reload, volume: 30 L}
http: {listen: "127.0.0.1:0", token_file: DIR/token}
store: {dir: DIR, flush_every: 100ms}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      seed: 4
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, interval: 1s}
  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure, interval: 1s}
`

const reloadToken = "a-reload-test-token-long-enough"

// reloadDaemon writes reloadBase to DIR/holdfast.yaml, starts a daemon on
// it at speed× the wall clock, and returns it with its config's path.
func reloadDaemon(t *testing.T, speed float64) (*Daemon, string) {
	t.Helper()
	return reloadDaemonOn(t, speed, reloadBase)
}

// reloadDaemonOn is reloadDaemon on the config text base.
func reloadDaemonOn(t *testing.T, speed float64, base string) (*Daemon, string) {
	t.Helper()
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "token"), []byte(reloadToken+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "holdfast.yaml")
	writeConfig(t, path, base)
	cfg, err := config.LoadConfig(path)
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), speed)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(runInBackground(t, d))
	return d, path
}

func writeConfig(t *testing.T, path, text string) {
	t.Helper()
	text = strings.ReplaceAll(text, "DIR", filepath.Dir(path))
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

// storedCount is how many samples of gauge the store holds, flushed.
func storedCount(t *testing.T, d *Daemon, gauge string) int {
	t.Helper()
	if err := d.store.Flush(); err != nil {
		t.Fatal(err)
	}
	n, err := d.store.Count(gauge)
	if err != nil {
		t.Fatal(err)
	}
	return n
}

// postReload posts to the reload endpoint with the token.
func postReload(t *testing.T, d *Daemon, token string) (int, ReloadJSON) {
	t.Helper()
	req, _ := http.NewRequest(http.MethodPost, "http://"+d.Addr()+reloadPath, nil)
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var out ReloadJSON
	json.NewDecoder(resp.Body).Decode(&out)
	return resp.StatusCode, out
}

// A reload through the API adds a gauge, which starts polling, and removes
// one, which stops while its stored samples stay; the unchanged link keeps
// its simulated chamber (its connection): the pump-down carries on rather
// than starting again from atmosphere.
func TestReloadAddsAndRemovesGauges(t *testing.T) {
	d, path := reloadDaemon(t, 20)
	waitFor(t, 10*time.Second, "samples of both gauges", func() bool { return storedCount(t, d, "pirani") > 3 && storedCount(t, d, "cdg") > 3 })
	chamber := d.links[0].sim

	if code, _ := postReload(t, d, ""); code != http.StatusUnauthorized {
		t.Errorf("reload without the token: status %d, want 401", code)
	}
	writeConfig(t, path, strings.Replace(reloadBase,
		"  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure, interval: 1s}\n",
		"  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature, interval: 1s}\n", 1))
	code, out := postReload(t, d, reloadToken)
	if code != http.StatusOK || !out.Applied {
		t.Fatalf("reload: status %d, %+v", code, out)
	}
	if want := "gauges added: wall\ngauges removed: cdg"; out.Changes != want {
		t.Errorf("changes %q, want %q", out.Changes, want)
	}
	if got := d.GaugeNames(); strings.Join(got, " ") != "pirani wall" {
		t.Errorf("gauges after the reload: %v, want pirani wall", got)
	}
	if d.links[0].sim != chamber {
		t.Error("the unchanged link got a new simulated chamber; want its connection kept")
	}
	waitFor(t, 10*time.Second, "wall polled", func() bool { return storedCount(t, d, "wall") > 3 })
	kept := storedCount(t, d, "cdg")
	if kept == 0 {
		t.Fatal("cdg's stored samples are gone")
	}
	before := storedCount(t, d, "pirani")
	waitFor(t, 10*time.Second, "more pirani samples", func() bool { return storedCount(t, d, "pirani") > before+5 })
	if n := storedCount(t, d, "cdg"); n != kept {
		t.Errorf("cdg stored %d samples after its removal had settled at %d; want it stopped", n, kept)
	}
}

// An invalid config is not applied: the old one keeps polling, every
// problem comes back with its line, and the reload metric says 0 until a
// good reload; a change that needs a restart is refused whole, by key.
func TestReloadRefusals(t *testing.T) {
	d, path := reloadDaemon(t, 20)
	waitFor(t, 10*time.Second, "samples", func() bool { return storedCount(t, d, "cdg") > 2 })
	if ok, m := reloadMetric(t, d); ok != "1" || m == "" {
		t.Errorf("at start: successful %q, timestamp %q; want 1 and a time", ok, m)
	}

	bad := strings.Replace(reloadBase, "interval: 1s}\n  cdg", "interval: 1ms, colour: red}\n  cdg", 1)
	writeConfig(t, path, bad)
	_, err := d.Reload(context.Background())
	var ce *config.ConfigError
	if !errors.As(err, &ce) {
		t.Fatalf("Reload of a bad file: %v; want a *config.ConfigError", err)
	}
	// Line 11 of reloadBase (after its leading blank line) is pirani's.
	for _, want := range []string{"holdfast.yaml:11: gauges.pirani.colour: unknown key", "holdfast.yaml:11: gauges.pirani.interval: must be at least"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("problems lack %q:\n%v", want, err)
		}
	}
	if ok, _ := reloadMetric(t, d); ok != "0" {
		t.Errorf("after a bad reload holdfast_config_last_reload_successful = %q, want 0", ok)
	}
	n := storedCount(t, d, "cdg")
	waitFor(t, 10*time.Second, "the old config polling on", func() bool { return storedCount(t, d, "cdg") > n+2 })

	writeConfig(t, path, strings.Replace(strings.Replace(reloadBase, "flush_every: 100ms", "flush_every: 200ms", 1),
		"seed: 4", "seed: 4\n  spare:\n    tcp: {address: \"127.0.0.1:9\"}", 1))
	code, out := postReload(t, d, reloadToken)
	if code != http.StatusConflict || out.Applied || !strings.Contains(out.Error, "store.flush_every; restart to apply") {
		t.Errorf("restart-only change: status %d, %+v; want 409 naming store.flush_every", code, out)
	}
	if len(d.links) != 1 {
		t.Errorf("a refused reload applied part of the change: %d links", len(d.links))
	}

	writeConfig(t, path, reloadBase)
	code, out = postReload(t, d, reloadToken)
	if code != http.StatusOK || out.Changes != "no changes" {
		t.Errorf("reload of the running config: status %d, %+v", code, out)
	}
	if ok, _ := reloadMetric(t, d); ok != "1" {
		t.Errorf("after a good reload holdfast_config_last_reload_successful = %q, want 1", ok)
	}
}

// reloadMetric scrapes the two reload series' values.
func reloadMetric(t *testing.T, d *Daemon) (ok, at string) {
	t.Helper()
	resp, err := http.Get("http://" + d.Addr() + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b := new(strings.Builder)
	if _, err := io.Copy(b, resp.Body); err != nil {
		t.Fatal(err)
	}
	for _, l := range strings.Split(b.String(), "\n") {
		if v, found := strings.CutPrefix(l, "holdfast_config_last_reload_successful "); found {
			ok = v
		}
		if v, found := strings.CutPrefix(l, "holdfast_config_last_reload_success_timestamp_seconds "); found {
			at = v
		}
	}
	return ok, at
}

// A gauge on a link that does not change keeps its schedule across good
// reloads: one stored sample per interval, with no gap and no extra poll
// where a reload happened.
func TestReloadNoGap(t *testing.T) {
	d, path := reloadDaemon(t, 5)
	waitFor(t, 10*time.Second, "samples", func() bool { return storedCount(t, d, "pirani") > 4 })
	var from time.Time // the last sample before the reloads; the daemon's start may stall on a loaded machine
	d.store.Range("pirani", time.Time{}, time.Now().Add(24*time.Hour*365), func(p store.Point) bool {
		from = p.At
		return true
	})
	for i, edit := range []string{
		strings.Replace(reloadBase, "interval: 1s}\n", "interval: 1s}\n  ion: {link: bench, driver: sim, instrument: ion, kind: pressure}\n", 1),
		strings.Replace(reloadBase, "cdg, full_scale: 133 kPa, kind: pressure, interval: 1s", "cdg, full_scale: 133 kPa, kind: pressure, interval: 2s", 1),
	} {
		writeConfig(t, path, edit)
		if _, err := d.Reload(context.Background()); err != nil {
			t.Fatalf("reload %d: %v", i, err)
		}
		n := storedCount(t, d, "pirani")
		waitFor(t, 10*time.Second, "polls after the reload", func() bool { return storedCount(t, d, "pirani") > n+4 })
	}
	// Poll k is due one interval after poll k-1's due time, whatever the
	// reads took; a stalled read (up to most of an interval on a loaded
	// machine) comes late in its own slot and the next catches up. So the
	// k-th sample lies in slot k: a missed poll leaves a slot empty, a
	// schedule started again at the reload puts two samples in one.
	var first time.Time
	k := 0
	d.store.Range("pirani", from, time.Now().Add(24*time.Hour*365), func(p store.Point) bool {
		if first.IsZero() {
			first = p.At
		}
		if slot := int((p.At.Sub(first) + 150*time.Millisecond) / time.Second); slot != k {
			t.Errorf("sample %d of pirani, %s after the first, is in slot %d; want one sample per 1 s interval", k, p.At.Sub(first), slot)
			return false
		}
		k++
		return true
	})
	if k < 10 {
		t.Errorf("%d samples of pirani after the first reload; want at least 10", k)
	}
}
