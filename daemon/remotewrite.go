package daemon

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net/http"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/prometheus/client_golang/exp/api/remote"
	"github.com/prometheus/client_golang/prometheus"

	"holdfast/alerts/notify"
	"holdfast/daemon/config"
	"holdfast/daemon/seriesio"
	"holdfast/daemon/store"
)

// A remoteWriter pushes every stored ok sample of every gauge, at full
// rate, to one remote-write receiver. It reads the local store after a
// cursor per series kept in the data file and moves the cursor only once
// the receiver has answered 2xx, so after an outage of the network or the
// receiver the gap is read again and sent: the central store gets no hole.
// Sends and backoff run on the daemon's clock.
type remoteWriter struct {
	cfg    *config.RemoteWriteConfig
	db     *store.DB
	clock  Clock
	log    *slog.Logger
	api    *remote.API
	reader string // the cursors' key in the data file: the receiver's URL
	series []rwGauge
	start  time.Time // a gauge with no cursor yet starts here: backfill before the daemon was built (before its first poll)

	mu       sync.Mutex
	cursor   map[string]time.Time // per gauge: time of the last point taken (sent, refused or not ok)
	lastMs   map[string]int64     // per gauge: the last millisecond sent (Prometheus keeps one sample per ms)
	complete time.Time            // every stored sample before this has been accepted (or refused for good)
	sent     float64
	rejected float64
	failures float64
	lastOK   time.Time
}

// rwGauge is one gauge's series as the receiver sees it.
type rwGauge struct {
	gauge  string
	labels []rwLabel // __name__, gauge and the configured labels, sorted by name
}

var (
	descRWSent = prometheus.NewDesc("holdfast_remote_write_samples_total",
		"Samples the remote-write receiver accepted (answered 2xx).", nil, nil)
	descRWRejected = prometheus.NewDesc("holdfast_remote_write_samples_rejected_total",
		"Samples the receiver refused for good (a 4xx other than 429, which the remote-write specification says not to retry) and that were skipped; they stay in the local store.", nil, nil)
	descRWFailures = prometheus.NewDesc("holdfast_remote_write_failures_total",
		"Sends that failed and will be retried (no answer, timeout, 5xx, 429).", nil, nil)
	descRWLag = prometheus.NewDesc("holdfast_remote_write_lag_seconds",
		"How far the receiver trails the local store, on the daemon's clock: it has every stored sample older than this.", nil, nil)
	descRWLast = prometheus.NewDesc("holdfast_remote_write_last_success_timestamp_seconds",
		"Unix time of the last send the receiver accepted, on the daemon's clock.", nil, nil)
)

// newRemoteWriter builds the remote writer of cfg.RemoteWrite and registers
// its metrics; with no remote_write section it returns nil, whose run
// returns at once.
func newRemoteWriter(d *Daemon) (*remoteWriter, error) {
	cfg := d.conf().RemoteWrite
	if cfg == nil {
		return nil, nil
	}
	w := &remoteWriter{cfg: cfg, db: d.store, clock: d.clock, log: d.log.With("part", "remote_write"),
		reader: cfg.URL, start: d.clock.Now().Add(-cfg.Backfill.D()), cursor: map[string]time.Time{}, lastMs: map[string]int64{}}
	for _, g := range d.gauges {
		name, ok := seriesio.MetricName(g.cfg.Kind)
		if !ok {
			continue
		}
		labels := []rwLabel{{"__name__", name}, {"gauge", g.name}}
		for k, v := range cfg.Labels {
			labels = append(labels, rwLabel{k, v})
		}
		slices.SortFunc(labels, func(a, b rwLabel) int { return strings.Compare(a.name, b.name) })
		w.series = append(w.series, rwGauge{gauge: g.name, labels: labels})
	}
	client := &http.Client{Transport: bearer{token: cfg.Token, base: http.DefaultTransport}}
	api, err := remote.NewAPI(cfg.URL,
		remote.WithAPIPath(""), // the URL is the write endpoint as given
		remote.WithAPIHTTPClient(client),
		// One attempt per Write: retries and their backoff run here, on the
		// daemon's clock (a negative count stops the library's own loop).
		remote.WithAPIBackoff(remote.BackoffConfig{Min: time.Millisecond, Max: time.Millisecond, MaxRetries: -1}),
		remote.WithAPILogger(w.log))
	if err != nil {
		return nil, fmt.Errorf("remote_write: %w", err)
	}
	w.api = api
	d.met.reg.MustRegister(w)
	return w, nil
}

// bearer adds the Authorization header to every request.
type bearer struct {
	token string
	base  http.RoundTripper
}

func (b bearer) RoundTrip(r *http.Request) (*http.Response, error) {
	if b.token == "" {
		return b.base.RoundTrip(r)
	}
	r = r.Clone(r.Context())
	r.Header.Set("Authorization", "Bearer "+b.token)
	return b.base.RoundTrip(r)
}

// run sends every cfg.Every until ctx is done; after a failed send it waits
// retry.min, doubled per failure up to retry.max (or the receiver's
// Retry-After when longer), then replays from the cursors.
func (w *remoteWriter) run(ctx context.Context) {
	if w == nil {
		return
	}
	if err := w.load(); err != nil {
		w.log.Error("remote write cannot read its cursors; not sending", "err", err)
		return
	}
	var wait, backoff time.Duration
	failing := false
	for {
		select {
		case <-ctx.Done():
			return
		case <-w.clock.After(wait):
		}
		err := w.drain(ctx)
		if ctx.Err() != nil {
			return
		}
		if err == nil {
			if failing {
				w.log.Info("remote write working again")
			}
			failing, backoff, wait = false, 0, w.cfg.Every.D()
			continue
		}
		backoff = min(max(2*backoff, w.cfg.Retry.Min.D()), w.cfg.Retry.Max.D())
		wait = backoff
		var ra interface{ RetryAfter() time.Duration }
		if errors.As(err, &ra) && ra.RetryAfter() > wait {
			wait = min(ra.RetryAfter(), w.cfg.Retry.Max.D())
		}
		if !failing {
			w.log.Warn("remote write failing; stored samples will be sent when the receiver is back", "url", notify.RedactURL(w.reader), "err", err)
		} else {
			w.log.Debug("remote write still failing", "err", err, "retry_seconds", wait.Seconds())
		}
		failing = true
	}
}

// load reads the cursors; a gauge with none starts at w.start.
func (w *remoteWriter) load() error {
	cur, err := w.db.Cursors(w.reader)
	if err != nil {
		return err
	}
	start := w.start
	w.mu.Lock()
	defer w.mu.Unlock()
	w.complete = start
	for i, s := range w.series {
		c, ok := cur[s.gauge]
		if !ok {
			c = start.Add(-time.Nanosecond)
		}
		w.cursor[s.gauge] = c
		w.lastMs[s.gauge] = c.UnixMilli()
		if next := c.Add(time.Nanosecond); i == 0 || next.Before(w.complete) {
			w.complete = next
		}
	}
	return nil
}

// drain sends batches until every sample stored before now has been sent,
// or a send fails (returned: the cursors stay where the receiver left them).
func (w *remoteWriter) drain(ctx context.Context) error {
	to := w.clock.Now()
	for {
		req, moved, n, full, err := w.collect(to)
		if err != nil {
			return err
		}
		if n > 0 {
			if err := w.send(ctx, req, n); err != nil {
				return err
			}
		}
		w.advance(moved, n)
		if !full {
			w.mu.Lock()
			w.complete = to
			w.mu.Unlock()
			return nil
		}
	}
}

// collect reads up to batch samples after the cursors and before to, an
// equal share per gauge. moved holds each gauge's new cursor; full says a
// share ran out before to (another batch follows).
func (w *remoteWriter) collect(to time.Time) (req *writeRequest, moved map[string]time.Time, n int, full bool, err error) {
	share := max(1, w.cfg.Batch/max(1, len(w.series)))
	req, moved = &writeRequest{}, map[string]time.Time{}
	for _, s := range w.series {
		w.mu.Lock()
		from, lastMs := w.cursor[s.gauge].Add(time.Nanosecond), w.lastMs[s.gauge]
		w.mu.Unlock()
		var samples []rwSample
		var last time.Time
		serr := w.db.Scan(s.gauge, from, to, func(p store.Point) bool {
			ms := p.At.UnixMilli()
			ok := p.Quality == 0 && ms != lastMs
			if ok && len(samples) == share {
				full = true
				return false
			}
			last = p.At
			if ok {
				samples = append(samples, rwSample{ms: ms, value: p.Value})
				lastMs = ms
			}
			return true
		})
		var ce *store.ChunkError
		if errors.As(serr, &ce) {
			w.log.Warn("remote write skips damaged chunks", "gauge", s.gauge, "err", serr)
		} else if serr != nil {
			return nil, nil, 0, false, fmt.Errorf("read %s: %w", s.gauge, serr)
		}
		if !last.IsZero() {
			moved[s.gauge] = last
		}
		if len(samples) > 0 {
			req.series = append(req.series, rwSeriesData{labels: s.labels, samples: samples})
			n += len(samples)
		}
	}
	return req, moved, n, full, nil
}

// send posts one batch. A refusal for good is logged and counted, and the
// batch is skipped (nil); anything that may pass later is returned.
func (w *remoteWriter) send(ctx context.Context, req *writeRequest, n int) error {
	sctx, cancel := context.WithTimeout(ctx, w.cfg.Timeout.D())
	_, err := w.api.Write(sctx, remote.WriteV1MessageType, req)
	cancel()
	var retry interface{ RetryAfter() time.Duration }
	switch {
	case err == nil:
		w.mu.Lock()
		w.sent += float64(n)
		w.lastOK = w.clock.Now()
		w.mu.Unlock()
		return nil
	case errors.As(err, &retry) || ctx.Err() != nil:
		w.mu.Lock()
		w.failures++
		w.mu.Unlock()
		return err
	}
	w.log.Error("remote-write receiver refused samples; skipped (they stay in the local store: export them as OpenMetrics to backfill; a Prometheus receiver takes samples older than its head only within storage.tsdb.out_of_order_time_window)",
		"samples", n, "err", err)
	w.mu.Lock()
	w.rejected += float64(n)
	w.mu.Unlock()
	return nil
}

// advance moves the cursors past a batch the receiver has dealt with and
// keeps them in the data file. If they cannot be written, they still move
// in memory: after a restart the batch is sent again, which a receiver
// takes as a duplicate of what it has.
func (w *remoteWriter) advance(moved map[string]time.Time, n int) {
	if len(moved) == 0 {
		return
	}
	w.mu.Lock()
	for g, t := range moved {
		w.cursor[g] = t
		w.lastMs[g] = t.UnixMilli()
	}
	w.mu.Unlock()
	if err := w.db.SetCursors(w.reader, moved); err != nil {
		w.log.Error("remote write cannot keep its cursors in the data file; a restart will send the last batch again", "samples", n, "err", err)
	}
}

// Describe sends the remote writer's metric descriptions.
func (w *remoteWriter) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{descRWSent, descRWRejected, descRWFailures, descRWLag, descRWLast} {
		ch <- d
	}
}

// Collect sends the remote writer's counters and lag.
func (w *remoteWriter) Collect(ch chan<- prometheus.Metric) {
	now := w.clock.Now()
	w.mu.Lock()
	defer w.mu.Unlock()
	ch <- prometheus.MustNewConstMetric(descRWSent, prometheus.CounterValue, w.sent)
	ch <- prometheus.MustNewConstMetric(descRWRejected, prometheus.CounterValue, w.rejected)
	ch <- prometheus.MustNewConstMetric(descRWFailures, prometheus.CounterValue, w.failures)
	ch <- prometheus.MustNewConstMetric(descRWLag, prometheus.GaugeValue, max(0, now.Sub(w.complete).Seconds()))
	if !w.lastOK.IsZero() {
		ch <- prometheus.MustNewConstMetric(descRWLast, prometheus.GaugeValue, float64(w.lastOK.UnixNano())/1e9)
	}
}
