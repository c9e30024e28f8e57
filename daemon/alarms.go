package daemon

import (
	"context"
	"log/slog"
	"syscall"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
)

// Alarm loop timing: the engine's clock-driven work runs every alarmTick;
// the daemon's own health (disk, store writes) is sampled every healthEvery.
const (
	alarmTick   = time.Second
	healthEvery = 10 * time.Second
)

// alarmLoop restores the alarm state from the store, hands undelivered
// transitions to the notifiers again, ends hold tests a crash interrupted,
// then runs the time-driven alarm work (stale and fault rules, delays,
// shelving expiry, health, hold tests and their schedules) until ctx is
// done, when it ends running hold tests and puts their valves back.
func (d *Daemon) alarmLoop(ctx context.Context) {
	log := d.log.With("part", "alarms")
	st, err := alarmstore.Open(d.store.Bolt())
	var pending []alerts.Event
	if err == nil {
		pending, err = d.alarms.Attach(st)
	}
	if err != nil {
		// Without its stored state the engine would re-send or forget
		// alarms; it keeps deciding nothing and says so: in the log, on
		// /healthz (503) and in holdfast_alarms_up, and hold tests are refused.
		d.alarmsDown.Store(&err)
		log.Error("alarm state not loaded; alarms are not evaluated", "err", err)
		<-ctx.Done()
		return
	}
	if st.Renewed() != "" {
		log.Info("new instance id for the data file; dedupe keys of new transitions start with it",
			"instance", st.Instance(), "reason", st.Renewed())
	}
	for _, ev := range pending {
		d.deliver(ev)
	}
	d.abortHoldTests(log, st, "the daemon stopped during the test (a crash, a kill or a power cut); its record is incomplete", false)
	close(d.alarmsReady)
	schedCfg := d.conf()
	scheds := d.holdSchedules(d.clock.Now(), nil)
	var lastHealth time.Time
	var saveErr error
	var dropped uint64
	for {
		now := d.clock.Now()
		d.liveMu.RLock() // a reload swaps the gauges and links between ticks
		for _, ev := range d.alarms.Tick(now) {
			d.alarmEvent(log, ev)
		}
		saveErr = logSaveState(log, saveErr, d.alarms.StoreError())
		if n := d.alarms.DroppedTransitions(); n > dropped {
			log.Error("alarm transitions given up: too many waited to be stored; the alarms' states are kept",
				"given_up", n-dropped, "given_up_total", n, "kept_at_most", alerts.MaxWaiting)
			dropped = n
		}
		if now.Sub(lastHealth) >= healthEvery {
			lastHealth = now
			d.observeHealth(log, now)
		}
		d.retryDeliveries()
		if d.repeats != nil {
			d.repeats.Flush()
		}
		d.holdTests(ctx, log, st, now)
		if cfg := d.conf(); cfg != schedCfg { // reloaded
			schedCfg, scheds = cfg, d.holdSchedules(now, scheds)
		}
		d.runSchedules(log, scheds, now)
		d.liveMu.RUnlock()
		select {
		case <-ctx.Done():
			d.abortHoldTests(log, st, "the daemon was stopped during the test", true)
			return
		case <-d.clock.After(alarmTick):
		}
	}
}

// logSaveState says once when alarm state stops being stored (transitions
// then wait in the engine, unannounced) and once when it is stored again,
// and returns now for the next call.
func logSaveState(log *slog.Logger, was, now error) error {
	switch {
	case now != nil && was == nil:
		log.Error("alarm state not stored; transitions wait in memory, in order, and are stored and notified once writes work", "err", now)
	case now == nil && was != nil:
		log.Info("alarm state stored again; the waiting transitions follow")
	}
	return now
}

// observeHealth feeds the daemon's own health to the health alarms.
func (d *Daemon) observeHealth(log *slog.Logger, now time.Time) {
	d.flushMu.Lock()
	failing := d.flushErr != nil
	d.flushMu.Unlock()
	if d.alarms.StoreError() != nil {
		failing = true
	}
	samples := map[string]float64{alerts.HealthStoreWrites: b2f(failing), alerts.HealthNotifyRefused: float64(d.refusedLately(now))}
	var fs syscall.Statfs_t
	if err := syscall.Statfs(d.conf().Store.Dir, &fs); err == nil && fs.Blocks > 0 {
		samples[alerts.HealthDiskFree] = float64(fs.Bavail) / float64(fs.Blocks)
	}
	for g, v := range samples {
		for _, ev := range d.alarms.Observe(g, calib.Sample{At: now, Value: v, Quality: calib.QualityOK}) {
			d.alarmEvent(log, ev)
		}
	}
}

// logAlarmEvent logs an alarm event once, as what it is: an event of the
// process, never a software error. A raise of a high or critical alarm is a
// warning; every other raise, clear and crossing is information.
func logAlarmEvent(log *slog.Logger, ev alerts.Event) {
	attrs := []any{"alarm", ev.Alarm, "gauge", ev.Gauge, "severity", string(ev.Severity), "state", string(ev.State), "detail", ev.Message}
	switch ev.Kind {
	case alerts.Raised:
		level := slog.LevelInfo
		if ev.Severity == "high" || ev.Severity == alerts.SeverityCritical {
			level = slog.LevelWarn
		}
		log.Log(context.Background(), level, "alarm raised", attrs...)
	case alerts.Cleared:
		log.Info("alarm cleared", attrs...)
	case alerts.LimitCrossed:
		log.Info("limit crossed", attrs...)
	default:
		log.Info("alarm "+string(ev.Kind), attrs...)
	}
}

var eventKinds = map[alerts.EventKind]string{alerts.LimitCrossed: "limit-crossed", alerts.Raised: "alarm-raised", alerts.Cleared: "alarm-cleared"}

// alarmEvent logs an engine event, hands transitions to the notifiers and
// shows the event to whoever watches the daemon.
func (d *Daemon) alarmEvent(log *slog.Logger, ev alerts.Event) {
	if !d.eventsShown {
		logAlarmEvent(log, ev)
	}
	if ev.Transition() {
		d.deliver(ev)
	}
	kind, ok := eventKinds[ev.Kind]
	if !ok {
		kind = "alarm-" + string(ev.Kind)
	}
	d.emit(Event{At: ev.At, Kind: kind, Gauge: ev.Gauge, Alarm: ev.Alarm, Severity: string(ev.Severity), Message: ev.Message})
}

// deliver hands a stored transition to the notifiers and records that it
// was handed over; a crash in between hands it over again after the
// restart, under the same dedupe key. Deliveries are serialised and keep
// their order: while earlier ones wait to be retried, later ones queue
// behind them, so no receiver hears "cleared" before "raised".
func (d *Daemon) deliver(ev alerts.Event) {
	d.retryMu.Lock()
	defer d.retryMu.Unlock()
	d.retry = append(d.retry, ev)
	d.flushDeliveries()
}

// retryDeliveries hands over again the transitions whose queueing failed;
// the alarm loop calls it on every tick.
func (d *Daemon) retryDeliveries() {
	d.retryMu.Lock()
	defer d.retryMu.Unlock()
	d.flushDeliveries()
}

// flushDeliveries queues the waiting transitions, oldest first, and stops
// at the first that fails (store writes failing): it and those after it
// wait for the next try. It runs under retryMu.
func (d *Daemon) flushDeliveries() {
	for len(d.retry) > 0 {
		ev := d.retry[0]
		if d.notify(ev) != nil {
			return
		}
		d.retry = d.retry[1:]
		if err := d.alarms.Delivered(ev.DedupeKey); err != nil {
			d.log.Warn("could not record an alarm notification as handed over; it may be handed over again after a restart",
				"alarm", ev.Alarm, "key", ev.DedupeKey, "err", err)
		}
	}
	d.retry = nil // release the backing array once drained
}
