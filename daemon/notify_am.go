package daemon

import (
	"context"

	"holdfast/alerts/notify"
)

// resendLoop re-posts s's active alarms (and those cleared within the last
// 5 min, as resolved) every resend interval, as Alertmanager expects of a
// client that pushes to it. Re-posts are counted apart from deliveries
// (they deliver no transition and must not hide a stuck queue). A failed
// re-post is counted and waits for the next interval: the next one carries
// the same state.
func (n *notifierSet) resendLoop(ctx context.Context, d *Daemon, s *sink) {
	log := n.log.With("notifier", s.cfg.Name)
	every := s.am.Resend
	for {
		select {
		case <-ctx.Done():
			return
		case <-n.clock.After(every):
		}
		for _, tr := range d.activeAlarms() {
			s.rs.Seed(tr)
		}
		now := n.clock.Now()
		due := s.rs.Due(now)
		if len(due) == 0 {
			continue
		}
		alerts := make([]notify.AMAlert, len(due))
		for i, tr := range due {
			alerts[i] = s.am.Alert(tr, now)
		}
		pctx, cancel := context.WithTimeout(ctx, s.cfg.Timeout.D())
		err := s.am.Post(pctx, alerts)
		cancel()
		switch {
		case err == nil:
			s.reposts.Add(1)
		case ctx.Err() != nil:
			return
		default:
			s.repostsFailed.Add(1)
			log.Warn("alertmanager re-post failed; next try in one interval", "alerts", len(alerts),
				"interval_seconds", every.Seconds(), "err", err)
		}
	}
}
