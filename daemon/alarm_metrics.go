package daemon

import (
	"github.com/prometheus/client_golang/prometheus"

	"holdfast/alerts"
)

var (
	descAlarmState = prometheus.NewDesc("holdfast_alarm_state",
		"1 for the alarm's current IEC 62682 state (normal, unacknowledged, acknowledged, returned-unacknowledged, shelved, suppressed, out-of-service), 0 for the others.",
		[]string{"alarm", "gauge", "severity", "state"}, nil)
	descAlarmRaised = prometheus.NewDesc("holdfast_alarms_raised_total",
		"Times the alarm was raised, over its stored history (kept across restarts).",
		[]string{"alarm", "gauge", "severity"}, nil)
	descAlarmChattering = prometheus.NewDesc("holdfast_alarm_chattering",
		"1 while the alarm is chattering (raised repeatedly within its chatter window), else 0.",
		[]string{"alarm", "gauge", "severity"}, nil)
	descLeakRate = prometheus.NewDesc("holdfast_leak_rate_pascal_cubic_meters_per_second",
		"Leak rate Q = V·dp/dt found by the last hold test on the gauge whose rise was leak-dominated or mixed: its leak term, never outgassing or an upper bound (1 Pa·m³/s = 10 mbar·L/s).",
		[]string{"gauge"}, nil)
	descAlarmDropped = prometheus.NewDesc("holdfast_alarm_transitions_dropped_total",
		"Alarm transitions given up, never stored or notified, because more than the engine's bound waited while the alarm state could not be stored (the alarms' states are kept).",
		nil, nil)
)

var alarmDescs = []*prometheus.Desc{descAlarmState, descAlarmRaised, descAlarmChattering, descLeakRate, descAlarmDropped}

// collectAlarms sends the alarm and hold-test metrics.
func (d *Daemon) collectAlarms(ch chan<- prometheus.Metric) {
	for _, a := range d.alarms.Status() {
		sev := string(a.Severity)
		for _, s := range alerts.States() {
			ch <- prometheus.MustNewConstMetric(descAlarmState, prometheus.GaugeValue, b2f(a.State == s), a.Alarm, a.Gauge, sev, string(s))
		}
		ch <- prometheus.MustNewConstMetric(descAlarmRaised, prometheus.CounterValue, float64(a.Raised), a.Alarm, a.Gauge, sev)
		ch <- prometheus.MustNewConstMetric(descAlarmChattering, prometheus.GaugeValue, b2f(a.Chattering), a.Alarm, a.Gauge, sev)
	}
	ch <- prometheus.MustNewConstMetric(descAlarmDropped, prometheus.CounterValue, float64(d.alarms.DroppedTransitions()))
	hs, _ := d.recentHoldTests(50)
	last := map[string]float64{}
	for _, h := range hs {
		if h.State == holdDone && h.Result != nil && !h.Result.UpperBoundOnly &&
			(h.Result.Classification == alerts.LeakDominated || h.Result.Classification == alerts.Mixed) {
			last[h.Gauge] = h.Result.LeakRate
		}
	}
	for g, q := range last {
		ch <- prometheus.MustNewConstMetric(descLeakRate, prometheus.GaugeValue, q, g)
	}
}
