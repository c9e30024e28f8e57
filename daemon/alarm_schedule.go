package daemon

import (
	"log/slog"
	"time"

	"holdfast/alerts"
	"holdfast/daemon/config"
)

// holdSchedule is when the next scheduled hold test on a gauge is due.
type holdSchedule struct {
	gauge string
	cfg   *config.HoldTestConfig
	sched alerts.Schedule
	next  time.Time
}

// holdSchedules lists the scheduled hold tests, each next due after now.
// Times missed while the daemon was stopped are not made up: after a
// restart the plant may be in any state (someone at work on it, power
// coming back), and a valve moving at an unplanned time is the greater harm.
// After a reload, a schedule of was that is still configured the same on
// the same gauge keeps its next time.
func (d *Daemon) holdSchedules(now time.Time, was []*holdSchedule) []*holdSchedule {
	var out []*holdSchedule
	for _, a := range d.conf().Alarms {
		if a.HoldTest == nil || a.HoldTest.Schedule == nil {
			continue
		}
		s := a.HoldTest.Schedule.Schedule()
		h := &holdSchedule{gauge: a.Gauge, cfg: a.HoldTest, sched: s, next: s.Next(now)}
		for _, o := range was {
			if o.gauge == h.gauge && o.sched == h.sched {
				h.next = o.next
			}
		}
		out = append(out, h)
	}
	return out
}

// runSchedules starts the hold tests that are due at now. A test due while
// another runs, or whose switch says the chamber is open, is skipped until
// its next time, and the reason is logged. One whose start check refuses it
// (pressure still falling) runs, with the warning recorded and its verdict
// inconclusive: an unattended record is kept, but it claims nothing.
func (d *Daemon) runSchedules(log *slog.Logger, scheds []*holdSchedule, now time.Time) {
	for _, s := range scheds {
		if now.Before(s.next) {
			continue
		}
		due := s.next
		s.next = s.sched.Next(now)
		h, err := d.beginHoldTest(s.gauge, s.cfg.Settle.D(), s.cfg.Duration.D(), true, true)
		if err != nil {
			log.Warn("scheduled hold test skipped", "gauge", s.gauge, "due", due, "next", s.next, "err", err)
			continue
		}
		log.Info("scheduled hold test started", "id", h.ID, "gauge", s.gauge, "valve", h.Valve, "next", s.next)
	}
}
