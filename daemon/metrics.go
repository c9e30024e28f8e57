package daemon

import (
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"holdfast/calib"
)

// metrics is the daemon's own registry: no globals, no default registry.
type metrics struct {
	reg        *prometheus.Registry
	polls      *prometheus.CounterVec
	pollErrors *prometheus.CounterVec
	skipped    *prometheus.CounterVec
}

func newMetrics(d *Daemon) *metrics {
	m := &metrics{
		reg: prometheus.NewRegistry(),
		polls: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "holdfast_polls_total", Help: "Polls attempted, per gauge.",
		}, []string{"gauge"}),
		pollErrors: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "holdfast_poll_errors_total", Help: "Polls that got no usable answer, per gauge and reason (no-reply, bad-reply, link).",
		}, []string{"gauge", "reason"}),
		skipped: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "holdfast_polls_skipped_total", Help: "Scheduled polls skipped because the link was busy past their time, and readings not kept because they fell within the store's resolution of the gauge's last sample (a poll right after a stalled one).",
		}, []string{"gauge"}),
	}
	for _, g := range d.gauges {
		m.polls.WithLabelValues(g.name)
		m.skipped.WithLabelValues(g.name)
		for _, r := range pollFailReasons {
			m.pollErrors.WithLabelValues(g.name, r)
		}
	}
	m.reg.MustRegister(
		collectors.NewGoCollector(
			collectors.WithGoCollectorMemStatsMetricsDisabled(),
			collectors.WithGoCollectorRuntimeMetrics(collectors.MetricsGC, collectors.MetricsMemory, collectors.MetricsScheduler),
		),
		collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}),
		buildInfoCollector(ReadBuild()),
		m.polls, m.pollErrors, m.skipped,
		&liveCollector{d: d},
		storeCollector{d: d},
		notifyCollector{d: d},
	)
	return m
}

var (
	descPressure = prometheus.NewDesc("holdfast_pressure_pascals",
		"Last valid pressure read by the poller, after calibration; also exported when extrapolated beyond a calibration's fitted range (see holdfast_sensor_quality). Absent while the gauge has no valid reading.",
		[]string{"gauge"}, nil)
	descTemperature = prometheus.NewDesc("holdfast_temperature_celsius",
		"Last valid temperature read by the poller. Absent while the gauge has no valid reading.",
		[]string{"gauge"}, nil)
	descState = prometheus.NewDesc("holdfast_digital_state",
		"Last state read from a digital input (a valve-closed switch, a pump-running contact): 1 on, 0 off. Absent while unknown.",
		[]string{"gauge"}, nil)
	descInfo = prometheus.NewDesc("holdfast_sensor_info",
		"Always 1: what each gauge is (its link, driver, kind and display unit), to join on the gauge label.",
		[]string{"gauge", "link", "driver", "kind", "unit"}, nil)
	descUp = prometheus.NewDesc("holdfast_sensor_up",
		"1 while the gauge answers its polls, its last sample is recent and it reports no sensor fault, else 0 (holdfast_sensor_quality says why).",
		[]string{"gauge"}, nil)
	descQuality = prometheus.NewDesc("holdfast_sensor_quality",
		"1 for what the gauge's value is worth now, 0 for the others: its last sample's quality (ok, over-range, under-range, sensor-fault, off, extrapolated) while it answers, no-reply while it does not (its link down, or no answer yet), stale while its last sample is too old though no poll failed (a poller held up).",
		[]string{"gauge", "quality"}, nil)
	descLast = prometheus.NewDesc("holdfast_last_sample_timestamp_seconds",
		"Unix time of the gauge's last sample, on the daemon's clock.",
		[]string{"gauge"}, nil)
	descLinkUp = prometheus.NewDesc("holdfast_link_up",
		"1 while the link's device is open and its last exchange did not fail it, else 0.",
		[]string{"link"}, nil)
	descLinkReconnects = prometheus.NewDesc("holdfast_link_reconnects_total",
		"Times the link was reopened after a failure (an unplugged adapter, a rebooted converter).",
		[]string{"link"}, nil)
	descLinkTimeouts = prometheus.NewDesc("holdfast_link_timeouts_total",
		"Exchanges on the link that got no complete reply in time.",
		[]string{"link"}, nil)
	descAlarmsUp = prometheus.NewDesc("holdfast_alarms_up",
		"1 while the alarm engine evaluates alarms, 0 when its stored state could not be loaded (no alarm will be raised).",
		nil, nil)
	descStoreErr = prometheus.NewDesc("holdfast_store_flush_failing",
		"1 while writes to the sample store fail (samples are held in memory and retried), else 0.",
		nil, nil)
)

// valueDescs gives the metric of each kind's value; an OpenMetrics export
// and remote write use the same names (seriesio.MetricName).
var valueDescs = map[string]*prometheus.Desc{"pressure": descPressure, "temperature": descTemperature, "state": descState}

// liveCollector builds fresh metrics from the pollers' last samples on
// every scrape, so a gauge that stops answering drops its value instead of
// exporting a stale one.
type liveCollector struct{ d *Daemon }

func (c *liveCollector) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range append([]*prometheus.Desc{descPressure, descTemperature, descUp, descQuality, descLast, descLinkUp, descLinkReconnects, descLinkTimeouts, descAlarmsUp, descStoreErr}, alarmDescs...) {
		ch <- d
	}
}

func (c *liveCollector) Collect(ch chan<- prometheus.Metric) {
	at := c.d.clock.Now()
	for _, g := range c.d.gauges {
		link, driver := g.cfg.Link, g.cfg.Driver
		if len(g.cfg.Combine) > 0 {
			driver = "combine"
		}
		ch <- prometheus.MustNewConstMetric(descInfo, prometheus.GaugeValue, 1, g.name, link, driver, g.cfg.Kind, g.cfg.Unit)
		v := g.view(at)
		ch <- prometheus.MustNewConstMetric(descUp, prometheus.GaugeValue, b2f(v.up && !v.stale), v.name)
		now := v.quality()
		for _, q := range liveQualities() {
			ch <- prometheus.MustNewConstMetric(descQuality, prometheus.GaugeValue, b2f(q == now), v.name, q)
		}
		if !v.seen {
			continue
		}
		ch <- prometheus.MustNewConstMetric(descLast, prometheus.GaugeValue, float64(v.last.At.UnixNano())/1e9, v.name)
		if !v.last.Quality.HasValue() || v.stale || !v.up {
			continue
		}
		desc := valueDescs[v.kind]
		if desc == nil {
			continue
		}
		ch <- prometheus.MustNewConstMetric(desc, prometheus.GaugeValue, v.last.Value, v.name)
	}
	c.d.collectAlarms(ch)
	for _, l := range c.d.links {
		if l.stats == nil {
			continue
		}
		st := l.stats()
		ch <- prometheus.MustNewConstMetric(descLinkUp, prometheus.GaugeValue, b2f(st.Up), l.name)
		ch <- prometheus.MustNewConstMetric(descLinkReconnects, prometheus.CounterValue, float64(st.Reconnects), l.name)
		ch <- prometheus.MustNewConstMetric(descLinkTimeouts, prometheus.CounterValue, float64(st.Timeouts), l.name)
	}
	ch <- prometheus.MustNewConstMetric(descAlarmsUp, prometheus.GaugeValue, b2f(c.d.alarmsDown.Load() == nil))
	c.d.flushMu.Lock()
	failing := c.d.flushErr != nil
	c.d.flushMu.Unlock()
	ch <- prometheus.MustNewConstMetric(descStoreErr, prometheus.GaugeValue, b2f(failing))
}

// The states holdfast_sensor_quality adds to the stored qualities, for a
// gauge that gives no value now whatever its last sample said. They are
// label values of the metric (and words in notifications), never stored:
// a stored quality is a calib.Quality.
const (
	qualityNoReply = "no-reply" // downAfter polls in a row unanswered (or one, once the last sample is stale), the link down, or no answer yet
	qualityStale   = "stale"    // no poll failed, but none has completed within the stale limit either (a poller held up)
)

// liveQualities lists every value the quality label of
// holdfast_sensor_quality takes: the stored qualities, then the live states.
func liveQualities() []string {
	var qs []string
	for q := calib.QualityOK; q <= calib.QualityLast; q++ {
		qs = append(qs, q.String())
	}
	return append(qs, qualityNoReply, qualityStale)
}

// quality says what the gauge's value is worth now: no-reply while it does
// not answer, stale while its last sample is too old, else that sample's
// quality. A gauge down for a sensor fault answers, so it says sensor-fault.
func (v gaugeView) quality() string {
	switch {
	case !v.seen || v.silent:
		return qualityNoReply
	case v.stale:
		return qualityStale
	}
	return v.last.Quality.String()
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
