package daemon

import (
	"context"
	"time"

	"holdfast/alerts/notify"
)

// resendLoop re-posts s's active alarms (and those cleared within the last
// 5 min, as resolved) every resend interval, as Alertmanager expects of a
// client that pushes to it. A failed re-post is counted and waits for the
// next interval: the next one carries the same state.
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
			s.resendOK.Add(1)
			s.lastResend.Store(now.UnixNano())
		case ctx.Err() != nil:
			return
		default:
			s.resendFailed.Add(1)
			log.Warn("alertmanager re-post failed; next try in one interval", "alerts", len(alerts),
				"interval_seconds", every.Seconds(), "err", err)
		}
	}
}

// lastSuccess is the later of the outbox's last delivery and the last
// re-post.
func (s *sink) lastSuccess(outboxLast time.Time) time.Time {
	if ns := s.lastResend.Load(); ns != 0 && time.Unix(0, ns).After(outboxLast) {
		return time.Unix(0, ns)
	}
	return outboxLast
}
