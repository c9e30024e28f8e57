package daemon

import (
	"context"
	"encoding/json"
	"fmt"
	"log/slog"
	"net/http"
	"sync"
	"sync/atomic"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/alerts/notify"
	"holdfast/daemon/config"
	"holdfast/daemon/outbox"
)

// notifierSet is the daemon's notifiers and their outbox.
type notifierSet struct {
	log   *slog.Logger
	clock Clock
	ob    *outbox.Outbox
	sinks []*sink
}

// sink is one configured notifier.
type sink struct {
	cfg  *config.NotifyConfig
	send notify.Notifier
	am   *notify.Alertmanager // set for an alertmanager notifier
	rs   *notify.Resender     // what it must be told again

	reposts, repostsFailed atomic.Uint64 // Alertmanager re-posts; never counted as deliveries
}

// notifiers returns the daemon's notifiers, nil when none are configured.
// New builds them; a Daemon assembled by hand (in tests) builds them on
// first use.
func (d *Daemon) notifiers() *notifierSet {
	if len(d.conf().Notify) == 0 {
		return nil
	}
	d.ntfMu.Lock()
	defer d.ntfMu.Unlock()
	if d.ntf == nil {
		n, err := newNotifierSet(d.conf(), d.store.Bolt(), d.clock, d.log.With("part", "notify"))
		if err != nil {
			d.log.Error("notifiers not started; alarms will not be sent", "err", err)
			return nil
		}
		d.ntf = n
	}
	return d.ntf
}

func newNotifierSet(cfg *config.Config, db *bolt.DB, clock Clock, log *slog.Logger) (*notifierSet, error) {
	ob, err := outbox.Open(db, clock, log)
	if err != nil {
		return nil, err
	}
	n := &notifierSet{log: log, clock: clock, ob: ob}
	wall := newWallMap(clock)
	for _, nc := range cfg.Notify {
		s := newSink(nc, clock, wall)
		p := outbox.Policy{GroupWait: nc.GroupWait.D(), MinBackoff: nc.Retry.Min.D(), MaxBackoff: nc.Retry.Max.D()}
		if nc.Exec != nil {
			p.MaxBatch = 1 // one run per transition, so its variables describe one alarm
		}
		if err := ob.Add(nc.Name, p, s.deliver(log.With("notifier", nc.Name))); err != nil {
			return nil, err
		}
		n.sinks = append(n.sinks, s)
	}
	return n, nil
}

// newSink builds one notifier. Every notifier takes its times from the
// daemon's clock; those whose receivers compare times with their own wall
// clock (signature age, Date, startsAt and endsAt) get them mapped to wall
// time (see wallMap).
func newSink(nc *config.NotifyConfig, clock Clock, wall wallMap) *sink {
	s := &sink{cfg: nc}
	client := &http.Client{}
	wallNow := func() time.Time { return wall.wall(clock.Now()) }
	switch {
	case nc.Webhook != nil:
		s.send = &notify.Webhook{URL: nc.Webhook.URL, Secret: nc.Webhook.Secret, Client: client, Now: wallNow}
	case nc.Alertmanager != nil:
		s.am = &notify.Alertmanager{URL: nc.Alertmanager.URL, Resend: nc.Alertmanager.ResendEvery.D(), Client: client,
			Now: clock.Now, Wall: wall.wall}
		s.send, s.rs = s.am, notify.NewResender()
	case nc.Mail != nil:
		m := nc.Mail
		s.send = &notify.Mail{Server: m.Server, From: m.From, To: m.To, Username: m.Username,
			Password: m.Password, PlainLoopback: m.PlainLoopback, Now: wallNow}
	case nc.Exec != nil:
		s.send = &notify.Exec{Command: nc.Exec.Command, Args: nc.Exec.Args, Timeout: nc.Timeout.D()}
	}
	return s
}

// deliver is the outbox's send function for s: entries back to
// transitions, one Send bounded by the notifier's timeout.
func (s *sink) deliver(log *slog.Logger) outbox.SendFunc {
	return func(ctx context.Context, batch []outbox.Entry) error {
		trs := make([]notify.Transition, 0, len(batch))
		for _, e := range batch {
			var tr notify.Transition
			if err := json.Unmarshal(e.Payload, &tr); err != nil {
				log.Error("queued notification unreadable; skipped", "key", e.Key, "err", err)
				continue
			}
			tr.DedupeKey, tr.Reminder = e.Key, e.Reminder
			trs = append(trs, tr)
		}
		if len(trs) == 0 {
			return nil
		}
		ctx, cancel := context.WithTimeout(ctx, s.cfg.Timeout.D()+s.extraTime())
		defer cancel()
		return s.send.Send(ctx, trs)
	}
}

// extraTime lets an exec notifier's own timeout fire (and be reported as
// such) before the context's does.
func (s *sink) extraTime() time.Duration {
	if s.cfg.Exec != nil {
		return 5 * time.Second
	}
	return 0
}

// enqueue puts one transition in the outbox for every notifier that wants
// it, and starts or stops its reminders, in one transaction.
func (n *notifierSet) enqueue(tr notify.Transition) error {
	payload, err := json.Marshal(tr)
	if err != nil {
		return fmt.Errorf("encode: %w", err)
	}
	err = n.ob.Update(func(t *outbox.Tx) error {
		for _, s := range n.sinks {
			if !notify.SeverityAtLeast(tr.Severity, s.cfg.MinSeverity) {
				continue
			}
			name := s.cfg.Name
			if _, err := t.Enqueue(name, tr.DedupeKey, payload); err != nil {
				return err
			}
			if s.cfg.RemindEvery == 0 {
				continue
			}
			if tr.State == notify.StateUnacknowledged {
				err = t.Remind(name, tr.Alarm, tr.DedupeKey, payload, s.cfg.RemindEvery.D())
			} else {
				err = t.StopReminder(name, tr.Alarm)
			}
			if err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return err
	}
	for _, s := range n.sinks {
		if s.rs != nil && notify.SeverityAtLeast(tr.Severity, s.cfg.MinSeverity) {
			s.rs.Observe(tr)
		}
	}
	return nil
}

// run sends until ctx is done and returns after every loop has stopped.
func (n *notifierSet) run(ctx context.Context, d *Daemon) {
	for _, s := range n.sinks {
		if s.am != nil { // before any send: the listener is bound by now
			s.am.Link = d.daemonURL(s.cfg.Alertmanager.DaemonURL)
		}
	}
	var wg sync.WaitGroup
	wg.Go(func() { n.ob.Run(ctx) })
	for _, s := range n.sinks {
		if s.am != nil {
			wg.Go(func() { n.resendLoop(ctx, d, s) })
		}
	}
	wg.Wait()
}
