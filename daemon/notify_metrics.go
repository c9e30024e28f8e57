package daemon

import (
	"github.com/prometheus/client_golang/prometheus"
)

const (
	helpDeliveries = "Sends to the notifier since the daemon started, by result: delivered and failed count sends of queued " +
		"notifications (a grouped message is one send), parked counts notifications the receiver refused for good " +
		"(kept aside, see holdfast alarms history), repost and repost_failed count Alertmanager re-posts of active " +
		"alarms, which deliver no new transition."
	helpParked = "Notifications the notifier's receiver refused for good (an HTTP 4xx other than 408 and 429), kept aside " +
		"for 30 days and shown by holdfast alarms history."
	helpOldest = "How long the oldest notification waiting for the notifier has waited, on the daemon's clock; 0 when none waits."
)

var (
	descNotifyDeliveries = prometheus.NewDesc("holdfast_notify_deliveries_total", helpDeliveries,
		[]string{"notifier", "result"}, nil)
	descNotifyQueue = prometheus.NewDesc("holdfast_notify_queue_length",
		"Notifications waiting in the durable outbox for the notifier.",
		[]string{"notifier"}, nil)
	descNotifyOldest = prometheus.NewDesc("holdfast_notify_oldest_queued_age_seconds", helpOldest,
		[]string{"notifier"}, nil)
	descNotifyParked = prometheus.NewDesc("holdfast_notify_parked_notifications", helpParked,
		[]string{"notifier"}, nil)
	descNotifyLast = prometheus.NewDesc("holdfast_notify_last_success_timestamp_seconds",
		"Unix time of the notifier's last delivered send of a queued notification (re-posts do not count), "+
			"on the daemon's clock, kept across restarts. Absent until the first.",
		[]string{"notifier"}, nil)
)

// notifyCollector exports notifier health, read fresh at each scrape.
type notifyCollector struct{ d *Daemon }

// Describe sends the notifier metrics' descriptors.
func (c notifyCollector) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{descNotifyDeliveries, descNotifyQueue, descNotifyOldest, descNotifyParked, descNotifyLast} {
		ch <- d
	}
}

// Collect reports every configured notifier. If the outbox cannot be
// read, the queue, parked and timestamp metrics are left out rather than
// guessed.
func (c notifyCollector) Collect(ch chan<- prometheus.Metric) {
	n := c.d.notifiers()
	if n == nil {
		return
	}
	now := n.clock.Now()
	hs, err := n.ob.Health()
	for i, s := range n.sinks {
		name := s.cfg.Name
		results := map[string]float64{"delivered": 0, "failed": 0, "parked": 0}
		if i < len(hs) {
			results["delivered"], results["failed"], results["parked"] = float64(hs[i].Delivered), float64(hs[i].Failed), float64(hs[i].Refused)
		}
		if s.am != nil {
			results["repost"], results["repost_failed"] = float64(s.reposts.Load()), float64(s.repostsFailed.Load())
		}
		for result, v := range results {
			ch <- prometheus.MustNewConstMetric(descNotifyDeliveries, prometheus.CounterValue, v, name, result)
		}
		if err != nil || i >= len(hs) {
			continue
		}
		h := hs[i]
		ch <- prometheus.MustNewConstMetric(descNotifyQueue, prometheus.GaugeValue, float64(h.Queued), name)
		age := 0.0
		if !h.Oldest.IsZero() {
			age = max(0, now.Sub(h.Oldest).Seconds())
		}
		ch <- prometheus.MustNewConstMetric(descNotifyOldest, prometheus.GaugeValue, age, name)
		ch <- prometheus.MustNewConstMetric(descNotifyParked, prometheus.GaugeValue, float64(h.Parked), name)
		if !h.LastSuccess.IsZero() {
			ch <- prometheus.MustNewConstMetric(descNotifyLast, prometheus.GaugeValue, float64(h.LastSuccess.UnixNano())/1e9, name)
		}
	}
}
