package notify_test

import (
	"errors"
	"strings"
	"testing"
	"time"

	"holdfast/alerts/notify"
	"holdfast/alerts/notify/notifytest"
)

// Against a real Alertmanager (Debian's prometheus-alertmanager, skipped
// when absent): a daemon whose clock runs 600 times faster than the wall,
// as the demo's does, posts alerts Alertmanager takes (200), holding the
// alarm label and the generatorURL; a resolved post ends the alert; and an
// alert whose end is before its start, the demo's old mistake, is
// answered 400, which is a permanent refusal.
func TestRealAlertmanager(t *testing.T) {
	base := notifytest.Alertmanager(t)
	wall0 := time.Now()
	const speed = 600
	simNow := func() time.Time { return wall0.Add(speed * time.Since(wall0)) }
	toWall := func(s time.Time) time.Time { return wall0.Add(s.Sub(wall0) / speed) }
	am := &notify.Alertmanager{URL: base, Resend: time.Minute, Link: "http://bench-pc.example.internal:9781",
		Now: simNow, Wall: toWall}
	since := simNow().Add(-2 * time.Hour) // simulated: raised 2 h ago, 12 s of wall time
	raise := notify.Transition{Chamber: "sample-bake-4", Alarm: "rough-vacuum-lost", Gauge: "chamber", Severity: "high",
		Event: notify.EventRaised, State: notify.StateUnacknowledged, Unit: "mbar", At: since, Since: since,
		Message: "invented test alarm", DedupeKey: "sample-bake-4/rough-vacuum-lost/1/unacknowledged"}
	if err := am.Send(t.Context(), []notify.Transition{raise}); err != nil {
		t.Fatalf("firing alert refused: %v", err)
	}
	got, err := notifytest.Alerts(t.Context(), base)
	if err != nil || len(got) != 1 {
		t.Fatalf("alertmanager holds %+v (%v), want the one alert", got, err)
	}
	a := got[0]
	if a.Labels["alarm"] != "rough-vacuum-lost" || a.Labels["alertname"] != "rough-vacuum-lost" || a.Labels["chamber"] != "sample-bake-4" {
		t.Errorf("labels %v", a.Labels)
	}
	if a.GeneratorURL != "http://bench-pc.example.internal:9781/api/v1/alarms/history?alarm=rough-vacuum-lost" {
		t.Errorf("generatorURL %q", a.GeneratorURL)
	}
	// The simulated 2 h before now are 12 s of wall time.
	if d := time.Since(a.StartsAt); d < 11*time.Second || d > time.Minute {
		t.Errorf("startsAt %v is %v before the wall clock, want about 12 s", a.StartsAt, d)
	}
	if !a.EndsAt.After(time.Now()) || a.Status.State != "active" {
		t.Errorf("endsAt %v, state %q: want an active alert ending in the future", a.EndsAt, a.Status.State)
	}

	clear := raise
	clear.Event, clear.State, clear.At = notify.EventCleared, notify.StateNormal, simNow()
	if err := am.Send(t.Context(), []notify.Transition{clear}); err != nil {
		t.Fatalf("resolved alert refused: %v", err)
	}
	time.Sleep(10 * time.Millisecond) // the resolved alert's endsAt (now) must be in Alertmanager's past
	if got, err := notifytest.Alerts(t.Context(), base); err != nil || len(got) != 0 {
		t.Errorf("after the resolved post alertmanager still lists %+v (%v)", got, err)
	}

	now := time.Now()
	bad := notify.AMAlert{Labels: map[string]string{"alertname": "backwards"}, StartsAt: now.Add(time.Hour), EndsAt: now}
	err = am.Post(t.Context(), []notify.AMAlert{bad})
	var se *notify.StatusError
	if !errors.As(err, &se) || se.Code != 400 || !strings.Contains(se.Body, "start time must be before end time") || !se.Permanent() {
		t.Errorf("end before start: %v, want a permanent 400 saying start time must be before end time", err)
	}
}
