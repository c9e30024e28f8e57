package daemon

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

// scrapeConfig is a bench whose ion gauge stops answering 30 s in and
// answers again at 2 min, and whose foreline Pirani reports a sensor fault
// from 30 s on; a second ion gauge and the wall thermocouple stay well.
// An alarm, a webhook and remote write (both to a port nobody listens on)
// make their metric families appear too.
const scrapeConfig = `
chamber: {name: scrape-bench, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: DIR}
links:
  bench:
    simulator:
      start_pressure: 1e-3 Pa
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-7 Pa}
      crossover: 10 Pa
      seed: 9
      timeline:
        - {after: 30s, fail: {gauge: ion, mode: silent}}
        - {after: 30s, fail: {gauge: foreline, mode: fault}}
        - {after: 2m, recover: ion}
gauges:
  ion: {link: bench, driver: sim, instrument: ion, kind: pressure}
  foreline: {link: bench, driver: sim, instrument: pirani, kind: pressure}
  ion-b: {link: bench, driver: sim, instrument: ion, kind: pressure}
  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature}
alarms:
  - {name: too-high, gauge: ion-b, above: 1 Pa, severity: high}
notify:
  - {name: hook, webhook: {url: "http://127.0.0.1:9/hook", secret_file: SECRET}}
remote_write: {url: "http://127.0.0.1:9/api/v1/write"}
`

// scrapeDaemon starts a daemon on scrapeConfig at 60 simulated seconds per
// wall second and returns it; it stops when the test ends.
func scrapeDaemon(t *testing.T) *Daemon {
	t.Helper()
	dir := t.TempDir()
	secret := filepath.Join(dir, "hook.key")
	if err := os.WriteFile(secret, []byte("a hook secret of some length\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg, err := config.ParseConfig("scrape.yaml", []byte(strings.NewReplacer("DIR", dir, "SECRET", secret).Replace(scrapeConfig)))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), 60)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(runInBackground(t, d))
	return d
}

// scrapeAs GETs the daemon's /metrics over 127.0.0.1 with the given Accept
// header and returns the body and its Content-Type.
func scrapeAs(t *testing.T, d *Daemon, accept string) (body, contentType string) {
	t.Helper()
	req, err := http.NewRequestWithContext(t.Context(), "GET", "http://"+d.Addr()+"/metrics", nil)
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Accept", accept)
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil || resp.StatusCode != http.StatusOK {
		t.Fatalf("GET /metrics: %d, %v\n%s", resp.StatusCode, err, b)
	}
	return string(b), resp.Header.Get("Content-Type")
}

// hasLine reports whether the text exposition has exactly this line.
func hasLine(text, line string) bool {
	return strings.Contains("\n"+text, "\n"+line+"\n")
}

const textFormat = "text/plain; version=0.0.4"

// A real daemon's holdfast_sensor_quality tells the gauge's state, not its
// last sample's: the silent ion gauge says no-reply (its last sample was
// ok), the faulted Pirani sensor-fault, the healthy gauges ok; once the ion
// gauge answers again it says ok. No scrape says ok for a gauge whose
// holdfast_sensor_up is 0.
func TestSensorQualityOnRealDaemon(t *testing.T) {
	d := scrapeDaemon(t)
	var text string
	quality := func(g, q string) string { return fmt.Sprintf(`holdfast_sensor_quality{gauge=%q,quality=%q} 1`, g, q) }
	up := func(g, v string) string { return fmt.Sprintf(`holdfast_sensor_up{gauge=%q} %s`, g, v) }
	okWhileDown := func() {
		for _, g := range []string{"ion", "foreline", "ion-b", "wall"} {
			if hasLine(text, up(g, "0")) && hasLine(text, quality(g, "ok")) {
				t.Errorf("gauge %s is down and its quality says ok:\n%s", g, grepLines(text, `gauge="`+g+`"`))
			}
		}
	}
	waitFor(t, 20*time.Second, "the ion gauge to say no-reply and the Pirani sensor-fault", func() bool {
		text, _ = scrapeAs(t, d, textFormat)
		okWhileDown()
		return hasLine(text, quality("ion", "no-reply")) && hasLine(text, quality("foreline", "sensor-fault"))
	})
	for _, w := range []string{
		up("ion", "0"), up("foreline", "0"), quality("ion-b", "ok"), quality("wall", "ok"), up("ion-b", "1"), up("wall", "1"),
		`holdfast_sensor_quality{gauge="ion",quality="ok"} 0`,
	} {
		if !hasLine(text, w) {
			t.Errorf("scrape while the ion gauge is silent has no line %q:\n%s", w, grepLines(text, "holdfast_sensor_"))
		}
	}
	if strings.Contains(text, `holdfast_pressure_pascals{gauge="ion"}`) || strings.Contains(text, `holdfast_pressure_pascals{gauge="foreline"}`) {
		t.Error("a gauge that gives no value still exports a pressure")
	}
	waitFor(t, 20*time.Second, "the ion gauge to answer again", func() bool {
		text, _ = scrapeAs(t, d, textFormat)
		okWhileDown()
		return hasLine(text, quality("ion", "ok"))
	})
	if !hasLine(text, up("ion", "1")) {
		t.Errorf("the ion gauge answers again with quality ok but is not up:\n%s", grepLines(text, `gauge="ion"`))
	}
}

// grepLines returns the lines of text that contain s, for failure output.
func grepLines(text, s string) string {
	var out []string
	for l := range strings.Lines(text) {
		if strings.Contains(l, s) {
			out = append(out, l)
		}
	}
	return strings.Join(out, "")
}

// A real daemon's OpenMetrics scrape passes the strict checks of
// checkOpenMetrics (no family name twice, no clash of sample names such as
// the Go collector's go_memstats_alloc_bytes gauge against its
// go_memstats_alloc_bytes_total counter), and its text scrape passes
// promtool check metrics with nothing to say (when promtool is on PATH).
func TestScrapeIsStrictlyValid(t *testing.T) {
	d := scrapeDaemon(t)
	waitFor(t, 20*time.Second, "samples of every gauge", func() bool {
		text, _ := scrapeAs(t, d, textFormat)
		return strings.Count(text, "holdfast_last_sample_timestamp_seconds{") == 4
	})
	om, ctype := scrapeAs(t, d, "application/openmetrics-text; version=1.0.0; charset=utf-8")
	if !strings.HasPrefix(ctype, "application/openmetrics-text") {
		t.Fatalf("Content-Type %q; want application/openmetrics-text", ctype)
	}
	for _, err := range checkOpenMetrics(om) {
		t.Error(err)
	}
	for _, fam := range []string{"holdfast_sensor_up", "holdfast_notify_deliveries", "holdfast_remote_write_samples", "go_gc_duration_seconds", "process_cpu_seconds"} {
		if !strings.Contains(om, "# TYPE "+fam+" ") {
			t.Errorf("the OpenMetrics scrape has no family %s", fam)
		}
	}
	text, _ := scrapeAs(t, d, textFormat)
	promtool, err := exec.LookPath("promtool")
	if err != nil {
		t.Skip("promtool not on PATH (Debian: apt-get install prometheus); the text scrape is not checked by it")
	}
	ctx, cancel := context.WithTimeout(t.Context(), time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, promtool, "check", "metrics")
	cmd.Stdin = strings.NewReader(text)
	out, err := cmd.CombinedOutput()
	if err != nil || len(out) > 0 {
		t.Errorf("promtool check metrics: %v\n%s", err, out)
	}
}
