package daemon

import (
	"errors"
	"fmt"
	"net/http"
	"strconv"
	"strings"
	"time"

	"holdfast/daemon/config"
	"holdfast/daemon/seriesio"
	"holdfast/daemon/store"
)

func (d *Daemon) seriesRoutes(mux *http.ServeMux) {
	mux.HandleFunc("GET /api/v1/series", d.apiSeries)
	mux.HandleFunc("GET /api/v1/export", d.apiExport)
	mux.HandleFunc("POST /api/v1/db/backup", d.changes(d.apiBackup))
	mux.HandleFunc("GET /api/v1/db/stats", d.apiDBStats)
}

// GaugeKinds maps each gauge of a config to its kind (pressure,
// temperature, state), which decides its metric name in an export.
func GaugeKinds(cfg *config.Config) map[string]string {
	kinds := map[string]string{}
	for name, g := range cfg.Gauges {
		if g != nil {
			kinds[name] = g.Kind
		}
	}
	return kinds
}

// pickSeries reads the gauge parameters (repeated, or comma-separated;
// "all" for every stored series) and checks each is a configured gauge or
// a stored series.
func (d *Daemon) pickSeries(r *http.Request) ([]string, error) {
	known, err := d.store.Series()
	if err != nil {
		return nil, err
	}
	for _, g := range d.gauges {
		known = append(known, g.name)
	}
	return seriesio.PickGauges(r.URL.Query()["gauge"], known)
}

// span reads from and to (RFC 3339, Unix seconds, now, or -8h); from
// defaults to 8 h before to, and to to now.
func (d *Daemon) span(r *http.Request) (time.Time, time.Time, error) {
	now := d.clock.Now()
	to, from := now, time.Time{}
	var err error
	if s := r.URL.Query().Get("to"); s != "" {
		if to, err = seriesio.ParseTime(s, now); err != nil {
			return from, to, fmt.Errorf("to: %w", err)
		}
	}
	from = to.Add(-8 * time.Hour)
	if s := r.URL.Query().Get("from"); s != "" {
		if from, err = seriesio.ParseTime(s, now); err != nil {
			return from, to, fmt.Errorf("from: %w", err)
		}
	}
	if !from.Before(to) {
		return from, to, fmt.Errorf("from %s is not before to %s; swap them or widen the span",
			from.Format(time.RFC3339Nano), to.Format(time.RFC3339Nano))
	}
	return from, to, nil
}

// apiSeries answers GET /api/v1/series?gauge=G&from=T1&to=T2&points=N&format=json|csv
// with each series reduced by store.Reduce, gaps marked (seriesio.Entry).
func (d *Daemon) apiSeries(w http.ResponseWriter, r *http.Request) {
	q := seriesio.Query{Kinds: GaugeKinds(d.conf())}
	var err error
	if q.Series, err = d.pickSeries(r); err != nil {
		apiError(w, http.StatusBadRequest, err.Error())
		return
	}
	if q.From, q.To, err = d.span(r); err != nil {
		apiError(w, http.StatusBadRequest, err.Error())
		return
	}
	if s := r.URL.Query().Get("points"); s != "" {
		if q.Points, err = strconv.Atoi(s); err != nil || q.Points < 2 {
			apiError(w, http.StatusBadRequest, fmt.Sprintf("points %q: want a whole number, at least 2 (at most %d are returned)", s, store.MaxReducePoints))
			return
		}
	}
	format := r.URL.Query().Get("format")
	if format != "" && format != "json" && format != "csv" {
		apiError(w, http.StatusBadRequest, fmt.Sprintf("format %q: want json or csv", format))
		return
	}
	res, err := q.Run(d.store)
	var ce *store.ChunkError
	if err != nil && !errors.As(err, &ce) {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	if err != nil {
		w.Header().Set("Holdfast-Warning", strings.ReplaceAll(err.Error(), "\n", "; "))
	}
	if format == "csv" {
		w.Header().Set("Content-Type", "text/csv; charset=utf-8")
		_ = res.WriteCSV(w)
		return
	}
	writeJSON(w, res)
}

// apiExport answers GET /api/v1/export?gauge=G|all&from=T1&to=T2&format=csv|jsonl|openmetrics
// by streaming the samples (seriesio.Export). An error after the first
// bytes can only end the stream early: the HTTP trailer
// Holdfast-Export-Error then says why.
func (d *Daemon) apiExport(w http.ResponseWriter, r *http.Request) {
	series, err := d.pickSeries(r)
	if err != nil {
		apiError(w, http.StatusBadRequest, err.Error())
		return
	}
	from, to, err := d.spanAll(r)
	if err != nil {
		apiError(w, http.StatusBadRequest, err.Error())
		return
	}
	e := seriesio.Export{Series: series, From: from, To: to, Format: r.URL.Query().Get("format"), Kinds: GaugeKinds(d.conf())}
	if e.Format == "" {
		e.Format = "csv"
	}
	if err := e.Check(); err != nil {
		apiError(w, http.StatusBadRequest, err.Error())
		return
	}
	w.Header().Set("Content-Type", map[string]string{"csv": "text/csv; charset=utf-8", "jsonl": "application/jsonl",
		"openmetrics": "application/openmetrics-text; version=1.0.0; charset=utf-8"}[e.Format])
	w.Header().Set("Trailer", "Holdfast-Export-Error")
	n, err := e.Write(w, d.store)
	if err != nil {
		w.Header().Set("Holdfast-Export-Error", strings.ReplaceAll(err.Error(), "\n", "; "))
		d.log.Warn("export failed", "samples", n, "err", err)
	}
}

// spanAll is span for exports: an absent from means the beginning of the
// store, an absent to its end.
func (d *Daemon) spanAll(r *http.Request) (time.Time, time.Time, error) {
	q := r.URL.Query()
	if q.Get("from") == "" {
		q.Set("from", "1678-01-01T00:00:00Z")
	}
	if q.Get("to") == "" {
		q.Set("to", "2262-01-01T00:00:00Z")
	}
	r.URL.RawQuery = q.Encode()
	return d.span(r)
}
