package daemon

import (
	"context"
	"log/slog"
	"net/http"

	"holdfast/alerts"
)

// alarmLoop runs time-driven alarm work (stale rules, shelving expiry,
// reminders) until ctx is done. Nothing is time-driven yet.
func (d *Daemon) alarmLoop(ctx context.Context) { <-ctx.Done() }

// alarmRoutes mounts the alarm API. There is none yet.
func (d *Daemon) alarmRoutes(mux *http.ServeMux) {}

func (d *Daemon) alarmEvent(log *slog.Logger, ev alerts.Event) {
	kind := map[alerts.EventKind]string{alerts.LimitCrossed: "limit-crossed", alerts.Raised: "alarm-raised", alerts.Cleared: "alarm-cleared"}[ev.Kind]
	attrs := []any{"alarm", ev.Alarm, "gauge", ev.Gauge, "severity", string(ev.Severity), "detail", ev.Message}
	switch ev.Kind {
	case alerts.Raised:
		log.Error("alarm raised", attrs...)
	case alerts.Cleared:
		log.Info("alarm cleared", attrs...)
	default:
		log.Info("limit crossed", attrs...)
	}
	d.notify(ev)
	d.emit(Event{At: ev.At, Kind: kind, Gauge: ev.Gauge, Alarm: ev.Alarm, Severity: string(ev.Severity), Message: ev.Message})
}
