package daemon

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"image/png"
	"io"
	"log/slog"
	"net/http"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"testing/synctest"
	"time"

	"holdfast/alerts"
	"holdfast/alerts/notify"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
	"holdfast/daemon/report"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

// reportConfig is an invented bench: a Pirani read every 10 s, an
// ionisation gauge, a wall thermocouple and a pump-down deadline.
const reportConfig = `
chamber: {name: bake-2, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: DIR}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}
      crossover: 10 Pa
      leak: 2e-9 Pa*m3/s
      outgassing: 1.5e-4 Pa*m3/s
      seed: 3
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, unit: mbar, interval: 10s}
  ion: {link: bench, driver: sim, instrument: ion, kind: pressure, unit: mbar, interval: 2s}
  wall: {link: bench, driver: sim, instrument: thermocouple, where: wall, kind: temperature, interval: 30s}
alarms:
  - {name: rough-in-time, gauge: pirani, pump_down: {target: 1 Pa, within: 2h}}
  - {name: wall-hot, gauge: wall, above: 120 C, severity: high}
  - {name: ion-silent, gauge: ion, stale: 2 min, severity: medium}
EXTRA`

func reportCfg(t *testing.T, dir, extra string) *config.Config {
	t.Helper()
	text := strings.NewReplacer("DIR", dir, "EXTRA", extra).Replace(reportConfig)
	cfg, err := config.ParseConfig("report.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	return cfg
}

// fillNight stores an invented night from t0: the Pirani pumps down from
// 1000 mbar, loses its link for 30 min at 02:00 and reports a sensor fault
// for 20 min at 05:00; the ion gauge never answers; the wall heats to
// 150 °C. wall-hot is raised and cleared, ion-silent is raised and never
// cleared, and one hold test passes.
func fillNight(t *testing.T, db *store.DB, t0 time.Time) {
	t.Helper()
	for s := 0; s < 10*3600; s += 10 {
		at := t0.Add(time.Duration(s) * time.Second)
		h := float64(s) / 3600
		switch {
		case h >= 2 && h < 2.5:
			continue
		case h >= 5 && h < 5+20.0/60:
			db.Append("pirani", store.Point{At: at, Value: 0, Quality: uint8(calib.QualitySensorFault)})
			continue
		}
		// p = 1e5 Pa / 2^⌊s / 6 min⌋, down to a floor of 1e-2 Pa: below
		// the rule's start (900 mbar = 9e4 Pa) from the first halving at
		// 6 min; at or below 1 Pa once 2^k ≥ 1e5, k = 17 (2^16 = 65 536,
		// 2^17 = 131 072), at 17 × 6 = 102 min: 96 min of pumping.
		p := max(1e5/float64(uint64(1)<<min(uint64(s/360), 62)), 1e-2)
		db.Append("pirani", store.Point{At: at, Value: p})
		if s%30 == 0 {
			db.Append("wall", store.Point{At: at, Value: 22 + min(128, 64*h)})
		}
	}
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	st, err := alarmstore.Open(db.Bolt())
	if err != nil {
		t.Fatal(err)
	}
	ev := func(alarm string, k alerts.EventKind, sev alerts.Severity, h float64) alerts.Event {
		return alerts.Event{Kind: k, Alarm: alarm, Severity: sev, At: t0.Add(time.Duration(h * float64(time.Hour))), Value: 1, Limit: 1}
	}
	if err := st.Save(nil, []alerts.Event{ev("ion-silent", alerts.Raised, "medium", 0.05),
		ev("wall-hot", alerts.Raised, "high", 1.6), ev("wall-hot", alerts.Acked, "high", 1.7),
		ev("wall-hot", alerts.Cleared, "high", 3)}); err != nil {
		t.Fatal(err)
	}
	id, err := st.NewHoldTestID()
	if err != nil {
		t.Fatal(err)
	}
	h := HoldTestJSON{ID: id, Gauge: "pirani", State: holdDone, RecordFrom: t0.Add(8 * time.Hour), RecordTo: t0.Add(8*time.Hour + 10*time.Minute),
		Verdict: "pass", Unit: "mbar*L/s", Result: &alerts.RiseResult{LeakRate: 3e-9, Classification: alerts.LeakDominated}}
	b, _ := json.Marshal(h)
	if err := st.PutHoldTest(id, "report.json", b); err != nil {
		t.Fatal(err)
	}
}

func openStore(t *testing.T, dir string) *store.DB {
	t.Helper()
	db, err := store.Open(StorePath(dir), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return db
}

func TestReportGathersGapsSilentGaugeAndActiveAlarm(t *testing.T) {
	dir := t.TempDir()
	cfg := reportCfg(t, dir, "")
	db := openStore(t, dir)
	defer db.Close()
	t0 := time.Date(2026, 3, 1, 20, 0, 0, 0, time.UTC)
	fillNight(t, db, t0)
	n, err := gatherNight(cfg, db, t0, t0.Add(10*time.Hour), t0.Add(10*time.Hour))
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, s := range n.Series {
		names = append(names, s.Kind+":"+s.Gauge)
	}
	if want := []string{"pressure:ion", "pressure:pirani", "temperature:wall"}; !slices.Equal(names, want) {
		t.Errorf("series %q, want %q", names, want)
	}
	if n.Pressure.Symbol() != "mbar" || n.Temperature.Symbol() != "°C" {
		t.Errorf("units %s and %s, want the gauges' mbar and °C", n.Pressure.Symbol(), n.Temperature.Symbol())
	}
	if len(n.Series[0].Points) != 0 {
		t.Errorf("ion: %d points, want none (it never answered)", len(n.Series[0].Points))
	}
	// The Pirani's line may join points at most 3 intervals + the timeout
	// (3 × 10 s + 2 s) or 2.5 buckets of the reduction (10 h / 400 × 2.5 =
	// 225 s) apart: the 30 min gap must break it.
	if got := n.Series[1].MaxStep; got != 225*time.Second {
		t.Errorf("pirani MaxStep %s, want 3m45s", got)
	}
	if c := n.Counts(); c != (report.AlarmCounts{Raised: 2, Cleared: 1, Active: 1}) {
		t.Errorf("alarm counts %+v, want 2 raised, 1 cleared, 1 active", c)
	}
	pd := n.PumpDowns[0]
	if want := t0.Add(102 * time.Minute); !pd.Reached.Equal(want) || !pd.Began.Equal(t0.Add(6*time.Minute)) {
		t.Errorf("pump-down began %v reached %v, want %v and %v", pd.Began, pd.Reached, t0.Add(6*time.Minute), want)
	}
	if len(n.HoldTests) != 1 || n.HoldTests[0].LeakRate != 3e-9 {
		t.Errorf("hold tests %+v, want the one stored", n.HoldTests)
	}
	for _, f := range report.Formats {
		var buf bytes.Buffer
		if err := report.Write(&buf, n, f); err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		if f == "png" {
			if _, err := png.Decode(&buf); err != nil {
				t.Errorf("png: %v", err)
			}
		}
		if f == "html" {
			for _, want := range []string{"ion</td>", "no data: never answered", "1 still active", "ion-silent [medium] raised",
				"0.01 mbar reached at", "1 h 36 min after pumping began", "150 °C",
				// 10 h at 10 s is 3600 readings, less the 30 min gap (180):
				// 3420, of which the 20 min of faults (120) are not ok, 3.5 %.
				"3420 readings, 120 not ok (3.5 %)"} {
				if !strings.Contains(buf.String(), want) {
					t.Errorf("html lacks %q", want)
				}
			}
		}
	}
}

func TestReportFromDirReadOnlyAndWhileHeld(t *testing.T) {
	dir := t.TempDir()
	cfg := reportCfg(t, dir, "")
	db := openStore(t, dir)
	t0 := time.Date(2026, 3, 1, 20, 0, 0, 0, time.UTC)
	fillNight(t, db, t0)
	start := time.Now()
	err := ReportFromDir(io.Discard, cfg, t0, t0.Add(10*time.Hour), "svg")
	if !errors.Is(err, ErrDataInUse) {
		t.Fatalf("while the store is held: %v, want ErrDataInUse", err)
	}
	if el := time.Since(start); el > 5*time.Second {
		t.Errorf("took %s to give up; want it to fail fast", el)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	before, _ := os.ReadFile(StorePath(dir))
	var buf bytes.Buffer
	if err := ReportFromDir(&buf, cfg, t0, t0.Add(10*time.Hour), "html"); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(buf.String(), "wall-hot") {
		t.Error("report from the directory lacks the stored alarm")
	}
	if after, _ := os.ReadFile(StorePath(dir)); !bytes.Equal(before, after) {
		t.Error("reading the directory changed the store file")
	}
}

// recorder keeps what a notifier was sent.
type recorder struct {
	mu  sync.Mutex
	got []notify.Transition
}

func (r *recorder) Send(_ context.Context, batch []notify.Transition) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.got = append(r.got, batch...)
	return nil
}

// The schedule runs on the daemon's clock: with at 07:00 and every 24h the
// first report covers the day up to the first 07:00 (local) after the
// start and the next one follows a day later; each sends its link to the
// webhook but not to the Alertmanager.
func TestScheduledReportSendsItsLink(t *testing.T) {
	dir := t.TempDir()
	key := filepath.Join(dir, "hook.key")
	if err := os.WriteFile(key, []byte("k"), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg := reportCfg(t, dir, `
notify:
  - {name: hook, webhook: {url: "http://127.0.0.1:1/unused", secret_file: `+key+`}, group_wait: 0s}
  - {name: am, alertmanager: {url: "http://127.0.0.1:1"}, group_wait: 0s}
report: {at: "07:00", format: svg, notify: true, url: "https://bench.example.internal", keep: 1}
`)
	synctest.Test(t, func(t *testing.T) {
		db := openStore(t, dir)
		defer db.Close()
		start := time.Now()
		fillNight(t, db, start)
		d := &Daemon{log: slog.New(slog.DiscardHandler), clock: bubble{}, store: db}
		d.cfgp.Store(cfg)
		ns, err := newNotifierSet(cfg, db.Bolt(), bubble{}, d.log)
		if err != nil {
			t.Fatal(err)
		}
		hook, am := &recorder{}, &recorder{}
		ns.sinks[0].send, ns.sinks[1].send = hook, am
		d.ntf = ns
		ctx, cancel := context.WithCancel(t.Context())
		var wg sync.WaitGroup
		wg.Go(func() { ns.ob.Run(ctx) })
		wg.Go(func() { d.reportLoop(ctx) })

		// The first 07:00 local after the start, worked out apart from the
		// daemon's code: midnight of the start's local day plus 7 h, a day
		// later when that is not after the start.
		l := start.In(time.Local)
		first := time.Date(l.Year(), l.Month(), l.Day(), 7, 0, 0, 0, time.Local)
		if !first.After(start) {
			first = time.Date(l.Year(), l.Month(), l.Day()+1, 7, 0, 0, 0, time.Local)
		}
		time.Sleep(first.Sub(start) - time.Second)
		synctest.Wait()
		if ents, _ := os.ReadDir(cfg.ReportDir()); len(ents) != 0 {
			t.Fatalf("%d files before 07:00, want none", len(ents))
		}
		time.Sleep(2 * time.Second)
		synctest.Wait()
		name1 := "report-bake-2-" + first.Format("2006-01-02T1504") + ".svg"
		if _, err := os.Stat(filepath.Join(cfg.ReportDir(), name1)); err != nil {
			t.Fatalf("no first report: %v", err)
		}
		time.Sleep(24 * time.Hour)
		synctest.Wait()
		cancel()
		wg.Wait()
		second := time.Date(first.Year(), first.Month(), first.Day()+1, 7, 0, 0, 0, time.Local)
		name2 := "report-bake-2-" + second.Format("2006-01-02T1504") + ".svg"
		ents, _ := os.ReadDir(cfg.ReportDir())
		if len(ents) != 1 || ents[0].Name() != name2 {
			t.Errorf("report directory holds %v, want only %s (keep: 1)", ents, name2)
		}
		var links []string
		for _, tr := range hook.got {
			if tr.Event != notify.EventReport {
				t.Errorf("hook got %s %s, want only report events", tr.Alarm, tr.Event)
			}
			links = append(links, tr.Link)
		}
		want := []string{"https://bench.example.internal/api/v1/reports/" + name1, "https://bench.example.internal/api/v1/reports/" + name2}
		if !slices.Equal(links, want) {
			t.Errorf("links sent %q, want %q", links, want)
		}
		if len(am.got) != 0 {
			t.Errorf("the Alertmanager got %d report notifications, want none", len(am.got))
		}
	})
}

// Every problem of the report: section at once, each with its line
// (report: is line 23 of the text below: 21 lines of reportConfig, the
// blank line EXTRA starts with, then the section).
func TestReportConfigProblems(t *testing.T) {
	dir := t.TempDir()
	text := strings.NewReplacer("DIR", dir, "EXTRA", `
report:
  every: 10s
  at: "7 am"
  format: gif
  url: "ftp://x"
  unit: furlong
  keep: -1
  notify: true
`).Replace(reportConfig)
	_, err := config.ParseConfig("report.yaml", []byte(text))
	var ce *config.ConfigError
	if !errors.As(err, &ce) {
		t.Fatalf("got %v, want a *ConfigError", err)
	}
	got := ce.Error()
	for _, want := range []string{
		`report.yaml:24: report.every: want at least 1m`,
		`report.yaml:25: report.at: want a time of day as HH:MM`,
		`report.yaml:26: report.format: want one of html, svg, png, pdf, got "gif"`,
		`report.yaml:27: report.url: want an http:// or https:// URL`,
		`report.yaml:28: report.unit:`,
		`report.yaml:29: report.keep: want a count`,
		`report.yaml:30: report.notify: no notifiers are configured`,
	} {
		if !strings.Contains(got, want) {
			t.Errorf("problems lack %q:\n%s", want, got)
		}
	}
}

// Through a running daemon's API: a report of the last minutes in each
// format, bad requests refused with a reason, and no path out of the
// report directory.
func TestReportAPI(t *testing.T) {
	dir := t.TempDir()
	cfg := reportCfg(t, dir, "")
	start := time.Now()
	clock := sim.NewClock(start, 600)
	d, err := New(cfg, Options{Clock: clock})
	if err != nil {
		t.Fatal(err)
	}
	defer runInBackground(t, d)()
	for clock.Now().Sub(start) < 10*time.Minute {
		time.Sleep(20 * time.Millisecond)
	}
	get := func(path string) (int, string, []byte) {
		resp, err := http.Get("http://" + d.Addr() + path)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		b, _ := io.ReadAll(resp.Body)
		return resp.StatusCode, resp.Header.Get("Content-Type"), b
	}
	for _, f := range report.Formats {
		code, ctype, b := get("/api/v1/report?last=10m&format=" + f)
		if code != 200 || ctype != report.ContentType(f) || len(b) < 1000 {
			t.Errorf("%s: %d %s, %d bytes", f, code, ctype, len(b))
		}
	}
	for path, want := range map[string]int{
		"/api/v1/report?format=gif":                        400,
		"/api/v1/report?last=-1h":                          400,
		"/api/v1/report?from=2026-03-01T00:00:00Z&last=1h": 400,
		"/api/v1/reports/..%2fholdfast.db":                 404,
		"/api/v1/reports/report-x-2026-03-01T0700.html":    404,
	} {
		if code, _, b := get(path); code != want {
			t.Errorf("%s: %d %s, want %d", path, code, b, want)
		}
	}
}
