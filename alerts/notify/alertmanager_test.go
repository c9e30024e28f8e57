package notify

import (
	"encoding/json"
	"io"
	"net/http"
	"net/http/httptest"
	"testing"
	"testing/synctest"
	"time"
)

// The push matches Alertmanager's api/v2/openapi.yaml postableAlerts: a
// JSON array of {labels, annotations, startsAt, endsAt} posted to
// /api/v2/alerts as application/json; alertname is always set (Alertmanager
// 0.25 accepts alerts without it, ECOSYSTEM.md §2). Firing alerts end
// 4 resend intervals ahead; a resolved one ends when it cleared.
func TestAlertmanagerBody(t *testing.T) {
	var path, ctype string
	var body []map[string]any
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		path, ctype = r.Method+" "+r.URL.Path, r.Header.Get("Content-Type")
		b, _ := io.ReadAll(r.Body)
		if err := json.Unmarshal(b, &body); err != nil {
			http.Error(w, "not a JSON array", http.StatusBadRequest)
		}
	}))
	defer srv.Close()
	now := time.Date(2031, 3, 4, 2, 20, 0, 0, time.UTC)
	am := &Alertmanager{URL: srv.URL + "/", Resend: time.Minute, Now: func() time.Time { return now }}
	raise := exampleRaise()
	clear := exampleRaise()
	clear.Alarm, clear.Event, clear.State = "foreline-high", EventCleared, StateNormal
	clear.At = now.Add(-10 * time.Second)
	if err := am.Send(t.Context(), []Transition{raise, clear}); err != nil {
		t.Fatal(err)
	}
	if path != "POST /api/v2/alerts" || ctype != "application/json" {
		t.Errorf("request %s (%s)", path, ctype)
	}
	if len(body) != 2 {
		t.Fatalf("want 2 alerts, got %v", body)
	}
	labels := body[0]["labels"].(map[string]any)
	wantLabels := map[string]string{"alertname": "rough-vacuum-lost", "chamber": "bakeout-3", "gauge": "chamber", "severity": "high"}
	if len(labels) != len(wantLabels) {
		t.Errorf("labels %v, want %v", labels, wantLabels)
	}
	for k, v := range wantLabels {
		if labels[k] != v {
			t.Errorf("label %s = %v, want %s", k, labels[k], v)
		}
	}
	ann := body[0]["annotations"].(map[string]any)
	if ann["summary"] != "bakeout-3: rough-vacuum-lost raised, chamber = 12.5 Pa (limit 10 Pa)" || ann["description"] == "" {
		t.Errorf("annotations %v", ann)
	}
	times := func(a map[string]any) (time.Time, time.Time) {
		s, err1 := time.Parse(time.RFC3339, a["startsAt"].(string))
		e, err2 := time.Parse(time.RFC3339, a["endsAt"].(string))
		if err1 != nil || err2 != nil {
			t.Fatalf("times not RFC 3339: %v", a)
		}
		return s, e
	}
	if s, e := times(body[0]); !s.Equal(raise.Since) || !e.Equal(now.Add(4*time.Minute)) {
		t.Errorf("firing: startsAt %v endsAt %v, want %v and now+4m", s, e, raise.Since)
	}
	if _, e := times(body[1]); !e.Equal(clear.At) {
		t.Errorf("resolved: endsAt %v, want the clear time %v", e, clear.At)
	}
}

// Active alarms are due for re-posting until cleared; cleared ones for
// 5 min after (alerts_api.md), then they are forgotten.
func TestResender(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		r := NewResender()
		raise := exampleRaise()
		raise.At, raise.Since = time.Now(), time.Now()
		r.Observe(raise)
		time.Sleep(time.Hour)
		if due := r.Due(time.Now()); len(due) != 1 || !due[0].Active() {
			t.Fatalf("after an hour active: %v", due)
		}
		clear := raise
		clear.Event, clear.State, clear.At, clear.Since = EventCleared, StateNormal, time.Now(), time.Time{}
		r.Observe(clear)
		r.Observe(raise) // a late copy of the older raise changes nothing
		time.Sleep(ResolvedResend)
		due := r.Due(time.Now())
		if len(due) != 1 || due[0].Active() || !due[0].Since.Equal(raise.Since) {
			t.Fatalf("5 min after clearing: %v, want the resolved alert with its start", due)
		}
		time.Sleep(time.Second)
		if due := r.Due(time.Now()); len(due) != 0 {
			t.Errorf("past 5 min after clearing: %v, want nothing", due)
		}
	})
}
