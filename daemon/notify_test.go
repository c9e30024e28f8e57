package daemon

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"strings"
	"sync"
	"testing"
	"time"

	"holdfast/alerts"
	"holdfast/alerts/notify"
)

// logSignal is a slog handler that reports chosen messages on a channel.
type logSignal struct {
	ch chan string
}

func (h logSignal) Enabled(context.Context, slog.Level) bool { return true }
func (h logSignal) Handle(_ context.Context, r slog.Record) error {
	select {
	case h.ch <- r.Message:
	default:
	}
	return nil
}
func (h logSignal) WithAttrs([]slog.Attr) slog.Handler { return h }
func (h logSignal) WithGroup(string) slog.Handler      { return h }

func waitLog(t *testing.T, ch <-chan string, msg string, n int) {
	t.Helper()
	deadline := time.After(20 * time.Second)
	for n > 0 {
		select {
		case m := <-ch:
			if m == msg {
				n--
			}
		case <-deadline:
			t.Fatalf("no %q from the daemon", msg)
		}
	}
}

// receiver is a webhook endpoint on 127.0.0.1 that verifies signatures,
// refuses while failing, and counts accepted transitions by dedupe key.
type receiver struct {
	secret []byte
	mu     sync.Mutex
	fail   int // refuse this many more requests with 503
	got    map[string]int
	order  []string
	all    chan string // every accepted key
}

func (rc *receiver) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	body, _ := io.ReadAll(r.Body)
	if err := notify.Verify(r.Header, body, rc.secret, time.Now(), time.Minute); err != nil {
		http.Error(w, err.Error(), http.StatusUnauthorized)
		return
	}
	rc.mu.Lock()
	defer rc.mu.Unlock()
	if rc.fail > 0 {
		rc.fail--
		http.Error(w, "maintenance", http.StatusServiceUnavailable)
		return
	}
	var b notify.WebhookBody
	json.Unmarshal(body, &b)
	for _, tr := range b.Transitions {
		if rc.got[tr.DedupeKey] == 0 {
			rc.order = append(rc.order, tr.DedupeKey)
		}
		rc.got[tr.DedupeKey]++
		rc.all <- tr.DedupeKey
	}
}

// raiseEvent builds an event the way the engine does: the state after it
// and a dedupe key that is the same whenever the same transition is
// reported (here the time stands in for the engine's sequence number).
func raiseEvent(alarm string, kind alerts.EventKind, at time.Time) alerts.Event {
	st := map[alerts.EventKind]alerts.State{alerts.Raised: alerts.Unacknowledged, alerts.Cleared: alerts.Normal}[kind]
	return alerts.Event{Kind: kind, Alarm: alarm, Gauge: "pirani", Severity: "high", At: at, State: st,
		Value: 250, Limit: 100, Unit: "mbar", Message: "pirani " + string(kind) + " (invented test event)",
		DedupeKey: fmt.Sprintf("%s/%d/%s", alarm, at.Unix(), st)}
}

// dedupeKey is the key a receiver sees for ev from chamber.
func dedupeKey(chamber string, ev alerts.Event) string { return chamber + "/" + ev.DedupeKey }

// A receiver that is down (connection refused), then refusing (503), then
// up receives every transition, in order, exactly once by dedupe key: the
// outbox retries until a 2xx and never re-sends after one.
func TestWebhookDownThenUp(t *testing.T) {
	dir := t.TempDir()
	writeSecret(t, dir, "hook.key", "down-then-up secret")
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	addr := ln.Addr().String()
	ln.Close() // down: nothing listens
	cfg, err := parseNotify(t, dir, `
notify:
  - name: hook
    webhook: {url: "http://`+addr+`/hook", secret_file: DIR/hook.key}
    group_wait: 0s
    retry: {min: 20ms, max: 100ms}
`)
	if err != nil {
		t.Fatal(err)
	}
	logs := make(chan string, 1000)
	d, err := New(cfg, Options{Log: slog.New(logSignal{logs})})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(t.Context())
	done := make(chan error)
	go func() { done <- d.Run(ctx) }()
	t0 := time.Date(2031, 3, 4, 2, 0, 0, 0, time.UTC)
	evs := []alerts.Event{raiseEvent("a", alerts.Raised, t0), raiseEvent("b", alerts.Raised, t0.Add(time.Second)),
		raiseEvent("a", alerts.Cleared, t0.Add(2*time.Second))}
	for _, ev := range evs {
		d.notify(ev)
	}
	waitLog(t, logs, "notification not delivered; will retry", 3)

	rc := &receiver{secret: []byte("down-then-up secret"), fail: 2, got: map[string]int{}, all: make(chan string, 100)}
	ln, err = net.Listen("tcp", addr)
	if err != nil {
		t.Skipf("could not listen on %s again: %v", addr, err)
	}
	srv := &http.Server{Handler: rc}
	go srv.Serve(ln)
	defer srv.Close()
	more := []alerts.Event{raiseEvent("b", alerts.Cleared, t0.Add(3*time.Second)), raiseEvent("a", alerts.Raised, t0.Add(4*time.Second))}
	for _, ev := range more {
		d.notify(ev)
	}
	d.notify(evs[0]) // reported again: already queued, not queued twice
	evs = append(evs, more...)
	for range evs {
		select {
		case <-rc.all:
		case <-time.After(20 * time.Second):
			t.Fatalf("receiver has %v", rc.got)
		}
	}
	for { // each delivered batch is logged after its outcome is stored
		if hs, err := d.notifiers().ob.Health(); err == nil && hs[0].Queued == 0 {
			break
		}
		waitLog(t, logs, "notification delivered", 1)
	}
	metrics := scrapeText(t, d.Addr())
	cancel()
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	rc.mu.Lock()
	defer rc.mu.Unlock()
	for i, ev := range evs {
		key := dedupeKey("bakeout-3", ev)
		if rc.got[key] != 1 || rc.order[i] != key {
			t.Errorf("transition %d (%s): accepted %d times, position %q", i, key, rc.got[key], rc.order[i])
		}
	}
	if len(rc.got) != len(evs) {
		t.Errorf("accepted %d keys, want %d: %v", len(rc.got), len(evs), rc.got)
	}
	for _, want := range []string{`holdfast_notify_queue_length{notifier="hook"} 0`,
		`holdfast_notify_last_success_timestamp_seconds{notifier="hook"}`} {
		if !strings.Contains(metrics, want) {
			t.Errorf("metrics lack %s", want)
		}
	}
	if !strings.Contains(metrics, `holdfast_notify_deliveries_total{notifier="hook",result="failed"}`) ||
		strings.Contains(metrics, `holdfast_notify_deliveries_total{notifier="hook",result="failed"} 0`) {
		t.Errorf("failures not counted:\n%s", metrics)
	}
}

func scrapeText(t *testing.T, addr string) string {
	t.Helper()
	resp, err := http.Get("http://" + addr + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	return string(b)
}
