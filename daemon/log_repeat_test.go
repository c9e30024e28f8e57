package daemon

import (
	"bytes"
	"encoding/json"
	"errors"
	"holdfast/daemon/config"
	"log/slog"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"
)

// A disk-full episode logs an identical error hundreds of times a second.
// The daemon's logger passes the first at once, holds back the repeats for
// 10 s and then logs one summary with their count, counted in
// holdfast_log_errors_suppressed_total; other errors and other levels pass.
func TestRepeatedErrorsAreSummed(t *testing.T) {
	dir := t.TempDir()
	cfg, err := config.ParseConfig("repeat.yaml", []byte(`
chamber: {name: repeat, volume: 10 L}
store: {dir: `+dir+`}
http: {listen: "127.0.0.1:0"}
links: {s: {simulator: {rough_pump: {speed: 2 m3/h}}}}
gauges: {p: {link: s, driver: sim, instrument: pirani, kind: pressure}}
`))
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	d, err := New(cfg, Options{Log: slog.New(slog.NewJSONHandler(&buf, nil))})
	if err != nil {
		t.Fatal(err)
	}
	defer d.closeAll()
	d.ln.Close()
	now := time.Date(2031, 6, 1, 3, 0, 0, 0, time.UTC)
	if d.repeats == nil {
		t.Fatal("the daemon's logger holds nothing back")
	}
	d.repeats.shared.now = func() time.Time { return now }
	full := errors.New("write holdfast.db: no space left on device")
	log := d.log.With("part", "alarms")
	for i := range 675 { // 675 lines in 13 s, as in the fault trial
		now = now.Add(13 * time.Second / 675)
		log.Error("alarm transition not queued for notification", "alarm", "rough-lost", "err", full, "try", i)
		if i%100 == 0 {
			log.Error("alarm transition not queued for notification", "alarm", "fore-high", "err", full)
			log.Warn("gauge not answering", "gauge", "p")
		}
	}
	now = now.Add(10 * time.Second)
	d.repeats.Flush()
	type line struct {
		Level, Msg, Message, Alarm string
		Count                      int
	}
	var lines []line
	for _, s := range strings.Split(strings.TrimSpace(buf.String()), "\n") {
		var l line
		if err := json.Unmarshal([]byte(s), &l); err != nil {
			t.Fatalf("%v: %s", err, s)
		}
		lines = append(lines, l)
	}
	count := map[string]int{}
	summed := 0
	for _, l := range lines {
		count[l.Level+" "+l.Msg+" "+l.Alarm]++
		if l.Msg == "error repeated" {
			summed += l.Count
		}
	}
	// rough-lost: the first at 0 s, the repeats until 10 s held back, the
	// first after 10 s passed (a new interval), the rest held back again:
	// 2 lines, 2 summaries. fore-high: 7 lines, at 0, 1.9, ... 11.6 s: 2 pass.
	if n := count["ERROR alarm transition not queued for notification rough-lost"]; n != 2 {
		t.Errorf("%d rough-lost lines, want 2 (one per 10 s interval)", n)
	}
	if n := count["ERROR alarm transition not queued for notification fore-high"]; n != 2 {
		t.Errorf("%d fore-high lines, want 2", n)
	}
	if n := count["WARN gauge not answering "]; n != 7 {
		t.Errorf("%d warnings, want all 7 (only errors are held back)", n)
	}
	if want := 675 + 7 - 4; summed != want {
		t.Errorf("summaries count %d repeats, want %d", summed, want)
	}
	if got := testutil.ToFloat64(d.repeats.shared.suppressed); got != float64(summed) {
		t.Errorf("holdfast_log_errors_suppressed_total %v, want %d", got, summed)
	}
	if len(lines) > 20 {
		t.Errorf("%d lines for one episode; want a handful", len(lines))
	}
}
