package notify

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"time"
)

// ResolvedResend is how long a cleared alarm keeps being posted as
// resolved: Alertmanager keeps no state across its restarts, and its
// alerts_api.md asks clients to re-send resolved alerts for up to 5 min.
const ResolvedResend = 5 * time.Minute

// AMAlert is one element of the POST /api/v2/alerts array (Alertmanager
// api/v2/openapi.yaml, postableAlert).
type AMAlert struct {
	Labels       map[string]string `json:"labels"`
	Annotations  map[string]string `json:"annotations"`
	StartsAt     time.Time         `json:"startsAt"`
	EndsAt       time.Time         `json:"endsAt"`
	GeneratorURL string            `json:"generatorURL,omitempty"`
}

// An Alertmanager posts alarms to an Alertmanager's v2 API.
//
// Times: Now is the daemon's clock, the one transitions are stamped with;
// Wall maps a time on it to wall time, because Alertmanager compares
// startsAt and endsAt with its own wall clock (in the demo the daemon's
// clock is the simulator's, which runs ahead of the wall).
type Alertmanager struct {
	URL    string        // base URL, e.g. http://127.0.0.1:9093; /api/v2/alerts is added
	Resend time.Duration // how often active alarms are posted again; endsAt = now + 4×Resend
	Link   string        // the daemon's base URL, for each alert's generatorURL; empty: none
	Client *http.Client
	Now    func() time.Time          // the daemon's clock; nil is time.Now
	Wall   func(time.Time) time.Time // daemon time to wall time; nil: they are the same
}

func (a *Alertmanager) now() time.Time {
	if a.Now != nil {
		return a.Now()
	}
	return time.Now()
}

func (a *Alertmanager) wall(t time.Time) time.Time {
	if a.Wall != nil {
		return a.Wall(t)
	}
	return t
}

// Alert is t as Alertmanager sees it, at now on the daemon's clock.
// Labels identify the alert (and so must not change while it fires):
// alertname and alarm (both the alarm's name; alarm matches the label of
// holdfast_alarm_state), chamber, gauge, severity. A firing alert ends 4
// resend intervals of wall time from now, so that if the daemon dies the
// alert expires instead of firing for ever; a resolved one ends when it
// cleared. Both times are wall time, and endsAt is never before startsAt
// (Alertmanager refuses such an alert with a 400): a start that maps to
// after now (a demo restarted on data it wrote ahead of the wall) is taken
// as now.
func (a *Alertmanager) Alert(t Transition, now time.Time) AMAlert {
	ann := map[string]string{"summary": Summary(t), "description": strings.TrimSpace(Describe(t))}
	if t.Value == nil && t.Gauge != "" {
		ann["value"] = NoValue(t)
	} else if t.Value != nil {
		ann["value"] = number(t.Value) + " " + t.Unit
	}
	if t.Quality != "" {
		ann["quality"] = t.Quality
	}
	al := AMAlert{
		Labels: map[string]string{"alertname": t.Alarm, "alarm": t.Alarm, "chamber": t.Chamber,
			"gauge": t.Gauge, "severity": t.Severity},
		Annotations: ann,
	}
	if a.Link != "" {
		al.GeneratorURL = strings.TrimSuffix(a.Link, "/") + "/api/v1/alarms/history?alarm=" + url.QueryEscape(t.Alarm)
	}
	wallNow := a.wall(now)
	start := t.Since
	if start.IsZero() {
		start = t.At
	}
	al.StartsAt = a.wall(start)
	if al.StartsAt.After(wallNow) {
		al.StartsAt = wallNow
	}
	if t.Active() {
		al.EndsAt = wallNow.Add(4 * a.Resend)
	} else {
		al.EndsAt = a.wall(t.At)
	}
	if al.EndsAt.Before(al.StartsAt) {
		al.EndsAt = al.StartsAt
	}
	for k, v := range al.Labels {
		if v == "" {
			delete(al.Labels, k) // an empty label value means no label to Alertmanager
		}
	}
	return al
}

// Send posts the batch's alerts at once.
func (a *Alertmanager) Send(ctx context.Context, batch []Transition) error {
	now := a.now()
	alerts := make([]AMAlert, len(batch))
	for i, t := range batch {
		alerts[i] = a.Alert(t, now)
	}
	return a.Post(ctx, alerts)
}

// Post sends alerts as one array. 200 is success; Alertmanager answers
// 400 for a malformed alert (a *StatusError that is Permanent) and 500
// when it cannot take them.
func (a *Alertmanager) Post(ctx context.Context, alerts []AMAlert) error {
	body, err := json.Marshal(alerts)
	if err != nil {
		return fmt.Errorf("alertmanager body: %w", err)
	}
	target, err := requestURL(a.URL, "api", "v2", "alerts")
	if err != nil {
		return fmt.Errorf("alertmanager: %w", err)
	}
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, target, bytes.NewReader(body))
	if err != nil {
		return fmt.Errorf("alertmanager: %w", err)
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("User-Agent", "holdfast")
	return do(a.Client, req)
}
