package daemon

import (
	"bytes"
	"crypto/subtle"
	"encoding/json"
	"errors"
	"fmt"
	"html"
	"io"
	"math"
	"net/http"
	"strings"
	"time"

	"github.com/prometheus/client_golang/prometheus/promhttp"

	"holdfast/calib"
	"holdfast/daemon/config"
)

func (d *Daemon) handler() http.Handler {
	mux := http.NewServeMux()
	mux.Handle("GET /metrics", d.metricsAuth(promhttp.InstrumentMetricHandler(d.met.reg,
		promhttp.HandlerFor(d.met.reg, promhttp.HandlerOpts{
			EnableOpenMetrics: true, Registry: d.met.reg, Timeout: 10 * time.Second,
		}))))
	mux.HandleFunc("GET /healthz", d.healthz)
	mux.HandleFunc("GET /api/v1/gauges", d.apiGauges)
	mux.HandleFunc("GET /{$}", d.landing)
	d.calibRoutes(mux)
	d.alarmRoutes(mux)
	d.seriesRoutes(mux)
	d.reportRoutes(mux)
	d.bakeRoutes(mux)
	mux.HandleFunc("POST "+reloadPath, d.changes(d.apiReload))
	return d.limitBody(d.underLive(mux))
}

// limitBody caps every request body at http.max_body_bytes with 413: a
// body that says it is larger is refused at once; one of unknown length
// (chunked) is read here, up to the cap, before its handler sees it. Every
// body the API takes is small JSON, so holding it is cheap.
func (d *Daemon) limitBody(h http.Handler) http.Handler {
	limit := d.conf().HTTP.MaxBodyBytes
	if limit <= 0 {
		limit = config.DefaultMaxBodyBytes
	}
	tooLarge := func(w http.ResponseWriter, size string) {
		apiError(w, http.StatusRequestEntityTooLarge, fmt.Sprintf(
			"request body %s is larger than http.max_body_bytes (%d); send less, or raise http.max_body_bytes", size, limit))
	}
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		switch {
		case r.ContentLength > limit:
			tooLarge(w, fmt.Sprintf("of %d bytes", r.ContentLength))
			return
		case r.ContentLength < 0 && r.Body != nil && r.Body != http.NoBody:
			b, err := io.ReadAll(http.MaxBytesReader(w, r.Body, limit))
			if errors.As(err, new(*http.MaxBytesError)) {
				tooLarge(w, "(sent without a length)")
				return
			} else if err != nil {
				apiError(w, http.StatusBadRequest, "reading the request body: "+err.Error())
				return
			}
			r.Body, r.ContentLength = io.NopCloser(bytes.NewReader(b)), int64(len(b))
		default:
			r.Body = http.MaxBytesReader(w, r.Body, limit)
		}
		h.ServeHTTP(w, r)
	})
}

// metricsAuth guards /metrics when http.metrics_auth is set: basic auth
// or a bearer token, both compared in constant time.
func (d *Daemon) metricsAuth(h http.Handler) http.Handler {
	m := d.conf().HTTP.MetricsAuth
	if m == nil {
		return h
	}
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		ok := false
		if m.Token != "" {
			got, has := strings.CutPrefix(r.Header.Get("Authorization"), "Bearer ")
			ok = has && subtle.ConstantTimeCompare([]byte(got), []byte(m.Token)) == 1
			if !ok {
				w.Header().Set("WWW-Authenticate", `Bearer realm="holdfast metrics"`)
			}
		} else if m.Password != "" {
			u, p, has := r.BasicAuth()
			// Both compared, always, so the time does not tell which was wrong.
			uok := subtle.ConstantTimeCompare([]byte(u), []byte(m.Username))
			pok := subtle.ConstantTimeCompare([]byte(p), []byte(m.Password))
			ok = has && uok&pok == 1
			if !ok {
				w.Header().Set("WWW-Authenticate", `Basic realm="holdfast metrics", charset="UTF-8"`)
			}
		}
		if !ok {
			http.Error(w, "metrics need credentials: see http.metrics_auth in the config", http.StatusUnauthorized)
			return
		}
		h.ServeHTTP(w, r)
	})
}

func (d *Daemon) healthz(w http.ResponseWriter, _ *http.Request) {
	d.flushMu.Lock()
	err := d.flushErr
	d.flushMu.Unlock()
	if err != nil {
		http.Error(w, "store writes failing: "+err.Error(), http.StatusServiceUnavailable)
		return
	}
	if err := d.alarms.StoreError(); err != nil {
		http.Error(w, "alarm state writes failing; transitions wait in memory and are retried: "+err.Error(), http.StatusServiceUnavailable)
		return
	}
	if p := d.alarmsDown.Load(); p != nil {
		http.Error(w, "alarms not evaluated: their stored state did not load: "+(*p).Error(), http.StatusServiceUnavailable)
		return
	}
	fmt.Fprintln(w, "ok")
}

// gaugeJSON is one gauge in /api/v1/gauges.
type gaugeJSON struct {
	Gauge   string    `json:"gauge"`
	Kind    string    `json:"kind"`
	Up      bool      `json:"up"`
	Quality string    `json:"quality,omitempty"`
	At      time.Time `json:"at,omitzero"`
	Raw     *float64  `json:"raw,omitempty"`
	Value   *float64  `json:"value_si,omitempty"` // Pa or °C
	Display string    `json:"display,omitempty"`  // in the gauge's configured unit
	Reason  string    `json:"reason,omitempty"`   // why a gauge that is not up is down, when its link says
	// Gas and Transpiration are the corrections applied to the value.
	Gas           *gasJSON           `json:"gas,omitempty"`
	Transpiration *transpirationJSON `json:"transpiration,omitempty"`
}

func (d *Daemon) apiGauges(w http.ResponseWriter, _ *http.Request) {
	now := d.clock.Now()
	out := make([]gaugeJSON, 0, len(d.gauges))
	down := d.linkDownReasons()
	for _, g := range d.gauges {
		v := g.view(now)
		j := gaugeJSON{Gauge: v.name, Kind: v.kind, Up: v.up && !v.stale}
		if !j.Up {
			j.Reason = down[v.name]
		}
		j.Gas, j.Transpiration = g.corr.describe(now)
		if v.seen {
			j.Quality, j.At = v.last.Quality.String(), v.last.At
			if raw := v.last.Raw; !math.IsNaN(raw) && !math.IsInf(raw, 0) {
				j.Raw = &raw // an instrument with no number (off, fault) has no raw value
			}
			if v.last.Quality.HasValue() {
				val := v.last.Value
				j.Value, j.Display = &val, calib.Format(val, g.unit)
			}
		}
		out = append(out, j)
	}
	writeJSON(w, out)
}

func (d *Daemon) landing(w http.ResponseWriter, _ *http.Request) {
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	fmt.Fprintf(w, `<!doctype html><title>holdfast: %[1]s</title><h1>holdfast: %[1]s</h1>
<p><a href="/metrics">/metrics</a> · <a href="/api/v1/gauges">/api/v1/gauges</a> · <a href="/healthz">/healthz</a></p>
<p>A monitoring aid, not a safety interlock.</p>`, html.EscapeString(d.conf().Chamber.Name))
}

// changes wraps a handler that changes state (ack, shelve, activate a
// calibration, start a hold test): it needs "Authorization: Bearer <token>".
func (d *Daemon) changes(h http.HandlerFunc) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if d.token == "" {
			apiError(w, http.StatusForbidden, "changes are disabled: set http.token_file in the config")
			return
		}
		got, ok := strings.CutPrefix(r.Header.Get("Authorization"), "Bearer ")
		if !ok || subtle.ConstantTimeCompare([]byte(got), []byte(d.token)) != 1 {
			apiError(w, http.StatusUnauthorized, "missing or wrong bearer token")
			return
		}
		h(w, r)
	}
}

// apiError writes {"error": msg} with the given status.
func apiError(w http.ResponseWriter, status int, msg string) {
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(status)
	_ = json.NewEncoder(w).Encode(map[string]string{"error": msg})
}

// writeJSON writes v as indented JSON. It encodes first, so a value that
// cannot be encoded (a NaN) is a 500 with its reason, never a 200 with an
// empty body.
func writeJSON(w http.ResponseWriter, v any) {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		apiError(w, http.StatusInternalServerError, "encode reply: "+err.Error())
		return
	}
	w.Header().Set("Content-Type", "application/json")
	_, _ = w.Write(append(b, '\n')) // the client went away; nothing to do
}
