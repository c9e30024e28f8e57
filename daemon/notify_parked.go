package daemon

import (
	"encoding/json"
	"slices"
	"time"

	"holdfast/alerts/notify"
)

// refusedWindow is how long a parked notification keeps a notify_refused
// health alarm active: long enough for the health sample to see it
// (healthEvery), short enough that the alarm clears on its own once the
// receiver takes notifications again.
const refusedWindow = time.Hour

// refusedLately counts the notifications parked within refusedWindow
// before now, over every notifier, leaving out those about a
// notify_refused alarm itself: a receiver that refuses everything would
// otherwise keep that alarm raising and clearing for ever.
func (d *Daemon) refusedLately(now time.Time) int {
	n := d.notifiers()
	if n == nil {
		return 0
	}
	self := map[string]bool{}
	for _, a := range d.conf().Alarms {
		if a != nil && a.Health == "notify_refused" {
			self[a.Name] = true
		}
	}
	count := 0
	for _, s := range n.sinks {
		parked, err := n.ob.Parked(s.cfg.Name)
		if err != nil {
			n.log.Warn("parked notifications unreadable", "notifier", s.cfg.Name, "err", err)
			continue
		}
		for _, p := range parked {
			if now.Sub(p.At) > refusedWindow {
				continue
			}
			var tr notify.Transition
			if json.Unmarshal(p.Payload, &tr) == nil && self[tr.Alarm] {
				continue
			}
			count++
		}
	}
	return count
}

// parkedHistory lists parked notifications as history entries of kind
// notify-parked, of one alarm ("" for all) at or after from, oldest first,
// so that holdfast alarms history shows what never reached a receiver.
func (d *Daemon) parkedHistory(alarm string, from time.Time) []EventJSON {
	n := d.notifiers()
	if n == nil {
		return nil
	}
	var out []EventJSON
	for _, s := range n.sinks {
		parked, err := n.ob.Parked(s.cfg.Name)
		if err != nil {
			continue
		}
		for _, p := range parked {
			var tr notify.Transition
			if json.Unmarshal(p.Payload, &tr) != nil || (alarm != "" && tr.Alarm != alarm) || p.At.Before(from) {
				continue
			}
			out = append(out, EventJSON{At: p.At, Kind: "notify-parked", Alarm: tr.Alarm, Gauge: tr.Gauge,
				Severity: tr.Severity, State: tr.State, Notifier: s.cfg.Name, DedupeKey: p.Key,
				Message: "not delivered to " + s.cfg.Name + " (" + tr.Event + " at " + tr.At.UTC().Format(time.RFC3339) +
					"): refused for good: " + p.Reason})
		}
	}
	return out
}

// withParked merges parked notifications into history entries (both
// oldest first), keeping at most limit entries (0: all).
func withParked(evs, parked []EventJSON, limit int) []EventJSON {
	if len(parked) == 0 {
		return evs
	}
	out := append(slices.Clone(evs), parked...)
	slices.SortStableFunc(out, func(a, b EventJSON) int { return a.At.Compare(b.At) })
	if limit > 0 && len(out) > limit {
		out = out[:limit]
	}
	return out
}
