package daemon

import (
	"context"
	"math"
	"time"

	"holdfast/alerts"
	"holdfast/alerts/notify"
	"holdfast/calib"
)

// notify hands an alarm transition to the notifiers: it is in the outbox,
// on disk, for every notifier that wants it, before notify returns nil. The
// sending happens in notifyLoop. An error means it is not queued; the alarm
// engine then hands it over again after a restart.
func (d *Daemon) notify(ev alerts.Event) error {
	n := d.notifiers()
	if n == nil {
		return nil
	}
	tr, ok := transitionOf(d.conf().Chamber.Name, ev)
	if !ok {
		return nil
	}
	tr.Quality = d.gaugeQuality(ev.Gauge, d.clock.Now())
	if err := n.enqueue(tr); err != nil {
		n.log.Error("alarm transition not queued for notification", "alarm", tr.Alarm, "event", tr.Event, "err", err)
		return err
	}
	return nil
}

// notifyLoop delivers queued notifications, re-posts active alarms to
// Alertmanagers, and sends reminders, until ctx is done. It returns once
// every send in flight has been cut short.
func (d *Daemon) notifyLoop(ctx context.Context) {
	d.liveMu.RLock() // the set is built once, from the running config
	n := d.notifiers()
	d.liveMu.RUnlock()
	if n == nil {
		<-ctx.Done()
		return
	}
	n.run(ctx, d)
}

// The mapping from the alarm engine's events to what notifiers report
// lives in transitionOf and nowhere else.

// transitionOf turns an engine event into a notification; false means the
// event is not one to tell anyone about: a limit crossed whose on-delay is
// still running, or a raise or clear while the alarm is shelved,
// suppressed or out of service (recorded in the history, not annunciated).
func transitionOf(chamber string, ev alerts.Event) (notify.Transition, bool) {
	if !ev.Transition() {
		return notify.Transition{}, false
	}
	switch ev.State {
	case alerts.Shelved, alerts.Suppressed, alerts.OutOfService:
		if ev.Kind == alerts.Raised || ev.Kind == alerts.Cleared {
			return notify.Transition{}, false
		}
	}
	tr := notify.Transition{Chamber: chamber, Alarm: ev.Alarm, Gauge: ev.Gauge, Severity: string(ev.Severity),
		Event: string(ev.Kind), State: string(ev.State), Message: ev.Message, At: ev.At, Unit: ev.Unit,
		DedupeKey: chamber + "/" + ev.DedupeKey}
	if u, err := calib.LookupUnit(ev.Unit); err == nil {
		tr.Value, tr.Limit = inUnit(ev.Value, u), inUnit(ev.Limit, u)
	}
	if tr.Active() {
		tr.Since = ev.At
	}
	return tr, true
}

// gaugeQuality is what the gauge's value is worth now, for a notification
// that has no value to show: its last sample's quality (ok, over-range,
// under-range, sensor-fault, off, extrapolated), stale (no sample lately)
// or no-reply (the gauge is not answering), as holdfast_sensor_quality
// says. Empty for a gauge that has not answered yet or is not a gauge (the
// daemon's own health).
func (d *Daemon) gaugeQuality(name string, now time.Time) string {
	g := d.gaugeNamed(name)
	if g == nil {
		return ""
	}
	v := g.view(now)
	if !v.seen {
		return ""
	}
	return v.quality()
}

// inUnit converts an SI value for a notification; nil when there is none.
func inUnit(si float64, u calib.Unit) *float64 {
	if math.IsNaN(si) || math.IsInf(si, 0) {
		return nil
	}
	v := u.FromSI(si)
	return &v
}

// activeAlarms lists the alarms active now, as notifications, so that an
// Alertmanager keeps hearing about them after a restart.
func (d *Daemon) activeAlarms() []notify.Transition {
	var out []notify.Transition
	for _, s := range d.Alarms() {
		if s.Active {
			out = append(out, notify.Transition{Chamber: d.conf().Chamber.Name, Alarm: s.Alarm, Gauge: s.Gauge,
				Severity: string(s.Severity), Event: "raised", State: notify.StateUnacknowledged, At: s.Since, Since: s.Since,
				Message: s.Alarm + " active since " + s.Since.UTC().Format(time.RFC3339)})
		}
	}
	return out
}
