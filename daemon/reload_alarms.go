package daemon

import (
	"slices"
	"strings"

	"holdfast/alerts"
	"holdfast/daemon/config"
	"holdfast/daemon/outbox"
)

// A reload applies alarms: and shelving: live (Engine.Replace keeps every
// alarm's state by name). An alarm whose config and whose gauge's unit
// are unchanged keeps the very *alerts.Alarm it runs under, so the engine
// leaves it whole; one added or changed is built again from the new
// config. The bake's alarms are kept as they are: a bake change needs a
// restart.

// liveKey reports whether a key outside the named parts (config.Changes.Keys)
// applies on a running daemon.
func liveKey(key string) bool { return key == "shelving" || strings.HasPrefix(key, "shelving.") }

// reloadAlarms returns the alarms the engine is to run under cfg, or nil
// when they are the ones it runs.
func (d *Daemon) reloadAlarms(cfg *config.Config, ch config.Changes) []*alerts.Alarm {
	nd := &Daemon{}
	nd.cfgp.Store(cfg)
	running := make(map[string]*alerts.Alarm, len(d.alarmDefs))
	for _, a := range d.alarmDefs {
		running[a.Name] = a
	}
	differs := len(ch.Alarms.Removed) > 0
	var out []*alerts.Alarm
	for _, a := range cfg.Alarms {
		old := running[a.Name]
		if old != nil && !slices.Contains(ch.Alarms.Changed, a.Name) && d.gaugeUnit(a.Gauge) == nd.gaugeUnit(a.Gauge) {
			out = append(out, old)
			continue
		}
		out = append(out, nd.configAlarm(a))
		differs = true
	}
	for _, a := range d.alarmDefs {
		if !slices.ContainsFunc(d.conf().Alarms, func(c *config.AlarmConfig) bool { return c.Name == a.Name }) {
			out = append(out, a) // the bake's
		}
	}
	if !differs {
		return nil
	}
	return out
}

// swapAlarms puts the reloaded alarms (nil: the running ones stay) and
// shelving limits in place. The caller holds liveMu for writing and has
// made sure no hold test runs: the test suppressed alarms and isolated the
// chamber for the alarms it knows.
func (d *Daemon) swapAlarms(cfg *config.Config, defs []*alerts.Alarm) error {
	if defs != nil {
		if err := d.alarms.Replace(defs); err != nil {
			return &ReloadError{Reason: "new alarms not applied: " + err.Error()}
		}
		d.alarmDefs = defs
	}
	d.alarms.SetShelfLimits(alerts.ShelfLimits{Default: cfg.Shelving.Default.D(), Max: cfg.Shelving.Max.D()})
	return nil
}

// stopReminders ends every notifier's reminders about the alarms a reload
// removed: no one can acknowledge them any more, so they would remind for
// ever. Their queued notifications still go out.
func (d *Daemon) stopReminders(removed []string) {
	n := d.notifiers()
	if n == nil || len(removed) == 0 {
		return
	}
	err := n.ob.Update(func(t *outbox.Tx) error {
		for _, s := range n.sinks {
			for _, alarm := range removed {
				if err := t.StopReminder(s.cfg.Name, alarm); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		d.log.Warn("reminders about removed alarms not stopped",
			"alarms", removed, "err", err)
	}
}
