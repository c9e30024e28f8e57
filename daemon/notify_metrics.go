package daemon

import (
	"github.com/prometheus/client_golang/prometheus"
)

var (
	descNotifyDeliveries = prometheus.NewDesc("holdfast_notify_deliveries_total",
		"Sends to the notifier since the daemon started, by result (success, failure); a grouped message is one send.",
		[]string{"notifier", "result"}, nil)
	descNotifyQueue = prometheus.NewDesc("holdfast_notify_queue_length",
		"Notifications waiting in the durable outbox for the notifier.",
		[]string{"notifier"}, nil)
	descNotifyLast = prometheus.NewDesc("holdfast_notify_last_success_timestamp_seconds",
		"Unix time of the notifier's last successful send, on the daemon's clock, kept across restarts. Absent until the first.",
		[]string{"notifier"}, nil)
)

// notifyCollector exports notifier health, read fresh at each scrape.
type notifyCollector struct{ d *Daemon }

// Describe sends the notifier metrics' descriptors.
func (c notifyCollector) Describe(ch chan<- *prometheus.Desc) {
	ch <- descNotifyDeliveries
	ch <- descNotifyQueue
	ch <- descNotifyLast
}

// Collect reports every configured notifier. If the outbox cannot be
// read, the queue and timestamp are left out rather than guessed.
func (c notifyCollector) Collect(ch chan<- prometheus.Metric) {
	n := c.d.notifiers()
	if n == nil {
		return
	}
	hs, err := n.ob.Health()
	for i, s := range n.sinks {
		name := s.cfg.Name
		var ok, failed float64
		if i < len(hs) {
			ok, failed = float64(hs[i].Delivered), float64(hs[i].Failed)
		}
		ok += float64(s.resendOK.Load())
		failed += float64(s.resendFailed.Load())
		ch <- prometheus.MustNewConstMetric(descNotifyDeliveries, prometheus.CounterValue, ok, name, "success")
		ch <- prometheus.MustNewConstMetric(descNotifyDeliveries, prometheus.CounterValue, failed, name, "failure")
		if err != nil || i >= len(hs) {
			continue
		}
		ch <- prometheus.MustNewConstMetric(descNotifyQueue, prometheus.GaugeValue, float64(hs[i].Queued), name)
		if last := s.lastSuccess(hs[i].LastSuccess); !last.IsZero() {
			ch <- prometheus.MustNewConstMetric(descNotifyLast, prometheus.GaugeValue, float64(last.UnixNano())/1e9, name)
		}
	}
}
