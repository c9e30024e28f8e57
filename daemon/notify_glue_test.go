package daemon

import (
	"context"
	"fmt"
	"log/slog"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"testing/synctest"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/alerts"
	"holdfast/alerts/notify"
)

type bubble struct{}

func (bubble) Now() time.Time                         { return time.Now() }
func (bubble) After(d time.Duration) <-chan time.Time { return time.After(d) }

// fakeNotifier records each Send as "t+<s>s alarm:event[#reminder]...".
type fakeNotifier struct {
	mu    sync.Mutex
	start time.Time
	sends []string
}

func (f *fakeNotifier) Send(_ context.Context, batch []notify.Transition) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	var parts []string
	for _, tr := range batch {
		p := tr.Alarm + ":" + tr.Event
		if tr.Reminder > 0 {
			p += fmt.Sprintf("#%d", tr.Reminder)
		}
		parts = append(parts, p)
	}
	f.sends = append(f.sends, fmt.Sprintf("%gs[%s]", time.Since(f.start).Seconds(), strings.Join(parts, " ")))
	return nil
}

// Through the daemon's glue: alarms raised within group_wait go in one
// message; unacknowledged ones are reminded every remind_every until they
// clear; alarms below min_severity are not sent at all.
func TestNotifyGroupsAndReminds(t *testing.T) {
	dir := t.TempDir()
	writeSecret(t, dir, "hook.key", "k")
	cfg, err := parseNotify(t, dir, `
notify:
  - name: hook
    webhook: {url: "http://127.0.0.1:1/unused", secret_file: DIR/hook.key}
    group_wait: 30s
    remind_every: 1h
    min_severity: medium
`)
	if err != nil {
		t.Fatal(err)
	}
	synctest.Test(t, func(t *testing.T) {
		db, err := bolt.Open(filepath.Join(t.TempDir(), "n.db"), 0o600, nil)
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		n, err := newNotifierSet(cfg, db, bubble{}, slog.New(slog.DiscardHandler))
		if err != nil {
			t.Fatal(err)
		}
		fake := &fakeNotifier{start: time.Now()}
		n.sinks[0].send = fake
		ctx, cancel := context.WithCancel(t.Context())
		done := make(chan struct{})
		go func() { n.ob.Run(ctx); close(done) }()
		event := func(alarm string, kind alerts.EventKind, sev alerts.Severity) {
			ev := raiseEvent(alarm, kind, time.Now())
			ev.Severity = sev
			tr, _ := transitionOf("bakeout-3", ev)
			if err := n.enqueue(tr); err != nil {
				t.Fatal(err)
			}
		}
		event("rough", alerts.Raised, "high")
		time.Sleep(10 * time.Second)
		event("foreline", alerts.Raised, "medium")
		event("lamp", alerts.Raised, "low") // below min_severity
		time.Sleep(90 * time.Minute)
		event("rough", alerts.Cleared, "high")
		time.Sleep(time.Hour)
		synctest.Wait()
		cancel()
		<-done
		want := "30s[rough:raised foreline:raised] 3630s[rough:raised#1 foreline:raised#1] " + // reminders group too
			"5440s[rough:cleared] 7240s[foreline:raised#2]"
		if got := strings.Join(fake.sends, " "); got != want {
			t.Errorf("sends:\n got %s\nwant %s", got, want)
		}
	})
}

// transitionOf carries the engine's state and key, and gives value and
// limit in the unit the message uses (1 mbar = 100 Pa, REFERENCES.md §1b);
// a raise while shelved is recorded but not annunciated.
func TestTransitionOfUsesEngineFields(t *testing.T) {
	at := time.Date(2031, 1, 2, 3, 4, 5, 0, time.UTC)
	ev := alerts.Event{Kind: alerts.Raised, Alarm: "vac", Gauge: "p", Severity: "high", At: at,
		State: alerts.Unacknowledged, Value: 250, Limit: 100, Unit: "mbar", DedupeKey: "vac/7/unacknowledged"}
	tr, ok := transitionOf("bake-1", ev)
	if !ok {
		t.Fatal("a raise was not notified")
	}
	if tr.State != "unacknowledged" || tr.DedupeKey != "bake-1/vac/7/unacknowledged" {
		t.Errorf("state %q key %q", tr.State, tr.DedupeKey)
	}
	if tr.Value == nil || *tr.Value != 2.5 || tr.Limit == nil || *tr.Limit != 1 {
		t.Errorf("value %v limit %v, want 2.5 and 1 mbar", tr.Value, tr.Limit)
	}
	ev.State = alerts.Shelved
	if _, ok := transitionOf("bake-1", ev); ok {
		t.Error("a raise while shelved was annunciated")
	}
	ev.Kind, ev.State = alerts.LimitCrossed, alerts.Normal
	if _, ok := transitionOf("bake-1", ev); ok {
		t.Error("a limit crossing (on-delay running) was notified")
	}
}
