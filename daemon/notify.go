package daemon

import (
	"context"
	"strings"
	"time"

	"holdfast/alerts"
	"holdfast/alerts/notify"
)

// notify hands an alarm transition to the notifiers: it is in the outbox,
// on disk, for every notifier that wants it, before notify returns. The
// sending happens in notifyLoop.
func (d *Daemon) notify(ev alerts.Event) {
	n := d.notifiers()
	if n == nil {
		return
	}
	tr, ok := transitionOf(d.cfg.Chamber.Name, ev)
	if !ok {
		return
	}
	if err := n.enqueue(tr); err != nil {
		n.log.Error("alarm transition not queued for notification", "alarm", tr.Alarm, "event", tr.Event, "err", err)
	}
}

// notifyLoop delivers queued notifications, re-posts active alarms to
// Alertmanagers, and sends reminders, until ctx is done. It returns once
// every send in flight has been cut short.
func (d *Daemon) notifyLoop(ctx context.Context) {
	n := d.notifiers()
	if n == nil {
		<-ctx.Done()
		return
	}
	n.run(ctx, d)
}

// The mapping from the alarm engine's events to what notifiers report
// lives in the next two functions and nowhere else.

// transitionOf turns an engine event into a notification; false means the
// event is not a transition to tell anyone about (a limit crossed whose
// on-delay is still running).
func transitionOf(chamber string, ev alerts.Event) (notify.Transition, bool) {
	kind := string(ev.Kind)
	state, ok := stateAfter[kind]
	if !ok {
		return notify.Transition{}, false
	}
	tr := notify.Transition{Chamber: chamber, Alarm: ev.Alarm, Gauge: ev.Gauge, Severity: string(ev.Severity),
		Event: kind, State: state, Message: ev.Message, At: ev.At, DedupeKey: dedupeKey(chamber, ev)}
	if tr.Active() {
		tr.Since = ev.At
	}
	return tr, true
}

// stateAfter is the alarm state each event kind leaves (IEC 62682 names).
// The engine's events will carry their state; until then it is implied by
// the kind, as the limit engine knows no acknowledgement.
var stateAfter = map[string]string{
	"raised":       notify.StateUnacknowledged,
	"cleared":      notify.StateNormal,
	"acknowledged": notify.StateAcknowledged,
	"shelved":      notify.StateShelved,
	"unshelved":    notify.StateNormal,
}

// dedupeKey names one transition uniquely and reproducibly: the same
// transition reported again (after a restart) gets the same key. The
// chamber comes first so receivers shared by several daemons can keep
// keys apart.
func dedupeKey(chamber string, ev alerts.Event) string {
	return strings.Join([]string{chamber, ev.Alarm, string(ev.Kind), ev.At.UTC().Format(time.RFC3339Nano)}, "/")
}

// activeAlarms lists the alarms active now, as notifications, so that an
// Alertmanager keeps hearing about them after a restart.
func (d *Daemon) activeAlarms() []notify.Transition {
	var out []notify.Transition
	for _, s := range d.Alarms() {
		if s.Active {
			out = append(out, notify.Transition{Chamber: d.cfg.Chamber.Name, Alarm: s.Alarm, Gauge: s.Gauge,
				Severity: string(s.Severity), Event: "raised", State: notify.StateUnacknowledged, At: s.Since, Since: s.Since,
				Message: s.Alarm + " active since " + s.Since.UTC().Format(time.RFC3339)})
		}
	}
	return out
}
