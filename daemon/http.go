package daemon

import (
	"crypto/subtle"
	"encoding/json"
	"errors"
	"fmt"
	"html"
	"io/fs"
	"math"
	"net/http"
	"os"
	"strings"
	"time"

	"github.com/prometheus/client_golang/prometheus/promhttp"

	"holdfast/calib"
)

func (d *Daemon) handler() http.Handler {
	mux := http.NewServeMux()
	mux.Handle("GET /metrics", promhttp.InstrumentMetricHandler(d.met.reg,
		promhttp.HandlerFor(d.met.reg, promhttp.HandlerOpts{
			EnableOpenMetrics: true, Registry: d.met.reg, Timeout: 10 * time.Second,
		})))
	mux.HandleFunc("GET /healthz", d.healthz)
	mux.HandleFunc("GET /api/v1/gauges", d.apiGauges)
	mux.HandleFunc("GET /{$}", d.landing)
	d.calibRoutes(mux)
	d.alarmRoutes(mux)
	d.seriesRoutes(mux)
	d.reportRoutes(mux)
	d.bakeRoutes(mux)
	mux.HandleFunc("POST "+reloadPath, d.changes(d.apiReload))
	return d.underLive(mux)
}

func (d *Daemon) healthz(w http.ResponseWriter, _ *http.Request) {
	d.flushMu.Lock()
	err := d.flushErr
	d.flushMu.Unlock()
	if err != nil {
		http.Error(w, "store writes failing: "+err.Error(), http.StatusServiceUnavailable)
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
	// Gas and Transpiration are the corrections applied to the value.
	Gas           *gasJSON           `json:"gas,omitempty"`
	Transpiration *transpirationJSON `json:"transpiration,omitempty"`
}

func (d *Daemon) apiGauges(w http.ResponseWriter, _ *http.Request) {
	now := d.clock.Now()
	out := make([]gaugeJSON, 0, len(d.gauges))
	for _, g := range d.gauges {
		v := g.view(now)
		j := gaugeJSON{Gauge: v.name, Kind: v.kind, Up: v.up && !v.stale}
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
<p>A monitoring aid, not a safety interlock.</p>`, html.EscapeString(d.cfg.Chamber.Name))
}

// readToken reads the bearer token that guards changes. No file means no
// token: the API then refuses every change.
func readToken(path string) (string, error) {
	if path == "" {
		return "", nil
	}
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return "", fmt.Errorf("http.token_file: %w (make one with: holdfast token new %s)", err, path)
		}
		return "", fmt.Errorf("http.token_file: %w", err)
	}
	tok := strings.TrimSpace(string(b))
	if len(tok) < 16 {
		return "", fmt.Errorf("http.token_file %s: the token must be at least 16 characters (make one with: holdfast token new --force %s)", path, path)
	}
	return tok, nil
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
