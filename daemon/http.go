package daemon

import (
	"encoding/json"
	"fmt"
	"html"
	"net/http"
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
	return mux
}

func (d *Daemon) healthz(w http.ResponseWriter, _ *http.Request) {
	d.flushMu.Lock()
	err := d.flushErr
	d.flushMu.Unlock()
	if err != nil {
		http.Error(w, "store writes failing: "+err.Error(), http.StatusServiceUnavailable)
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
}

func (d *Daemon) apiGauges(w http.ResponseWriter, _ *http.Request) {
	now := d.clock.Now()
	out := make([]gaugeJSON, 0, len(d.gauges))
	for _, g := range d.gauges {
		v := g.view(now)
		j := gaugeJSON{Gauge: v.name, Kind: v.kind, Up: v.up && !v.stale}
		if v.seen {
			raw := v.last.Raw
			j.Quality, j.At, j.Raw = v.last.Quality.String(), v.last.At, &raw
			if v.last.Quality == calib.QualityOK {
				val := v.last.Value
				j.Value, j.Display = &val, calib.Format(val, g.unit)
			}
		}
		out = append(out, j)
	}
	w.Header().Set("Content-Type", "application/json")
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	_ = enc.Encode(out) // the client went away; nothing to do
}

func (d *Daemon) landing(w http.ResponseWriter, _ *http.Request) {
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	fmt.Fprintf(w, `<!doctype html><title>holdfast: %[1]s</title><h1>holdfast: %[1]s</h1>
<p><a href="/metrics">/metrics</a> · <a href="/api/v1/gauges">/api/v1/gauges</a> · <a href="/healthz">/healthz</a></p>
<p>A monitoring aid, not a safety interlock.</p>`, html.EscapeString(d.cfg.Chamber.Name))
}
