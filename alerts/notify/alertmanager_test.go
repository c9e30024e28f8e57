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
	am := &Alertmanager{URL: srv.URL + "/", Resend: time.Minute, Now: func() time.Time { return now }, Link: "http://bench-pc:9781/"}
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
	wantLabels := map[string]string{"alertname": "rough-vacuum-lost", "alarm": "rough-vacuum-lost", "chamber": "bakeout-3", "gauge": "chamber", "severity": "high"}
	if len(labels) != len(wantLabels) {
		t.Errorf("labels %v, want %v", labels, wantLabels)
	}
	for k, v := range wantLabels {
		if labels[k] != v {
			t.Errorf("label %s = %v, want %s", k, labels[k], v)
		}
	}
	if g := body[0]["generatorURL"]; g != "http://bench-pc:9781/api/v1/alarms/history?alarm=rough-vacuum-lost" {
		t.Errorf("generatorURL %v, want the alarm's history on the daemon", g)
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

// demoClock is a daemon clock that runs speed times faster than the wall
// from a common start, with its mapping back to wall time.
type demoClock struct {
	start time.Time
	speed float64
}

func (c demoClock) wall(t time.Time) time.Time {
	return c.start.Add(time.Duration(float64(t.Sub(c.start)) / c.speed))
}

// With the daemon on a clock 60 times faster than the wall, startsAt and
// endsAt are both wall time: worked by hand from the mapping
// wall = start + (t - start)/60, with start 02:00:00.
func TestAlertmanagerWallTimes(t *testing.T) {
	start := time.Date(2031, 3, 4, 2, 0, 0, 0, time.UTC)
	c := demoClock{start: start, speed: 60}
	am := &Alertmanager{Resend: time.Minute, Wall: c.wall}
	raise := exampleRaise()
	raise.Since = start.Add(30 * time.Minute) // simulated 02:30 -> wall 02:00:30
	raise.At = raise.Since
	now := start.Add(time.Hour) // simulated 03:00 -> wall 02:01:00
	al := am.Alert(raise, now)
	if want := start.Add(30 * time.Second); !al.StartsAt.Equal(want) {
		t.Errorf("firing startsAt %v, want %v", al.StartsAt, want)
	}
	if want := start.Add(time.Minute + 4*time.Minute); !al.EndsAt.Equal(want) {
		t.Errorf("firing endsAt %v, want wall now + 4 resend intervals = %v", al.EndsAt, want)
	}
	clear := raise
	clear.Event, clear.State = EventCleared, StateNormal
	clear.At = start.Add(45 * time.Minute) // simulated 02:45 -> wall 02:00:45
	if al := am.Alert(clear, now); !al.EndsAt.Equal(start.Add(45*time.Second)) || !al.StartsAt.Equal(start.Add(30*time.Second)) {
		t.Errorf("resolved: %v to %v, want 02:00:30 to 02:00:45", al.StartsAt, al.EndsAt)
	}
	// A start ahead of now (data written by an earlier demo run whose
	// clock ran further) is taken as now, so endsAt stays after startsAt.
	late := raise
	late.Since, late.At = start.Add(5*time.Hour), start.Add(5*time.Hour)
	al = am.Alert(late, now)
	if !al.StartsAt.Equal(start.Add(time.Minute)) || !al.EndsAt.After(al.StartsAt) {
		t.Errorf("start ahead of now: %v to %v, want from wall now (02:01:00)", al.StartsAt, al.EndsAt)
	}
	lateClear := late
	lateClear.Event, lateClear.State = EventCleared, StateNormal
	if al := am.Alert(lateClear, now); al.EndsAt.Before(al.StartsAt) {
		t.Errorf("resolved ahead of now: endsAt %v before startsAt %v", al.EndsAt, al.StartsAt)
	}
}

// An alarm without a value (a faulty gauge) says the gauge's quality in
// its summary and annotations instead of an empty value.
func TestAlertmanagerNoValueSaysQuality(t *testing.T) {
	tr := exampleRaise()
	tr.Alarm, tr.Value, tr.Limit, tr.Quality = "chamber-gauge-fault", nil, nil, "sensor-fault"
	al := (&Alertmanager{Resend: time.Minute}).Alert(tr, tr.At)
	if got, want := al.Annotations["summary"], "bakeout-3: chamber-gauge-fault raised, chamber has no value (sensor-fault)"; got != want {
		t.Errorf("summary %q, want %q", got, want)
	}
	if al.Annotations["value"] != "no value (sensor-fault)" || al.Annotations["quality"] != "sensor-fault" {
		t.Errorf("annotations %v", al.Annotations)
	}
}

// Which answers are permanent: RFC 9110 §15.5 makes 4xx the client's
// error (repeating the same request cannot help), except 408 Request
// Timeout (§15.5.9: the client may repeat it) and 429 Too Many Requests
// (RFC 6585 §4: try later); 5xx is the server's and may pass.
func TestStatusErrorPermanent(t *testing.T) {
	for code, want := range map[int]bool{400: true, 401: true, 403: true, 404: true, 409: true, 413: true, 422: true,
		408: false, 429: false, 500: false, 502: false, 503: false, 504: false} {
		if got := (&StatusError{Code: code}).Permanent(); got != want {
			t.Errorf("%d: Permanent = %v, want %v", code, got, want)
		}
	}
}
