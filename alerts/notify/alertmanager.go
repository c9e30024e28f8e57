package notify

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"net/http"
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
type Alertmanager struct {
	URL          string        // base URL, e.g. http://127.0.0.1:9093; /api/v2/alerts is added
	Resend       time.Duration // how often active alarms are posted again; endsAt = now + 4×Resend
	GeneratorURL string        // optional link back to the daemon
	Client       *http.Client
	Now          func() time.Time
}

func (a *Alertmanager) now() time.Time {
	if a.Now != nil {
		return a.Now()
	}
	return time.Now()
}

// Alert is t as Alertmanager sees it. Labels identify the alert (and so
// must not change while it fires): alertname, chamber, gauge, severity.
// A firing alert ends 4 resend intervals from now, so that if the daemon
// dies the alert expires instead of firing for ever; a resolved one ends
// when it cleared.
func (a *Alertmanager) Alert(t Transition, now time.Time) AMAlert {
	al := AMAlert{
		Labels:       map[string]string{"alertname": t.Alarm, "chamber": t.Chamber, "gauge": t.Gauge, "severity": t.Severity},
		Annotations:  map[string]string{"summary": Summary(t), "description": strings.TrimSpace(Describe(t))},
		StartsAt:     t.Since,
		GeneratorURL: a.GeneratorURL,
	}
	if al.StartsAt.IsZero() {
		al.StartsAt = t.At
	}
	if t.Active() {
		al.EndsAt = now.Add(4 * a.Resend)
	} else {
		al.EndsAt = t.At
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
// 400 for a malformed alert and 500 when it cannot take them.
func (a *Alertmanager) Post(ctx context.Context, alerts []AMAlert) error {
	body, err := json.Marshal(alerts)
	if err != nil {
		return fmt.Errorf("alertmanager body: %w", err)
	}
	url := strings.TrimSuffix(a.URL, "/") + "/api/v2/alerts"
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, url, bytes.NewReader(body))
	if err != nil {
		return fmt.Errorf("alertmanager: %w", err)
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("User-Agent", "holdfast")
	return do(a.Client, req)
}
